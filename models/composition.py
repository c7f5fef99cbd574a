"""A heat's composition in the batch file (from its mill certificate): mass % by element, grain size.

Each element is a plain number in mass % (0.41) or the same with a percent sign ("0.41 %"). Carbon is
required; an element left out takes the catalog grade's nominal value (zero for a steel without one),
and so does the grain size (ASTM number, 7 when the steel has none).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Annotated, Any

from pydantic import BeforeValidator

from models import catalog, limits
from models.base import RuleProblem, SpecModel


def _percent(value: object) -> float:
    text = value.strip().removesuffix("%").strip() if isinstance(value, str) else value
    if isinstance(text, bool) or not isinstance(text, int | float | str):
        raise ValueError(f"expected mass % as a number such as 0.41 or '0.41 %', got {value!r}")
    try:
        number = float(text)
    except ValueError:
        raise ValueError(f"expected mass % as a number such as 0.41 or '0.41 %', got {value!r}") from None
    if not 0.0 <= number <= limits.MAX_ELEMENT_PCT:
        raise ValueError(f"must be between 0 and {limits.MAX_ELEMENT_PCT:g} mass %, got {value!r}")
    return number


def _carbon(value: object) -> float:
    number = _percent(value)
    if number > limits.MAX_CARBON_PCT:
        raise ValueError(
            f"{number:g} % carbon is a cast iron, not a steel (at most {limits.MAX_CARBON_PCT:g} %)"
        )
    return number


def _grain(value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ValueError(f"expected an ASTM grain size number such as 7, got {value!r}")
    low, high = limits.GRAIN_SIZE_RANGE
    if not low <= value <= high:
        raise ValueError(f"ASTM grain size numbers run from {low:g} (00) to {high:g}, got {value!r}")
    return float(value)


Percent = Annotated[float, BeforeValidator(_percent)]


class CompositionSpec(SpecModel):
    """Mass % of C, Mn, Si, Ni, Cr, Mo, Cu, V, B and the ASTM grain size of one heat."""

    C: Annotated[float, BeforeValidator(_carbon)]
    Mn: Percent | None = None
    Si: Percent | None = None
    Ni: Percent | None = None
    Cr: Percent | None = None
    Mo: Percent | None = None
    Cu: Percent | None = None
    V: Percent | None = None
    B: Percent | None = None
    grain_size: Annotated[float, BeforeValidator(_grain)] | None = None

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        total = 0.0
        for e in catalog.ELEMENTS:
            try:
                total += _percent(raw[e]) if e in raw else 0.0
            except ValueError:
                return []  # the element's own field reports it
        if total > limits.MAX_ALLOY_PCT:
            return [((), f"the elements add up to {total:g} %, more than {limits.MAX_ALLOY_PCT:g} %")]
        return []

    def resolved(self, nominal: catalog.CompositionData | None) -> catalog.CompositionData:
        """This heat's values over the grade's nominal ones."""
        given = "the batch file's composition (mill certificate)"
        values: dict[str, float] = {}
        sources: dict[str, str] = {}
        for e in catalog.ELEMENTS:
            mine = getattr(self, e)
            if mine is not None:
                values[e], sources[e] = mine, given
            elif nominal is not None:
                values[e], sources[e] = nominal.values[e], nominal.sources[e]
            else:
                values[e], sources[e] = 0.0, "not given in the batch file: counted as zero"
        if self.grain_size is not None:
            grain, grain_source = self.grain_size, given
        elif nominal is not None:
            grain, grain_source = nominal.grain_size, nominal.grain_source
        else:
            grain, grain_source = 7.0, "not given in the batch file: ASTM 7 taken"
        return catalog.CompositionData(values, sources, grain, grain_source)
