"""Base of the batch-file models: forbids unknown fields and reports every problem at once.

Pydantic stops checking a model's cross-field rules as soon as one field fails. Here each model lists
its cross-field rules as ``_rules(raw)`` on the raw mapping, so they run whatever else is wrong, and
their problems join pydantic's own, each at its field's path.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Self

from pydantic import BaseModel, ConfigDict, ModelWrapValidatorHandler, ValidationError, model_validator
from pydantic_core import InitErrorDetails, PydanticCustomError

Loc = tuple[str | int, ...]
RuleProblem = tuple[Loc, str]


def rule_error(loc: Loc, message: str, value: object = None, kind: str = "spec_rule") -> InitErrorDetails:
    """An error line at ``loc`` with ``message`` shown as it is."""
    return {"type": PydanticCustomError(kind, "{message}", {"message": message}), "loc": loc, "input": value}


def carry(exc: ValidationError) -> list[InitErrorDetails]:
    """Pydantic's errors as lines that can be raised again (keeping type name and message)."""
    return [
        rule_error(e["loc"], e["msg"].removeprefix("Value error, "), e.get("input"), e["type"])
        for e in exc.errors()
    ]


def as_raw(item: object) -> Mapping[str, Any] | None:
    """``item`` as a raw mapping for the rules: mappings as they are, built models dumped, else None."""
    if isinstance(item, Mapping):
        return item
    if isinstance(item, BaseModel):
        return item.model_dump(by_alias=True)
    return None


class SpecModel(BaseModel):
    """Frozen, unknown fields rejected, cross-field rules always checked."""

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        """Cross-field problems of the raw input; each names its field relative to this model."""
        return []

    @model_validator(mode="wrap")
    @classmethod
    def _check_all(cls, data: Any, handler: ModelWrapValidatorHandler[Self]) -> Self:
        if not isinstance(data, Mapping):
            return handler(data)
        lines: list[InitErrorDetails] = []
        result: Self | None = None
        try:
            result = handler(data)
        except ValidationError as exc:
            lines.extend(carry(exc))
        lines.extend(rule_error(loc, message, data) for loc, message in cls._rules(data))
        if lines or result is None:
            raise ValidationError.from_exception_data(cls.__name__, lines)
        return result
