"""Warnings, not errors, for targets a steel part cannot mean or can never meet."""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

import pytest

from models import load_batch_file, parse_batch, target_warnings
from models.catalog import bounds
from workers.jobs import run_batch

BASE: dict[str, Any] = {
    "batch": "plausibility",
    "schedule": [
        {"name": "heat", "duration": "2 h", "ambient": "860 degC", "htc": "150 W/m^2/K"},
        {"name": "quench", "duration": "10 min", "ambient": "60 degC", "htc": "800 W/m^2/K"},
        {"name": "temper", "duration": "2 h", "ambient": "550 degC", "htc": "30 W/m^2/K"},
    ],
    "parts": [
        {
            "id": "P1",
            "shape": "plate",
            "thickness": "20 mm",
            "material": {"conductivity": "40 W/m/K", "density": "7850 kg/m^3", "specific_heat": "600 J/kg/K"},
            "initial": "20 degC",
            "targets": [],
        }
    ],
}


def _with(target: dict[str, Any]) -> list[str]:
    doc = copy.deepcopy(BASE)
    doc["parts"][0]["targets"] = [target]
    return [str(w) for w in target_warnings(parse_batch(doc))]


@pytest.mark.parametrize(
    "target",
    [
        {"step": "heat", "at": "core", "hold_above": "845 degC", "for": "30 min"},
        {"step": "heat", "at": "surface", "stay_below": "880 degC"},
        {"step": "quench", "at": "core", "fall_below": "200 degC", "within": "8 min"},
        {"step": "quench", "max_difference": "400 K"},
        # common practice: 550 degC for 2 h with C = 20 is P = 823 K x 20.3 = 16700
        {"step": "temper", "temper_parameter_min": 16700},
        {"step": "temper", "temper_parameter_max": 17500, "constant": 18},
    ],
)
def test_targets_a_shop_writes_give_no_warning(target: dict[str, Any]) -> None:
    assert _with(target) == []


def test_a_tempering_parameter_in_rankine_is_warned_with_the_kelvin_value() -> None:
    # P = T (C + log10 t) with T in degrees Rankine is 1.8 times the kelvin value: 31000 / 1.8 = 17222
    (warning,) = _with({"step": "temper", "temper_parameter_min": 31000})
    path, message = warning.split(": ", 1)
    assert path == "parts[0].targets[0].temper_parameter_min"
    assert message.startswith("P 31000 would need 1277 degC for 1 h")
    assert "lower critical temperature (727 degC)" in warning and "did you mean 17222?" in warning


def test_a_parameter_below_any_tempering_and_a_strange_constant_are_warned() -> None:
    (low,) = _with({"step": "temper", "temper_parameter_min": 5000})
    assert "below any tempering" in low and "did you mean" not in low
    warnings = _with({"step": "temper", "temper_parameter_max": 16000, "constant": 45})
    assert any("C = 45 is outside 10-30" in w for w in warnings)


@pytest.mark.parametrize(
    ("target", "expected"),
    [
        ({"step": "heat", "at": "core", "hold_above": "1550 degC", "for": "30 min"}, "begin to melt"),
        ({"step": "heat", "at": "surface", "stay_below": "1600 degC"}, "begin to melt"),
        ({"step": "heat", "at": "core", "hold_above": "870 degC", "for": "30 min"}, "no part can reach it"),
        ({"step": "quench", "at": "core", "fall_below": "15 degC", "within": "8 min"}, "no part can fall"),
        ({"step": "quench", "max_difference": "900 K"}, "can never be missed"),
    ],
)
def test_temperatures_no_steel_or_furnace_can_give_are_warned(target: dict[str, Any], expected: str) -> None:
    (warning,) = _with(target)
    assert expected in warning


def test_bounds_carry_their_sources() -> None:
    b = bounds()
    for source in (b.melting_source, b.lower_critical_source, b.temper_source, b.constant_source):
        assert "from memory" in source or "common practice" in source


def test_a_warned_batch_still_runs_and_its_result_lists_the_warnings() -> None:
    doc = copy.deepcopy(BASE)
    doc["parts"][0]["targets"] = [{"step": "temper", "temper_parameter_min": 31000}]
    result = run_batch(parse_batch(doc))
    assert result["parts"][0]["flagged"]  # computed and checked as written
    (warning,) = result["warnings"]
    assert warning["path"] == "parts[0].targets[0].temper_parameter_min" and "17222" in warning["message"]


def test_the_demo_has_no_warnings() -> None:
    demo = Path(__file__).resolve().parents[2] / "scheduler" / "demo" / "demo.yaml"
    assert target_warnings(load_batch_file(demo)) == []
