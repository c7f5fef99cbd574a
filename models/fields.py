"""Field types of the batch file: unit strings checked on input and kept as written for display.

Each type is a ``str`` (or a small tuple of them) whose validator parses the value with
``models.units``, applies the field's bounds and returns the stripped text; the models turn it into SI
on demand. Messages are written for the person who wrote the file.
"""

from __future__ import annotations

import datetime as dt
import math
import unicodedata
from collections.abc import Callable
from typing import Annotated

from pydantic import BeforeValidator

from models import catalog, limits, units
from models.text import part_id_problem

Bound = tuple[float, str]  # SI value and how to show it


def unit_check(
    kind: units.Kind, *, positive: bool = False, nonnegative: bool = False, maximum: Bound | None = None
) -> Callable[[object], str]:
    """Validator for a unit string of ``kind`` with optional sign and upper bounds."""

    def check(value: object) -> str:
        si = units.parse_quantity(value, kind)
        assert isinstance(value, str)  # parse_quantity accepts text only
        if positive and si <= 0.0:
            raise ValueError(f"must be more than zero, got '{value}'")
        if nonnegative and si < 0.0:
            raise ValueError(f"must not be negative, got '{value}'")
        if maximum is not None and si > maximum[0]:
            raise ValueError(f"must be at most {maximum[1]}, got '{value}'")
        return value.strip()

    return check


def _number(value: object, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float | str):
        raise ValueError(f"expected {what}, got {value!r}")
    try:
        number = float(value)
    except ValueError:
        raise ValueError(f"expected {what}, got {value!r}") from None
    if not math.isfinite(number):
        raise ValueError(f"expected {what}, got {value!r}: the number is not finite")
    return number


def check_emissivity(value: object) -> float:
    number = _number(value, "an emissivity between 0 and 1 such as 0.8")
    if not 0.0 <= number <= 1.0:
        raise ValueError(f"emissivity must be between 0 and 1, got {value}")
    return number


def check_positive_number(value: object) -> float:
    number = _number(value, "a plain positive number such as 18000")
    if number <= 0.0:
        raise ValueError(f"must be more than zero, got {value}")
    return number


def check_text(value: object) -> str:
    """A label or id: text (numbers and dates as written in YAML are accepted as text)."""
    if isinstance(value, bool) or not isinstance(value, str | int | float | dt.date):
        raise ValueError(f"expected text, got {value!r}")
    text = str(value).strip()
    if not text:
        raise ValueError("must not be empty")
    if len(text) > limits.MAX_TEXT:
        raise ValueError(f"must be at most {limits.MAX_TEXT} characters, got {len(text)}")
    return text


def check_part_id(value: object) -> str:
    """A part id: text from a safe set (it appears in page addresses, API paths and file names).

    Numbers are refused rather than turned into text: YAML reads ``0101`` as 65 and JSON ``1e21`` as a
    float, so the id stored would not be the one written.
    """
    if isinstance(value, int | float) and not isinstance(value, bool):
        raise ValueError(f"expected text, got the number {value!r}; write the id in quotes, e.g. 'P-101'")
    if not isinstance(value, str):
        raise ValueError(f"expected text such as 'P-101', got {value!r}")
    text = unicodedata.normalize("NFC", value).strip()
    if not text:
        raise ValueError("must not be empty")
    if len(text) > limits.MAX_TEXT:
        raise ValueError(f"must be at most {limits.MAX_TEXT} characters, got {len(text)}")
    problem = part_id_problem(text)
    if problem is not None:
        raise ValueError(problem)
    return text


def check_material_name(value: object) -> object:
    """A catalog steel name, canonicalised; mappings pass through to the inline-material model."""
    if isinstance(value, int) and not isinstance(value, bool):
        value = str(value)  # `material: 4140` unquoted in YAML
    if isinstance(value, str):
        return catalog.get_material(value).name
    if isinstance(value, dict):
        return value
    raise ValueError(
        f"expected a catalog material name such as '4140' or a mapping with conductivity, density and "
        f"specific_heat, got {value!r}; known materials: {', '.join(catalog.material_names())}"
    )


def check_medium_name(value: object) -> str:
    if not isinstance(value, str):
        raise ValueError(
            f"expected a medium name, got {value!r}; known media: {', '.join(catalog.medium_names())}"
        )
    return catalog.get_medium(value).name


def property_check(kind: units.Kind) -> Callable[[object], str | tuple[tuple[str, str], ...]]:
    """Validator for a material property: one unit string, or a table [[temperature, value], ...]."""
    single = unit_check(kind, positive=True)

    def check(value: object) -> str | tuple[tuple[str, str], ...]:
        if not isinstance(value, list | tuple):
            return single(value)
        if not value:
            raise ValueError("a table needs at least one row [temperature, value]")
        if len(value) > limits.MAX_TABLE_ROWS:
            raise ValueError(f"a table holds at most {limits.MAX_TABLE_ROWS} rows, got {len(value)}")
        rows: list[tuple[str, str]] = []
        last: float | None = None
        for i, row in enumerate(value):
            if not (isinstance(row, list | tuple) and len(row) == 2):
                raise ValueError(
                    f"row {i}: expected [temperature, value] such as ['20 degC', '{kind.example}']"
                )
            try:
                temp_c = units.parse_temperature(row[0])
                text = single(row[1])
            except ValueError as exc:
                raise ValueError(f"row {i}: {exc}") from None
            if last is not None and temp_c <= last:
                raise ValueError(f"row {i}: temperatures must increase from row to row")
            last = temp_c
            rows.append((str(row[0]).strip(), text))
        return tuple(rows)

    return check


LengthText = Annotated[
    str, BeforeValidator(unit_check(units.LENGTH, positive=True, maximum=(limits.MAX_SECTION_M, "2 m")))
]
DurationText = Annotated[
    str, BeforeValidator(unit_check(units.TIME, positive=True, maximum=(limits.MAX_STEP_S, "30 days")))
]
TemperatureText = Annotated[
    str, BeforeValidator(unit_check(units.TEMPERATURE, maximum=(limits.MAX_TEMPERATURE_C, "2000 degC")))
]
TemperatureDeltaText = Annotated[
    str,
    BeforeValidator(
        unit_check(units.TEMPERATURE_DELTA, positive=True, maximum=(limits.MAX_TEMPERATURE_C, "2000 K"))
    ),
]
HtcText = Annotated[
    str,
    BeforeValidator(
        unit_check(units.HTC, nonnegative=True, maximum=(limits.MAX_HTC_W_M2K, "1000000 W/m^2/K"))
    ),
]
PropertyTable = tuple[tuple[str, str], ...]
ConductivityValue = Annotated[str | PropertyTable, BeforeValidator(property_check(units.CONDUCTIVITY))]
DensityValue = Annotated[str | PropertyTable, BeforeValidator(property_check(units.DENSITY))]
SpecificHeatValue = Annotated[str | PropertyTable, BeforeValidator(property_check(units.SPECIFIC_HEAT))]
Emissivity = Annotated[float, BeforeValidator(check_emissivity)]
PositiveNumber = Annotated[float, BeforeValidator(check_positive_number)]
Text = Annotated[str, BeforeValidator(check_text)]
PartId = Annotated[str, BeforeValidator(check_part_id)]
MediumName = Annotated[str, BeforeValidator(check_medium_name)]
