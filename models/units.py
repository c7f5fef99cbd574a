"""Read physical values written as text with their unit ("50 mm", "1580 degF") and return SI floats.

One pint registry serves the whole project. Every parser takes the user's string and returns a float in
the unit the code works in (metres, seconds, degC, kelvin for differences, W/m^2/K, W/m/K, kg/m^3,
J/kg/K). Anything else -- a bare number, an unknown unit, the wrong kind of unit, NaN or infinity --
raises a ``ValueError`` whose message can be shown to the user as it is.

"C" and "F" are read as Celsius and Fahrenheit (pint alone would read coulomb and farad). Inside a
compound unit such as "Btu/(h ft^2 F)" a temperature is always a difference.

A duration may be written in parts, as soakline prints long ones and as people say them: "2 h 30 min",
"1 h 5 min 30 s", "2h30min". The parts are added; a sign, if any, stands before the first and applies
to the whole.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import pint

ureg: pint.UnitRegistry[Any] = pint.UnitRegistry()
"""The project's only unit registry."""

ABSOLUTE_ZERO_C = -273.15

_NUMBER = re.compile(
    r"^\s*(?P<num>[-+]?(?:(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?|nan|inf(?:inity)?))\s*(?P<unit>.*?)\s*$",
    re.IGNORECASE,
)

# Spellings of a temperature scale when it stands alone as the whole unit.
_CELSIUS = {"c", "°c", "ºc", "degc", "deg c", "celsius", "degree_celsius", "degrees_celsius", "degreec"}
_FAHRENHEIT = {"f", "°f", "ºf", "degf", "deg f", "fahrenheit", "degree_fahrenheit", "degrees_fahrenheit"}
_KELVIN = {"k", "kelvin", "degk", "°k"}

# Celsius / Fahrenheit tokens inside a compound unit: always a temperature difference there.
_SCALE_TOKEN = re.compile(r"(?<![A-Za-z_])(?:°|º|deg\s?)?(?P<scale>[CF])(?![A-Za-z_])")


@dataclass(frozen=True)
class Kind:
    """A kind of physical quantity: its name for messages, an example, and the SI unit returned."""

    name: str
    example: str
    si_unit: str


LENGTH = Kind("length", "50 mm", "m")
TIME = Kind("time", "3 h", "s")
TEMPERATURE = Kind("temperature", "860 degC", "degC")
TEMPERATURE_DELTA = Kind("temperature difference", "50 K", "delta_degC")
HTC = Kind("heat transfer coefficient", "150 W/m^2/K", "W/m^2/K")
CONDUCTIVITY = Kind("thermal conductivity", "42 W/m/K", "W/m/K")
DENSITY = Kind("density", "7850 kg/m^3", "kg/m^3")
SPECIFIC_HEAT = Kind("specific heat", "460 J/kg/K", "J/kg/K")

_NAMED_KINDS = (LENGTH, TIME, HTC, CONDUCTIVITY, DENSITY, SPECIFIC_HEAT)


def _expected(kind: Kind, text: object) -> str:
    shown = f"'{text}'" if isinstance(text, str) else repr(text)
    return f"expected a {kind.name} such as '{kind.example}', got {shown}"


def _split(text: object, kind: Kind) -> tuple[float, str]:
    """Number and unit text of ``text``; rejects non-strings, bare numbers and non-finite values."""
    if isinstance(text, bool) or text is None:
        raise ValueError(_expected(kind, text))
    if isinstance(text, int | float):
        raise ValueError(f"{_expected(kind, text)}: a bare number needs a unit")
    if not isinstance(text, str):
        raise ValueError(f"{_expected(kind, text)}: write the value as text with its unit")
    match = _NUMBER.match(text)
    if match is None:
        raise ValueError(f"{_expected(kind, text)}: it does not start with a number")
    value = float(match["num"])
    if not math.isfinite(value):
        raise ValueError(f"{_expected(kind, text)}: the number is not finite")
    unit = match["unit"]
    if not unit:
        raise ValueError(f"{_expected(kind, text)}: a bare number needs a unit")
    return value, unit


def _units(unit: str, kind: Kind, text: str) -> pint.Unit:
    try:
        return ureg.parse_units(unit)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError, TypeError):
        raise ValueError(f"{_expected(kind, text)}: unknown unit '{unit}'") from None
    except Exception:  # pint's tokenizer raises assorted errors on garbage; all mean "not a unit"
        raise ValueError(f"{_expected(kind, text)}: cannot read the unit '{unit}'") from None


def _describe(units: pint.Unit) -> str:
    """Name the kind of quantity the user gave, for a wrong-dimension message."""
    for other in (*_NAMED_KINDS, TEMPERATURE):
        if units.dimensionality == ureg.parse_units(other.si_unit).dimensionality:
            return f"a {other.name}"
    if units.dimensionless:
        return "a plain number"
    return f"a quantity in {units.dimensionality}"


@lru_cache(maxsize=4096)
def _parse_named(text: str, kind: Kind) -> float:
    value, unit = _split(text, kind)
    units = _units(_SCALE_TOKEN.sub(lambda m: f"delta_deg{m['scale']}", unit), kind, text)
    target = ureg.parse_units(kind.si_unit)
    if units.dimensionality != target.dimensionality:
        raise ValueError(f"{_expected(kind, text)}, which is {_describe(units)}")
    return float(ureg.Quantity(value, units).to(target).magnitude)


def _absolute_scale(unit: str) -> str | None:
    low = unit.strip().lower()
    if low in _CELSIUS:
        return "degC"
    if low in _FAHRENHEIT:
        return "degF"
    if low in _KELVIN:
        return "kelvin"
    if low in {"r", "degr", "°r", "rankine"}:
        return "degR"
    return None


_PART = r"(?:\d+(?:\.\d*)?|\.\d+)\s*[A-Za-z]+"
_COMPOUND = re.compile(rf"^\s*(?P<sign>[-+]?)\s*(?P<parts>{_PART}(?:\s*{_PART})+)\s*$")
_UNIT_MISSING = re.compile(rf"^\s*[-+]?\s*(?:{_PART}\s*)+(?:\d+(?:\.\d*)?|\.\d+)\s*$")
_PARTS = re.compile(r"(?P<num>\d+(?:\.\d*)?|\.\d+)\s*(?P<unit>[A-Za-z]+)")


@lru_cache(maxsize=4096)
def _parse_duration(text: str) -> float:
    """A time in seconds, one value ("90 min") or several added ("1 h 5 min 30 s")."""
    try:
        return _parse_named(text, TIME)
    except ValueError:
        match = _COMPOUND.match(text)
        if match is None:
            if _UNIT_MISSING.match(text):
                raise ValueError(f"{_expected(TIME, text)}: its last number has no unit") from None
            raise
    total = 0.0
    for part in _PARTS.finditer(match["parts"]):
        piece = f"{part['num']} {part['unit']}"
        try:
            total += _parse_named(piece, TIME)
        except ValueError:
            raise ValueError(
                f"{_expected(TIME, text)}: '{piece}' is not a time (write each part as a number and "
                f"h, min or s, as in '2 h 30 min')"
            ) from None
    return -total if match["sign"] == "-" else total


@lru_cache(maxsize=4096)
def _parse_temperature(text: str) -> float:
    value, unit = _split(text, TEMPERATURE)
    scale = _absolute_scale(unit)
    if scale is None:
        hint = "'degC', 'degF' or 'K'"
        if unit.lower().startswith("delta"):
            raise ValueError(f"{_expected(TEMPERATURE, text)}: that is a difference; use {hint}")
        raise ValueError(f"{_expected(TEMPERATURE, text)}: the unit must be {hint}")
    temp_c = float(ureg.Quantity(value, scale).to("degC").magnitude)
    if temp_c < ABSOLUTE_ZERO_C - 1e-9:
        raise ValueError(f"'{text}' is below absolute zero")
    return temp_c


def temperature_scale(text: str) -> str | None:
    """The scale a valid temperature text is written in: "degC", "degF", "kelvin" or "degR"."""
    match = _NUMBER.match(text)
    return None if match is None else _absolute_scale(match["unit"])


@lru_cache(maxsize=4096)
def _parse_delta(text: str) -> float:
    value, unit = _split(text, TEMPERATURE_DELTA)
    low = unit.strip().lower()
    scale = _absolute_scale(low.removeprefix("delta_").removeprefix("delta "))
    if scale is None:
        raise ValueError(f"{_expected(TEMPERATURE_DELTA, text)}: the unit must be 'K', 'degC' or 'degF'")
    delta_unit = "kelvin" if scale == "kelvin" else f"delta_{scale}"
    return float(ureg.Quantity(value, delta_unit).to("delta_degC").magnitude)


def parse_quantity(text: object, kind: Kind) -> float:
    """``text`` (e.g. "2 in") as a float in ``kind.si_unit``; temperatures in degC, differences in K."""
    if not isinstance(text, str):
        _split(text, kind)  # always raises: only text can carry a unit
        raise AssertionError("unreachable")
    if kind is TEMPERATURE:
        return _parse_temperature(text)
    if kind is TEMPERATURE_DELTA:
        return _parse_delta(text)
    if kind is TIME:
        return _parse_duration(text)
    return _parse_named(text, kind)


def parse_length(text: object) -> float:
    """A length in metres ("50 mm", "2 in", "0.1 m", "1.5 ft")."""
    return parse_quantity(text, LENGTH)


def parse_time(text: object) -> float:
    """A duration in seconds ("90 s", "10 min", "3 h", or in parts: "2 h 30 min", "1 h 5 min 30 s")."""
    return parse_quantity(text, TIME)


def parse_temperature(text: object) -> float:
    """A temperature in degC ("860 degC", "860 C", "1580 degF", "1133 K"); never below absolute zero."""
    return parse_quantity(text, TEMPERATURE)


def parse_temperature_delta(text: object) -> float:
    """A temperature difference in kelvin ("50 K", "50 degC", "90 degF" meaning a difference)."""
    return parse_quantity(text, TEMPERATURE_DELTA)


def parse_htc(text: object) -> float:
    """A heat transfer coefficient in W/m^2/K ("150 W/m^2/K", "25 Btu/(h ft^2 F)")."""
    return parse_quantity(text, HTC)


def parse_conductivity(text: object) -> float:
    """A thermal conductivity in W/m/K."""
    return parse_quantity(text, CONDUCTIVITY)


def parse_density(text: object) -> float:
    """A density in kg/m^3."""
    return parse_quantity(text, DENSITY)


def parse_specific_heat(text: object) -> float:
    """A specific heat capacity in J/kg/K."""
    return parse_quantity(text, SPECIFIC_HEAT)
