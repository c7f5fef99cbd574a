"""Schedule steps of a batch file: duration, ambient (optionally ramped) and how heat crosses the faces."""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from models import catalog, units
from models.base import RuleProblem, SpecModel
from models.fields import (
    DurationText,
    Emissivity,
    HtcText,
    MediumName,
    PositiveNumber,
    TemperatureText,
    Text,
)

# A quench ends in a bath or air at most this hot (common practice: water, polymer and oil run below about
# 100 degC, martempering and austempering salts up to about 400 degC).
QUENCH_MAX_AMBIENT_C = 400.0


def quench_problem(ambient_c: float | None, before_c: float | None) -> str | None:
    """Why a step whose ambient ends at ``ambient_c`` (after a step ending at ``before_c``, None for the
    first step) is not a quench, or None when it is: its ambient is at most ``QUENCH_MAX_AMBIENT_C``
    and colder than the step before's."""
    if ambient_c is None:
        return None  # the step's own ambient field reports it
    if ambient_c > QUENCH_MAX_AMBIENT_C:
        return f"its ambient is {ambient_c:g} degC; a quench ends at most {QUENCH_MAX_AMBIENT_C:g} degC"
    if before_c is not None and ambient_c >= before_c:
        return (
            f"its ambient ({ambient_c:g} degC) is not colder than the step before's ({before_c:g} degC); "
            "a quench follows the austenitizing soak"
        )
    return None


def _one_of_htc_medium(raw: Mapping[str, Any]) -> list[RuleProblem]:
    has_htc, has_medium = raw.get("htc") is not None, raw.get("medium") is not None
    problems: list[RuleProblem] = []
    if raw.get("severity") is not None and not has_medium:
        problems.append((("severity",), "severity scales a medium's h curve: give it with medium"))
    if has_htc and has_medium:
        return [*problems, (("medium",), "give either htc or medium, not both")]
    if not (has_htc or has_medium):
        if raw.get("profile") is not None:
            name = raw.get("profile")
            return [
                *problems,
                (
                    ("profile",),
                    f"no exchange profile named {name!r} is known here (saved ones: 'soakline profile list'; "
                    "the service's: GET /profiles)",
                ),
            ]
        return [
            *problems,
            (
                ("htc",),
                "required: give htc (e.g. '150 W/m^2/K'), medium (a catalog name) or profile (a fitted "
                "exchange profile)",
            ),
        ]
    return problems


class _Face:
    """SI views shared by the step and its lower face: a constant ``htc`` or a catalog ``medium``."""

    if TYPE_CHECKING:  # declared by the models themselves, in file order
        htc: str | None
        medium: str | None
        emissivity: float | None
        severity: float | None

    @property
    def medium_data(self) -> catalog.Medium | None:
        return None if self.medium is None else catalog.get_medium(self.medium)

    @property
    def htc_w_m2k(self) -> float | None:
        """The constant h when ``htc`` is given; None when a medium sets h(T_surface)."""
        return None if self.htc is None else units.parse_htc(self.htc)

    @property
    def htc_table(self) -> catalog.Table:
        """h against surface temperature in degC: a one-row table for a constant ``htc``."""
        medium = self.medium_data
        if medium is not None:
            return medium.htc if self.severity is None else medium.htc.scaled(self.severity)
        return catalog.Table.constant(units.parse_htc(self.htc or ""), "W/m^2/K", "given in the batch file")

    @property
    def emissivity_value(self) -> float:
        """The given emissivity, else the medium's default, else 0 (no radiation)."""
        if self.emissivity is not None:
            return self.emissivity
        medium = self.medium_data
        return medium.emissivity if medium is not None and medium.emissivity is not None else 0.0


class LowerFaceSpec(_Face, SpecModel):
    """A plate's lower face when it differs from the upper one (on a hearth, a one-sided spray)."""

    htc: HtcText | None = None
    medium: MediumName | None = None
    ambient: TemperatureText | None = None
    emissivity: Emissivity | None = None
    severity: PositiveNumber | None = None
    profile: Text | None = None

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        return _one_of_htc_medium(raw)

    @property
    def ambient_c(self) -> float | None:
        """The lower face's own ambient; None means the step's ambient."""
        return None if self.ambient is None else units.parse_temperature(self.ambient)


class StepSpec(_Face, SpecModel):
    """One step of the schedule every part of the batch runs."""

    name: Text
    duration: DurationText
    ambient: TemperatureText
    ambient_start: TemperatureText | None = None
    htc: HtcText | None = None
    medium: MediumName | None = None
    emissivity: Emissivity | None = None
    severity: PositiveNumber | None = None
    profile: Text | None = None
    lower_face: LowerFaceSpec | None = None

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        return _one_of_htc_medium(raw)

    @property
    def duration_s(self) -> float:
        return units.parse_time(self.duration)

    @property
    def ambient_c(self) -> float:
        """Furnace or bath temperature; the end of the ramp when ``ambient_start`` is given."""
        return units.parse_temperature(self.ambient)

    @property
    def ambient_start_c(self) -> float | None:
        return None if self.ambient_start is None else units.parse_temperature(self.ambient_start)
