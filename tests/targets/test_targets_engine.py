"""Target checks on engine traces, against outside references."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from scipy.optimize import brentq

from models import parse_batch
from workers.jobs import run_batch

from .conftest import STEEL

KELVIN = 273.15


def plate_batch(
    htc: str, thickness_m: float, hold_c: float, initial: str, ambient: str, hours: float
) -> dict[str, Any]:
    return {
        "batch": "reference",
        "schedule": [{"name": "heat", "duration": f"{hours} h", "ambient": ambient, "htc": htc}],
        "parts": [
            {
                "id": "P",
                "shape": "plate",
                "thickness": f"{thickness_m * 1000} mm",
                "material": dict(STEEL),
                "initial": initial,
                "targets": [
                    {"step": "heat", "at": "core", "hold_above": f"{hold_c} degC", "for": "10 min"},
                    {"step": "heat", "temper_parameter_min": 1000},
                ],
            }
        ],
    }


def plate_centre_ratio(Bi: float, Fo: float, n: int = 60) -> float:
    """theta/theta0 at the centre of a plate, uniform start (computed with scipy: roots by brentq)."""
    total = 0.0
    for k in range(n):
        lam = brentq(
            lambda x: x * math.sin(x) - Bi * math.cos(x), k * math.pi + 1e-12, (k + 0.5) * math.pi - 1e-12
        )
        total += 4 * math.sin(lam) / (2 * lam + math.sin(2 * lam)) * math.exp(-(lam**2) * Fo)
    return total


def test_hold_time_of_a_plate_near_the_dirichlet_limit_matches_the_series() -> None:
    # plate 200 mm, Bi = 1e6 * 0.1 / 40 = 2500 (practically a fixed surface temperature); 20 -> 860 degC.
    # The time the centre reaches 845 degC from the series (computed with scipy), then hold = end - that.
    a, k, rho_c = 0.1, 40.0, 7850.0 * 600.0
    alpha = k / rho_c
    Bi = 1e6 * a / k
    ratio = (845.0 - 860.0) / (20.0 - 860.0)
    fo_cross = brentq(lambda fo: plate_centre_ratio(Bi, fo) - ratio, 0.05, 10.0)
    t_cross = fo_cross * a**2 / alpha
    duration = 2 * 3600.0
    result = run_batch(parse_batch(plate_batch("1e6 W/m^2/K", 2 * a, 845.0, "20 degC", "860 degC", 2)))
    hold = result["parts"][0]["checks"][0]
    assert hold["target"] == "hold_above"
    # sampled every 60 s and interpolated linearly: within 1 % of the crossing time
    assert hold["margin_value"] + 600.0 == pytest.approx(duration - t_cross, abs=0.01 * t_cross)


def test_tempering_parameter_of_an_isothermal_engine_trace() -> None:
    # read: Hollomon-Jaffe P = T (C + log10 t), T in kelvin, t in hours (heat-treating references),
    # C = 20 from the catalog. The part starts at the bath temperature, so the trace is isothermal.
    result = run_batch(parse_batch(plate_batch("100 W/m^2/K", 0.03, 500.0, "600 degC", "600 degC", 2.5)))
    temper = result["parts"][0]["checks"][1]
    p = float(temper["achieved"].removeprefix("P "))
    assert p == pytest.approx((600 + KELVIN) * (20 + math.log10(2.5)), abs=1.0)


def test_trace_json_is_rounded_and_sized(batch_doc: dict[str, Any]) -> None:
    result = run_batch(parse_batch(batch_doc))
    tr = result["parts"][0]["trace"]
    assert len(tr["time_s"]) == 3 * 120 + 1
    assert set(tr) == {"time_s", "core_c", "surface_c", "ambient_c", "bound_k"}
    assert all(v is not None and round(v, 2) == v for v in tr["core_c"])
    assert np.all(np.diff(np.asarray(tr["time_s"], dtype=float)) > 0)
