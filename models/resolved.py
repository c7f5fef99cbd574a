"""The resolved batch: a validated ``BatchSpec`` (a rerun's durations already applied) as stored once at
submit, and read back by the workers and the pages without validating it again.

:func:`dump_resolved` writes the spec as JSON (field names as in the batch file, catalog names in their
canonical spelling); :func:`load_resolved` rebuilds the same models with ``model_construct``, walking the
models' own field types, so that no unit is parsed, no catalog looked up and no rule checked on the way
back in: that all happened once, when the batch was submitted.
"""

from __future__ import annotations

import types
from collections.abc import Callable, Mapping
from functools import cache, partial
from typing import Annotated, Any, TypeVar, Union, cast, get_args, get_origin

from pydantic.fields import FieldInfo

from models.base import SpecModel
from models.errors import SpecError
from models.spec import BatchSpec
from models.tables import Batch

__all__ = ["dump_resolved", "load_resolved", "stored_spec"]

M = TypeVar("M", bound=SpecModel)


def dump_resolved(spec: BatchSpec) -> dict[str, Any]:
    """The spec as JSON-ready data, for the ``batches.resolved`` column."""
    return spec.model_dump(mode="json", by_alias=True, exclude_none=True)


def load_resolved(doc: Mapping[str, Any]) -> BatchSpec:
    """A spec stored by :func:`dump_resolved`, rebuilt without validation."""
    return _build(BatchSpec, doc)


Convert = Callable[[Any], Any]


def _build(cls: type[M], raw: Mapping[str, Any]) -> M:
    values: dict[str, Any] = {}
    stored: set[str] = set()
    for name, key, convert, default in _plan(cls):
        if key in raw:
            values[name] = convert(raw[key])
            stored.add(name)
        elif default is not None:
            values[name] = default()
    return _construct(cls, values, stored)


def _construct(cls: type[M], values: dict[str, Any], stored: set[str]) -> M:
    """``cls.model_construct(stored, **values)`` for values that name every field with a value, by
    field name: what it does then, without its per-field look-ups of aliases and defaults (most of the
    time of rebuilding a 5,000-part batch). A model with extra values, a root or a post-init hook goes
    through model_construct itself."""
    if cls.__pydantic_post_init__ or cls.__pydantic_root_model__ or cls.model_config.get("extra") == "allow":
        return cast(M, cls.model_construct(stored, **values))  # the pydantic plugin types it as the base
    model = cls.__new__(cls)
    object.__setattr__(model, "__dict__", values)
    object.__setattr__(model, "__pydantic_fields_set__", stored)
    object.__setattr__(model, "__pydantic_extra__", None)
    object.__setattr__(model, "__pydantic_private__", None)
    return model


_IMMUTABLE = (type(None), str, int, float, bool, tuple, frozenset)


def _default(field: FieldInfo) -> Callable[[], Any] | None:
    """A field's default as a function of nothing (None for a required field), decided once."""
    if field.is_required():
        return None
    if field.default_factory is None and isinstance(field.default, _IMMUTABLE):
        value = field.default
        return lambda: value
    return partial(field.get_default, call_default_factory=True, validated_data={})


@cache
def _plan(cls: type[SpecModel]) -> tuple[tuple[str, str, Convert, Callable[[], Any] | None], ...]:
    """Per field of ``cls``: its name, its key in the stored data, how to rebuild its value and its
    default."""
    return tuple(
        (name, field.alias or name, _converter(field.annotation), _default(field))
        for name, field in cls.model_fields.items()
    )


def _same(value: Any) -> Any:
    return value


def _rows(value: Any) -> Any:
    """Property tables: rows of (temperature, value) texts, stored as lists."""
    return tuple(tuple(row) for row in value)


def _model(annotation: Any) -> type[SpecModel] | None:
    return annotation if isinstance(annotation, type) and issubclass(annotation, SpecModel) else None


def _converter(annotation: Any) -> Convert:
    """How to rebuild a stored value of this field type (decided once per field, not per value)."""
    origin = get_origin(annotation)
    if origin is Annotated:
        return _converter(get_args(annotation)[0])
    if origin is Union or origin is types.UnionType:
        options = [a for a in get_args(annotation) if a is not type(None)]
        model = next((m for a in options if (m := _model(a)) is not None), None)
        listed = next((_converter(a) for a in options if get_origin(a) in (list, tuple)), _same)

        def either(value: Any) -> Any:
            if isinstance(value, Mapping) and model is not None:
                return _build(model, value)
            return listed(value) if isinstance(value, list) else value

        return either
    if origin is list:
        item = _converter(get_args(annotation)[0])
        return lambda value: [item(v) for v in value]
    if origin is tuple:
        return _rows
    model = _model(annotation)
    if model is not None:
        return lambda value: _build(model, value)
    return _same


def stored_spec(batch: Batch) -> BatchSpec:
    """The resolved spec of a stored batch; SpecError when it has none (see ``Batch.resolved``)."""
    if batch.resolved is None:
        raise SpecError.single(f"batch {batch.id}: its stored file no longer validates; submit it again")
    return load_resolved(batch.resolved)
