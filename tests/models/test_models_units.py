"""Unit strings to SI: the accepted spellings and the errors a user sees."""

from __future__ import annotations

import math

import pytest

from models import units

# Exact unit definitions (international foot, international-table Btu): the conversion is by definition.
BTU_J = 1055.05585262
FT_M = 0.3048
BTU_H_FT2_F = BTU_J / 3600.0 / FT_M**2 / (5.0 / 9.0)


@pytest.mark.parametrize(
    ("parser", "text", "expected"),
    [
        (units.parse_length, "50 mm", 0.05),
        (units.parse_length, "2 in", 0.0508),
        (units.parse_length, "2in", 0.0508),
        (units.parse_length, "0.1 m", 0.1),
        (units.parse_length, "1.5 ft", 0.4572),
        (units.parse_time, "90 s", 90.0),
        (units.parse_time, "10 min", 600.0),
        (units.parse_time, "3 h", 10800.0),
        (units.parse_time, "2 h 30 min", 9000.0),
        (units.parse_time, "2 h 05 min", 7500.0),
        (units.parse_time, "1 h 5 min 30 s", 3930.0),
        (units.parse_time, "2h30min", 9000.0),
        (units.parse_time, "1 hour 15 minutes", 4500.0),
        (units.parse_time, "-2 h 05 min", -7500.0),
        (units.parse_temperature, "860 degC", 860.0),
        (units.parse_temperature, "860 C", 860.0),
        (units.parse_temperature, "860 °C", 860.0),
        (units.parse_temperature, "1580 degF", 860.0),
        (units.parse_temperature, "1580 F", 860.0),
        (units.parse_temperature, "1133.15 K", 860.0),
        (units.parse_temperature, "-40 F", -40.0),
        (units.parse_temperature_delta, "50 K", 50.0),
        (units.parse_temperature_delta, "50 degC", 50.0),
        (units.parse_temperature_delta, "90 degF", 50.0),
        (units.parse_temperature_delta, "90 F", 50.0),
        (units.parse_htc, "150 W/m^2/K", 150.0),
        (units.parse_htc, "150 W/(m^2 K)", 150.0),
        (units.parse_htc, "150 W/(m^2 C)", 150.0),
        (units.parse_htc, "1 Btu/(h ft^2 F)", BTU_H_FT2_F),
        (units.parse_htc, "1 Btu/h/ft^2/degF", BTU_H_FT2_F),
        (units.parse_conductivity, "42 W/m/K", 42.0),
        (units.parse_conductivity, "1 Btu/(h ft F)", BTU_H_FT2_F * FT_M),
        (units.parse_density, "7.85 g/cm^3", 7850.0),
        (units.parse_density, "7850 kg/m^3", 7850.0),
        (units.parse_specific_heat, "460 J/kg/K", 460.0),
        (units.parse_specific_heat, "0.46 kJ/(kg K)", 460.0),
    ],
)
def test_parses_to_si(parser: object, text: str, expected: float) -> None:
    assert callable(parser)
    # pint rounds the Btu to 1055.056 J, a few parts in 1e7 off the exact definition
    assert parser(text) == pytest.approx(expected, rel=1e-6, abs=1e-9)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("2 h 30", "its last number has no unit"),
        ("2 h 30 m", "'30 m' is not a time"),
        ("2 h 30 min 5 kg", "'5 kg' is not a time"),
        ("2 h, 30 min", "cannot read the unit"),
    ],
)
def test_a_duration_in_parts_names_the_part_that_is_wrong(text: str, expected: str) -> None:
    with pytest.raises(ValueError, match=expected):
        units.parse_time(text)


def test_fahrenheit_difference_in_htc_is_not_offset() -> None:
    # 1 Btu/(h ft^2 F) read with F as an absolute temperature would be nonsense; as a difference it is ~5.678
    assert units.parse_htc("1 Btu/(h ft^2 F)") == pytest.approx(5.678263, rel=1e-6)


@pytest.mark.parametrize(
    ("parser", "value", "fragment"),
    [
        (units.parse_length, "50", "expected a length such as '50 mm', got '50': a bare number needs a unit"),
        (units.parse_length, 50, "got 50: a bare number needs a unit"),
        (units.parse_length, 2.5, "a bare number needs a unit"),
        (units.parse_length, "3 h", "got '3 h', which is a time"),
        (units.parse_time, "50 mm", "expected a time such as '3 h', got '50 mm', which is a length"),
        (units.parse_htc, "42 W/m/K", "which is a thermal conductivity"),
        (units.parse_length, "nan mm", "not finite"),
        (units.parse_length, "inf mm", "not finite"),
        (units.parse_temperature, "-inf degC", "not finite"),
        (units.parse_length, "50 furlongz", "unknown unit 'furlongz'"),
        (units.parse_length, "mm", "does not start with a number"),
        (units.parse_length, "", "does not start with a number"),
        (units.parse_length, None, "expected a length"),
        (units.parse_length, True, "expected a length"),
        (units.parse_length, ["50 mm"], "write the value as text with its unit"),
        (units.parse_temperature, "860", "a bare number needs a unit"),
        (units.parse_temperature, "860 degree", "the unit must be 'degC', 'degF' or 'K'"),
        (units.parse_temperature, "50 delta_degC", "that is a difference"),
        (units.parse_temperature, "-300 degC", "'-300 degC' is below absolute zero"),
        (units.parse_temperature, "-500 F", "below absolute zero"),
        (units.parse_temperature, "-1 K", "below absolute zero"),
        (units.parse_temperature_delta, "50", "expected a temperature difference such as '50 K'"),
        (units.parse_temperature_delta, "50 mm", "the unit must be 'K', 'degC' or 'degF'"),
        (units.parse_htc, "150", "expected a heat transfer coefficient such as '150 W/m^2/K'"),
    ],
)
def test_bad_values_say_what_is_expected(parser: object, value: object, fragment: str) -> None:
    assert callable(parser)
    with pytest.raises(ValueError) as info:
        parser(value)
    assert fragment in str(info.value)


def test_absolute_zero_itself_is_allowed() -> None:
    assert units.parse_temperature("0 K") == pytest.approx(units.ABSOLUTE_ZERO_C)
    assert math.isfinite(units.parse_temperature("-459.67 degF"))
