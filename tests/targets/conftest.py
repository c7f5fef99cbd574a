"""Small batches that the engine computes in well under a second (constant properties and h)."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

import pytest

ROOT = str(Path(__file__).resolve().parents[2])
if ROOT not in sys.path:  # the project's own packages, not the test folders of the same names
    sys.path.insert(0, ROOT)

STEEL = {"conductivity": "40 W/m/K", "density": "7850 kg/m^3", "specific_heat": "600 J/kg/K"}


def fast_batch() -> dict[str, Any]:
    """Two parts, linear steps only: a thin plate that passes and a thick bar short of its soak."""
    return {
        "batch": "test load",
        "schedule": [
            {"name": "heat", "duration": "2 h", "ambient": "860 degC", "htc": "200 W/m^2/K"},
            {"name": "quench", "duration": "20 min", "ambient": "60 degC", "htc": "2000 W/m^2/K"},
            {"name": "temper", "duration": "2 h", "ambient": "550 degC", "htc": "100 W/m^2/K"},
        ],
        "parts": [
            {
                "id": "thin",
                "shape": "plate",
                "thickness": "20 mm",
                "material": dict(STEEL),
                "initial": "20 degC",
                "targets": [
                    {"step": "heat", "at": "core", "hold_above": "845 degC", "for": "30 min"},
                    {"step": "heat", "at": "surface", "stay_below": "870 degC"},
                    {"step": "quench", "at": "core", "fall_below": "200 degC", "within": "8 min"},
                    {"step": "quench", "max_difference": "400 K"},
                    {"step": "temper", "temper_parameter_min": 15000},
                    {"step": "temper", "temper_parameter_max": 17500},
                ],
            },
            {
                "id": "thick",
                "shape": "bar",
                "diameter": "200 mm",
                "material": dict(STEEL),
                "initial": "20 degC",
                "targets": [{"step": "heat", "at": "core", "hold_above": "845 degC", "for": "30 min"}],
            },
        ],
    }


@pytest.fixture
def batch_doc() -> dict[str, Any]:
    return fast_batch()
