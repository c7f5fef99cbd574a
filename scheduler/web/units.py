"""Display units of the review pages: degC or degF, mm or in, chosen by the viewer and kept in a cookie.

Everything arrives in SI (seconds, metres, degrees Celsius); only the text and chart data a person reads
are converted here, at the edge.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from fastapi import Request

from workers.targets import facts_texts
from workers.wording import TempUnit as TextUnit
from workers.wording import Texts, describe_margin

__all__ = ["UNITS_COOKIE", "Units", "units_from"]

UNITS_COOKIE = "soakline_units"

TempUnit = Literal["C", "F"]
LengthUnit = Literal["mm", "in"]


@dataclass(frozen=True)
class Units:
    """The viewer's choice; ``cookie()`` and ``parse()`` round-trip it as "C-mm"."""

    temp_unit: TempUnit = "C"
    length_unit: LengthUnit = "mm"

    def cookie(self) -> str:
        return f"{self.temp_unit}-{self.length_unit}"

    @classmethod
    def parse(cls, text: str | None) -> Units:
        temp, _, length = (text or "").partition("-")
        return cls(
            temp_unit="F" if temp == "F" else "C",
            length_unit="in" if length == "in" else "mm",
        )

    @property
    def temp_label(self) -> str:
        return "°F" if self.temp_unit == "F" else "°C"

    @property
    def text_unit(self) -> TextUnit:
        """The unit of the texts a check is said in."""
        return "degF" if self.temp_unit == "F" else "degC"

    def texts(self, body: Mapping[str, Any]) -> Texts:
        """A stored check's or flag's required, achieved, margin and message in the viewer's unit (a result
        stored before checks kept their facts keeps its own texts, its margin converted)."""
        if not body.get("facts"):
            return Texts(
                str(body.get("required", "")),
                str(body.get("achieved", "")),
                self.fmt_margin(body),
                str(body.get("message", "")),
            )
        return facts_texts(body, self.text_unit)  # type: ignore[arg-type]  # a stored FlagBody

    def margin(self, body: Mapping[str, Any]) -> str:
        """``texts(body).margin`` without the other texts (a report lists thousands of margins)."""
        if not body.get("facts"):
            return self.fmt_margin(body)  # stored before checks kept their facts: as texts() says it
        value, unit, said = body.get("margin_value"), body.get("margin_unit"), body.get("margin")
        if isinstance(value, int | float) and isinstance(unit, str) and isinstance(said, str):
            return describe_margin(float(value), unit, said, self.text_unit)
        return self.texts(body).margin

    def temp(self, temp_c: float | None) -> float | None:
        """A temperature (degC) in the display unit."""
        if temp_c is None:
            return None
        return temp_c * 9.0 / 5.0 + 32.0 if self.temp_unit == "F" else temp_c

    def delta(self, kelvin: float) -> float:
        """A temperature difference (K) in the display unit."""
        return kelvin * 9.0 / 5.0 if self.temp_unit == "F" else kelvin

    def fmt_margin(self, check: Mapping[str, Any]) -> str:
        """A check's signed margin: temperatures in the display unit, others as the engine wrote them."""
        value, unit = check.get("margin_value"), check.get("margin_unit")
        if unit == "K" and self.temp_unit == "F" and isinstance(value, int | float):
            return f"{self.delta(float(value)):+.0f} °F"
        return str(check.get("margin", ""))

    def fmt_temp(self, temp_c: float | None) -> str:
        value = self.temp(temp_c)
        return "–" if value is None else f"{value:.0f} {self.temp_label}"

    def fmt_length(self, metres: float | None) -> str:
        if metres is None:
            return "–"
        if self.length_unit == "in":
            return f"{metres / 0.0254:.2f} in"
        return f"{metres * 1000.0:.0f} mm" if metres >= 0.01 else f"{metres * 1000.0:.1f} mm"


def units_from(request: Request) -> Units:
    """The viewer's units, defaults (degC, mm) when no cookie is set."""
    return Units.parse(request.cookies.get(UNITS_COOKIE))
