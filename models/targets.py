"""Targets a part must meet in a step: hold, stay below, fall below, core-surface difference, temper,
and after a quench the predicted as-quenched hardness and martensite of a steel whose phases are followed."""

from __future__ import annotations

from collections.abc import Mapping
from enum import StrEnum
from typing import Annotated, Any, Literal

from pydantic import BeforeValidator, Field

from models import catalog, limits, units
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
    HARDNESS_MIN = "hardness_min"
    MARTENSITE_MIN = "martensite_min"


KINDS = tuple(k.value for k in TargetKind)
# Which extra fields each kind needs (first) or allows.
_NEEDS: dict[str, str] = {"hold_above": "for", "fall_below": "within"}
_ALLOWS: dict[str, set[str]] = {
    "for": {"hold_above"},
    "within": {"fall_below"},
    "constant": {"temper_parameter_min", "temper_parameter_max"},
}
_EXAMPLE = {"for": "'30 min'", "within": "'8 min'"}
_NEEDS_POINT = {"hold_above", "stay_below", "fall_below", "hardness_min", "martensite_min"}
# Targets read from the phases a march follows (README, "Phases and hardness"): after a quench step,
# at the core or the surface, of a plate or bar of a steel with a composition.
PHASE_KINDS = ("hardness_min", "martensite_min")
PHASE_POINTS = ("core", "surface")


def _number_with(value: object, suffixes: tuple[str, ...], example: str) -> float:
    text = value
    if isinstance(value, str):
        text = value.strip()
        for suffix in suffixes:
            if text.upper().endswith(suffix.upper()):
                text = text[: -len(suffix)].strip()
                break
    if isinstance(text, bool) or not isinstance(text, int | float | str):
        raise ValueError(f"expected {example}, got {value!r}")
    try:
        return float(text)
    except ValueError:
        raise ValueError(f"expected {example}, got {value!r}") from None


def _hrc(value: object) -> float:
    number = _number_with(value, ("HRC",), "a Rockwell C hardness such as 45 or '45 HRC'")
    low, high = limits.HRC_RANGE
    if not low <= number <= high:
        raise ValueError(
            f"the Rockwell C scale used here runs from {low:g} to {high:g} HRC (ASTM E140), got {value!r}"
        )
    return number


def _martensite_pct(value: object) -> float:
    number = _number_with(value, ("%",), "a martensite share in % such as 90 or '90 %'")
    if not 0.0 < number <= 100.0:
        raise ValueError(f"a martensite share is above 0 and at most 100 %, got {value!r}")
    return number


HrcValue = Annotated[float, BeforeValidator(_hrc)]
MartensitePct = Annotated[float, BeforeValidator(_martensite_pct)]


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
    hardness_min: HrcValue | None = None
    martensite_min: MartensitePct | None = None

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
            where = "core or surface" if kind in PHASE_KINDS else "core, surface, corner or underside"
            problems.append((("at",), f"required: {where}"))
        if kind in PHASE_KINDS and raw.get("at") not in (None, *PHASE_POINTS):
            problems.append(
                (
                    ("at",),
                    f"{kind} is read where the phases are followed: core or surface, not {raw.get('at')}",
                )
            )
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
    def is_phase(self) -> bool:
        """Read from the phases (hardness or martensite), not from a temperature history."""
        return self.kind.value in PHASE_KINDS

    @property
    def phase_limit(self) -> float | None:
        """The HRC of a hardness_min target, the fraction (0-1) of a martensite_min target."""
        if self.hardness_min is not None:
            return self.hardness_min
        return None if self.martensite_min is None else self.martensite_min / 100.0

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
