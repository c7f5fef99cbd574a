"""The underside of a plate on a hearth: a point like the surface in targets and in the result JSON."""

from __future__ import annotations

import copy
from typing import Any

import numpy as np
import pytest

from models import SpecError, parse_batch, target_warnings
from workers.convert import engine_inputs
from workers.jobs import run_batch
from workers.thermal import simulate

from .conftest import STEEL

# A plate on a hearth: the furnace heats its top by convection and radiation, the hearth its underside
# only by weak contact (a lower face with its own small h and no radiation). Demo-style numbers.
HEARTH: dict[str, Any] = {
    "batch": "wear plates on a hearth",
    "schedule": [
        {
            "name": "heat",
            "duration": "90 min",
            "ambient": "860 degC",
            "htc": "150 W/m^2/K",
            "lower_face": {"htc": "20 W/m^2/K"},
        },
        {"name": "quench", "duration": "10 min", "ambient": "60 degC", "htc": "1500 W/m^2/K"},
    ],
    "parts": [
        {
            "id": "WP-1",
            "shape": "plate",
            "thickness": "40 mm",
            "material": dict(STEEL),
            "initial": "20 degC",
            "targets": [
                {"step": "heat", "at": "core", "hold_above": "830 degC", "for": "15 min"},
                {"step": "heat", "at": "underside", "hold_above": "830 degC", "for": "15 min"},
                {"step": "quench", "at": "underside", "max_difference": "300 K"},
            ],
        }
    ],
}


def test_the_underside_is_the_coldest_point_while_heating_and_is_checked_there() -> None:
    spec = parse_batch(HEARTH)
    result = run_batch(spec)
    (part,) = result["parts"]
    trace = part["trace"]
    assert "underside_c" in trace and "second_surface_c" not in trace
    parts, steps = engine_inputs(spec)
    (engine,) = simulate(parts, steps, samples_per_step=120)
    assert engine.second_surface_c is not None
    assert trace["underside_c"] == pytest.approx(np.round(engine.second_surface_c, 2).tolist(), abs=0.01)
    heating = engine.step_index == 0
    # with no heat made inside, the weakly heated face lags the core (the flow runs top -> core -> hearth)
    assert np.all(engine.second_surface_c[heating][10:] < engine.core_c[heating][10:])
    core, underside, difference = part["checks"]
    assert core["at"] == "core" and underside["at"] == "underside" and difference["at"] == "underside"
    assert underside["margin_value"] < core["margin_value"]  # less time at temperature than the core
    assert underside["message"].startswith("underside ")


def test_the_underside_is_named_for_plates_only() -> None:
    doc = copy.deepcopy(HEARTH)
    doc["schedule"][0].pop("lower_face")
    doc["parts"][0] |= {"shape": "bar", "diameter": "40 mm"}
    doc["parts"][0].pop("thickness")
    with pytest.raises(SpecError) as info:
        parse_batch(doc)
    assert "parts[0].targets[1].at: underside is reported for plates only, not for a bar" in str(info.value)


def test_without_a_lower_face_the_underside_reads_as_the_surface_and_is_warned() -> None:
    doc = copy.deepcopy(HEARTH)
    doc["schedule"][0].pop("lower_face")
    doc["parts"][0]["targets"].append(
        {"step": "heat", "at": "surface", "hold_above": "830 degC", "for": "15 min"}
    )
    spec = parse_batch(doc)
    (warning, *_) = target_warnings(spec)
    assert warning.path == "parts[0].targets[1].at" and "reads the same" in warning.message
    checks = run_batch(spec)["parts"][0]["checks"]
    assert checks[1]["margin_value"] == checks[3]["margin_value"]  # underside == surface
