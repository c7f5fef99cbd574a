"""Targets a part must meet in a step: hold, stay below, fall below, core-surface difference, temper."""

from __future__ import annotations

from collections.abc import Mapping
from enum import StrEnum
from typing import Any, Literal

from pydantic import Field

from models import catalog, units
from models.base import RuleProblem, SpecModel
from models.fields import DurationText, PositiveNumber, TemperatureDeltaText, TemperatureText, Text

Point = Literal["core", "surface", "corner", "underside"]


class TargetKind(StrEnum):
    HOLD_ABOVE = "hold_above"
    STAY_BELOW = "stay_below"
    FALL_BELOW = "fall_below"
    MAX_DIFFERENCE = "max_difference"
    TEMPER_PARAMETER_MIN = "temper_parameter_min"
    TEMPER_PARAMETER_MAX = "temper_parameter_max"


KINDS = tuple(k.value for k in TargetKind)
# Which extra fields each kind needs (first) or allows.
_NEEDS: dict[str, str] = {"hold_above": "for", "fall_below": "within"}
_ALLOWS: dict[str, set[str]] = {
    "for": {"hold_above"},
    "within": {"fall_below"},
    "constant": {"temper_parameter_min", "temper_parameter_max"},
}
_EXAMPLE = {"for": "'30 min'", "within": "'8 min'"}
_NEEDS_POINT = {"hold_above", "stay_below", "fall_below"}


class TargetSpec(SpecModel):
    """One target of a part in one step; exactly one of the kinds in ``TargetKind`` is given.

    ``at`` is required for hold/stay/fall targets. A ``max_difference`` target compares the core with
    ``at`` (surface by default, corner or underside); a temper-parameter target is read at ``at`` (core by
    default). ``constant`` is the Hollomon-Jaffe C, from the catalog when not given.
    """

    step: Text
    at: Point | None = None
    hold_above: TemperatureText | None = None
    for_: DurationText | None = Field(default=None, alias="for")
    stay_below: TemperatureText | None = None
    fall_below: TemperatureText | None = None
    within: DurationText | None = None
    max_difference: TemperatureDeltaText | None = None
    temper_parameter_min: PositiveNumber | None = None
    temper_parameter_max: PositiveNumber | None = None
    constant: PositiveNumber | None = None

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        given = [k for k in KINDS if raw.get(k) is not None]
        if len(given) != 1:
            said = "none" if not given else ", ".join(given)
            return [((), f"give exactly one of {', '.join(KINDS)}; got {said}")]
        kind = given[0]
        problems: list[RuleProblem] = []
        need = _NEEDS.get(kind)
        if need is not None and raw.get(need) is None:
            problems.append(((need,), f"required with {kind}: how long, e.g. {_EXAMPLE[need]}"))
        for extra, kinds in _ALLOWS.items():
            if raw.get(extra) is not None and kind not in kinds:
                problems.append(((extra,), f"only used with {' or '.join(sorted(kinds))}, not with {kind}"))
        if kind in _NEEDS_POINT and raw.get("at") is None:
            problems.append((("at",), "required: core, surface, corner or underside"))
        if kind == "max_difference" and raw.get("at") == "core":
            problems.append(
                (
                    ("at",),
                    "max_difference compares the core with surface, corner or underside; core is not allowed",
                )
            )
        return problems

    @property
    def kind(self) -> TargetKind:
        return next(TargetKind(k) for k in KINDS if getattr(self, k) is not None)

    @property
    def point(self) -> Point:
        """Where the target is read: ``at``, or its default for the kind."""
        if self.at is not None:
            return self.at
        return "surface" if self.kind is TargetKind.MAX_DIFFERENCE else "core"

    @property
    def limit_c(self) -> float | None:
        """The temperature of a hold_above, stay_below or fall_below target, in degC."""
        text = self.hold_above or self.stay_below or self.fall_below
        return None if text is None else units.parse_temperature(text)

    @property
    def for_s(self) -> float | None:
        return None if self.for_ is None else units.parse_time(self.for_)

    @property
    def within_s(self) -> float | None:
        return None if self.within is None else units.parse_time(self.within)

    @property
    def max_difference_k(self) -> float | None:
        return None if self.max_difference is None else units.parse_temperature_delta(self.max_difference)

    @property
    def parameter(self) -> float | None:
        """The Hollomon-Jaffe P bound of a temper target (T in kelvin, t in hours)."""
        return (
            self.temper_parameter_min if self.temper_parameter_min is not None else self.temper_parameter_max
        )

    @property
    def constant_value(self) -> float:
        return self.constant if self.constant is not None else catalog.hollomon_jaffe_constant()[0]
