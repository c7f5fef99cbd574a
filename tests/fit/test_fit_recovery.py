"""The fit gives back the exchange that made a record (the engine's own, with lag and noise), with
intervals that cover the truth at about their stated rate; and it agrees with the lumped-capacitance
closed form for a thin part."""

from __future__ import annotations

import numpy as np
import pytest

from workers.fit import FitError, FitInput, Reading, fit
from workers.thermal import Curve, Face, Material, Step

from .support import bar, engine_readings, plate

TRUE_H, TRUE_LAG = 150.0, 15.0


def _heat(h: float, emissivity: float = 0.0, hours: float = 2.0) -> Step:
    return Step(hours * 3600.0, 860.0, Face(Curve.constant(h), emissivity))


def test_h_and_lag_intervals_cover_the_truth_at_about_their_rate() -> None:
    # linear step (constant h, constant properties): the exact series, fast enough for 20 seeds
    part = plate(0.05)
    times = np.arange(0.0, 2 * 3600.0 + 1, 60.0)
    seeds = range(20)
    covered = {"h": 0, "lag": 0}
    values: dict[str, list[float]] = {"h": [], "lag": []}
    for seed in seeds:
        readings = engine_readings(
            [part],
            [_heat(TRUE_H)],
            [(0, "core", 0.0), (0, "surface", 0.0)],
            times,
            lag_s=TRUE_LAG,
            noise_k=1.5,
            seed=seed,
        )
        out = fit(FitInput([part], [_heat(100.0)], 0, ("h", "lag"), readings))
        assert not out.warnings
        for p in out.params:
            truth = TRUE_H if p.name == "h" else TRUE_LAG
            covered[p.name] += p.low <= truth <= p.high
            values[p.name].append(p.value)
        assert 1.2 < out.rms_k < 1.8  # the noise's own 1.5 K: the model leaves nothing else
    # 95 % intervals over 20 seeds: 19 expected; 16 or fewer has probability 1.6 % (binomial, scipy)
    assert covered["h"] >= 17, covered
    assert covered["lag"] >= 17, covered
    assert abs(np.mean(values["h"]) - TRUE_H) < 0.01 * TRUE_H
    assert abs(np.mean(values["lag"]) - TRUE_LAG) < 0.1 * TRUE_LAG


def test_intervals_narrow_with_less_noise() -> None:
    part = plate(0.05)
    times = np.arange(0.0, 2 * 3600.0 + 1, 60.0)
    widths = []
    for noise in (2.0, 0.5):
        readings = engine_readings(
            [part], [_heat(TRUE_H)], [(0, "core", 0.0)], times, lag_s=0.0, noise_k=noise, seed=3
        )
        (p,) = fit(FitInput([part], [_heat(100.0)], 0, ("h",), readings)).params
        widths.append(p.high - p.low)
    assert widths[1] < widths[0] / 2.5  # width scales with the noise (4x here)


def test_severity_of_a_medium_is_recovered_in_a_quench() -> None:
    # nonlinear: a boiling-regime h(T_s) curve scaled by 0.8, marched
    curve = Curve((100.0, 300.0, 500.0, 700.0, 850.0), (600.0, 2500.0, 1800.0, 500.0, 400.0))
    part = bar(0.06, initial_c=850.0)
    truth = Step(600.0, 60.0, Face(Curve(curve.temp_c, tuple(0.8 * v for v in curve.value))))
    times = np.arange(0.0, 600.0 + 1, 10.0)
    readings = engine_readings(
        [part], [truth], [(0, "core", 0.0), (0, "surface", 0.0)], times, lag_s=3.0, noise_k=1.5, seed=7
    )
    out = fit(FitInput([part], [Step(600.0, 60.0, Face(curve))], 0, ("severity", "lag"), readings))
    sev, lag = out.params
    assert sev.low <= 0.8 <= sev.high, sev
    assert abs(sev.value - 0.8) < 0.02
    assert lag.low <= 3.0 <= lag.high, lag


def test_emissivity_is_recovered_in_a_furnace_with_h_given() -> None:
    part = plate(0.03)
    times = np.arange(0.0, 3600.0 + 1, 60.0)
    readings = engine_readings(
        [part], [_heat(40.0, 0.7, 1.0)], [(0, "core", 0.0)], times, lag_s=0.0, noise_k=1.0, seed=11
    )
    out = fit(FitInput([part], [_heat(40.0, 0.5, 1.0)], 0, ("emissivity",), readings))
    (eps,) = out.params
    assert eps.low <= 0.7 <= eps.high, eps
    assert abs(eps.value - 0.7) < 0.03


def test_h_and_emissivity_of_one_furnace_reading_are_reported_as_not_told_apart() -> None:
    # one core thermocouple of a thin plate: convection and radiation both only set the heat-up rate
    part = plate(0.01)
    times = np.arange(0.0, 1800.0 + 1, 60.0)
    readings = engine_readings(
        [part], [_heat(60.0, 0.6, 0.5)], [(0, "core", 0.0)], times, lag_s=0.0, noise_k=1.5, seed=5
    )
    out = fit(FitInput([part], [_heat(50.0, 0.5, 0.5)], 0, ("h", "emissivity"), readings))
    assert any("cannot be told apart" in w for w in out.warnings), out.warnings


def test_lag_without_readings_that_show_it_is_reported_unconstrained() -> None:
    # a slow part read every 20 min: a 2 s lag changes nothing the readings can see
    part = plate(0.1)
    times = np.arange(0.0, 4 * 3600.0 + 1, 1200.0)
    readings = engine_readings(
        [part], [_heat(100.0, 0.0, 4.0)], [(0, "core", 0.0)], times, lag_s=2.0, noise_k=1.0, seed=2
    )
    out = fit(FitInput([part], [_heat(80.0, 0.0, 4.0)], 0, ("h", "lag"), readings))
    assert any("do not constrain lag" in w for w in out.warnings), out.warnings


def test_lumped_capacitance_closed_form() -> None:
    """Lumped capacitance (Incropera and DeWitt, Fundamentals of Heat and Mass Transfer, section 5.1-5.2,
    from memory): for Bi = h Lc / k < 0.1 the part stays uniform and theta/theta_i = exp(-t h A/(rho c V)),
    so ln of the excess temperature is linear in time with slope -h A/(rho c V); a plate heated on both
    faces has V/A = L/2."""
    k, rho, c, L, h_true = 45.0, 7850.0, 475.0, 0.010, 20.0
    assert h_true * (L / 2) / k < 0.1  # Bi = 0.0022
    mat = Material(Curve.constant(k), rho, Curve.constant(c))
    part = plate(L, mat, 20.0)
    t = np.arange(0.0, 3 * 3600.0 + 1, 120.0)
    theta = (20.0 - 860.0) * np.exp(-t * h_true / (rho * c * L / 2))  # readings from the closed form itself
    temp = 860.0 + theta
    readings = [Reading(0, "core", 0.0, t, temp)]
    out = fit(FitInput([part], [_heat(10.0, 0.0, 3.0)], 0, ("h",), readings))
    (h,) = out.params
    # h from the log of the excess temperature: the closed form's own estimate
    slope = np.polyfit(t, np.log(np.abs(temp - 860.0)), 1)[0]
    h_log = -slope * rho * c * L / 2
    assert abs(h_log - h_true) < 1e-6 * h_true
    assert abs(h.value - h_log) < 0.005 * h_log  # the engine is not lumped: Bi/3 ~ 0.1 % apart
    assert out.rms_k < 0.5


def test_too_few_readings_within_the_step_is_an_error() -> None:
    part = plate(0.05)
    t = np.array([0.0, 600.0, 1200.0, 1800.0])
    readings = [Reading(0, "core", 0.0, t, np.array([20.0, 100.0, 200.0, 300.0]))]
    with pytest.raises(FitError, match="only 3 readings fall within the step"):
        fit(FitInput([part], [_heat(100.0)], 0, ("h",), readings))


def test_severity_on_a_constant_h_is_an_error() -> None:
    part = plate(0.05)
    t = np.arange(0.0, 3600.0, 60.0)
    readings = [Reading(0, "core", 0.0, t, 20.0 + t / 10)]
    with pytest.raises(FitError, match="severity scales"):
        fit(FitInput([part], [_heat(100.0)], 0, ("severity",), readings))
