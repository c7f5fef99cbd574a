"""Convergence the engine claims: second order in the substep size of nonlinear steps, and a series
truncation that follows ``Tolerance.series_k`` with a bound that covers the actual error."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from tests.engine.support import record, run_one
from tests.reference import analytic as an
from tests.reference.cases import CR_MO_STEEL, const_face, plate
from tests.reference.mol import solve
from workers.thermal import Tolerance
from workers.thermal.spec import Curve, Face, PartThermal, Shape, Step

K, RHO, CP = 37.7, 7822.0, 444.0  # read: Incropera, Table A.1 (1/2Cr-1/4Mo-Si)
ALPHA = K / (RHO * CP)
SUBSTEPS = (0.04, 0.02, 0.01, 0.005)


def slope(x: tuple[float, ...] | np.ndarray, y: list[float] | np.ndarray) -> float:
    """Least-squares slope of log y against log x."""
    return float(np.polyfit(np.log(np.asarray(x)), np.log(np.asarray(y)), 1)[0])


NONLINEAR = {
    # constant properties, so the only approximation left is freezing h over a substep
    "plate, radiant heating": (
        plate(0.03, initial_c=20.0),
        [Step(600.0, 860.0, Face(Curve.constant(20.0), 0.8))],
    ),
    "plate, quench with h linear in T_s": (
        plate(0.03, initial_c=860.0),
        [Step(120.0, 60.0, Face(Curve((100.0, 800.0), (300.0, 3000.0))))],
    ),
}


def substep_rates(name: str) -> tuple[float, float, list[float], list[float]]:
    """Fitted orders of the error against the reference and of successive differences, with both lists."""
    part, steps = NONLINEAR[name]
    traces = [run_one(part, steps, samples=8, tol=Tolerance(substep=s)) for s in SUBSTEPS]
    ref = solve(part, steps, traces[0].time_s, cells=100, rtol=1e-9, atol=1e-9, richardson=True)
    errors = [
        max(
            float(np.max(np.abs(tr.core_c - ref.core_c))), float(np.max(np.abs(tr.surface_c - ref.surface_c)))
        )
        for tr in traces
    ]
    # computed with scipy: the method-of-lines reference (error estimate below 1e-3 K here)
    assert ref.error_k is not None and ref.error_k.max() < 1e-2
    steps_diff = [
        max(float(np.max(np.abs(a.core_c - b.core_c))), float(np.max(np.abs(a.surface_c - b.surface_c))))
        for a, b in itertools.pairwise(traces)
    ]
    return slope(SUBSTEPS, errors), slope(SUBSTEPS[:-1], steps_diff), errors, steps_diff


@pytest.mark.parametrize("name", list(NONLINEAR))
def test_substep_error_converges_faster_than_first_order(name: str) -> None:
    # measured (2026-12): order 1.47-1.50 against the reference, both cases
    rate, self_rate, errors, steps_diff = substep_rates(name)
    record(f"substep convergence vs MOL, {name}: fitted order", "computed with scipy", 1.25, rate)
    assert rate > 1.25, f"errors {errors} K at substep {SUBSTEPS}: order {rate:.2f}"
    # the engine against itself: differences of successive halvings fall at the same order
    record(f"substep self-convergence, {name}: fitted order", "computed with scipy", 1.25, self_rate)
    assert self_rate > 1.25, f"successive differences {steps_diff} K: order {self_rate:.2f}"


@pytest.mark.xfail(strict=True, reason="predictor-corrector is designed second order; measured 1.5 (open)")
@pytest.mark.parametrize("name", list(NONLINEAR))
def test_substep_error_falls_at_second_order(name: str) -> None:
    rate, _, errors, _ = substep_rates(name)
    assert rate > 1.8, f"errors {errors} K at substep {SUBSTEPS}: order {rate:.2f}"


SERIES_K = (1e-1, 1e-2, 1e-3, 1e-4, 1e-6)


def single_step(kind: str) -> tuple[PartThermal, list[Step], dict[str, np.ndarray], np.ndarray]:
    size, h, t0, amb, dur = 0.02, 1000.0, 850.0, 50.0, 600.0
    part = PartThermal(Shape(kind, (size,)), CR_MO_STEEL, t0)  # type: ignore[arg-type]
    steps = [Step(dur, amb, const_face(h))]
    times = dur * np.arange(61) / 60
    Bi, Fo = h * size / K, ALPHA * times[1:] / size**2
    # computed with scipy: 400-term series with brentq roots
    if kind == "plate":
        ratios = {
            "core_c": an.plate_theta(Bi, Fo, 0.0),
            "surface_c": an.plate_theta(Bi, Fo, 1.0),
            "mean_c": an.plate_mean_theta(Bi, Fo),
        }
    else:
        ratios = {
            "core_c": an.bar_theta(Bi, Fo, 0.0),
            "surface_c": an.bar_theta(Bi, Fo, 1.0),
            "mean_c": an.bar_mean_theta(Bi, Fo),
        }
    want = {k: np.concatenate([[t0], amb + (t0 - amb) * v]) for k, v in ratios.items()}
    return part, steps, want, times


def two_steps() -> tuple[PartThermal, list[Step], dict[str, np.ndarray], np.ndarray]:
    a = 0.02
    steps = [Step(300.0, 900.0, const_face(200.0)), Step(600.0, 50.0, const_face(1500.0))]
    times = np.concatenate([300.0 * np.arange(61) / 60, 300.0 + 600.0 * np.arange(1, 61) / 60])
    first = an.plate_two_steps(
        200.0 * a / K, 200.0 * a / K, 0.0, ALPHA * times[1:61] / a**2, 20.0, 900.0, 900.0
    )
    second = an.plate_two_steps(
        200.0 * a / K,
        1500.0 * a / K,
        ALPHA * 300.0 / a**2,
        ALPHA * (times[61:] - 300.0) / a**2,
        20.0,
        900.0,
        50.0,
    )
    want = {k: np.concatenate([[20.0], first[k], second[k]]) for k in first}
    return plate(a, initial_c=20.0), steps, want, times


@pytest.mark.parametrize("case", ["plate", "bar", "plate, two chained steps"])
def test_truncation_follows_series_k_and_stays_inside_its_bound(case: str) -> None:
    part, steps, want, times = two_steps() if case.startswith("plate,") else single_step(case)
    worst = []
    for series_k in SERIES_K:
        tr = run_one(part, steps, samples=60, tol=Tolerance(series_k=series_k))
        assert np.allclose(tr.time_s, times)
        err = np.max(np.vstack([np.abs(getattr(tr, k) - v) for k, v in want.items()]), axis=0)
        inside = err <= tr.bound_k + 1e-9
        assert inside.all(), (
            f"series_k={series_k}: error {err[~inside][0]:.3e} K above bound {tr.bound_k[~inside][0]:.3e} K "
            f"at t = {tr.time_s[~inside][0]} s"
        )
        worst.append(float(err.max()))
    # computed with scipy: the series above, with far more terms than the engine keeps
    record(
        f"series truncation vs series_k, {case}: max error at series_k=1e-3",
        "computed with scipy",
        1e-3,
        worst[2],
    )
    assert all(e <= k for e, k in zip(worst, SERIES_K, strict=True)), worst
    assert all(b <= a + 1e-12 for a, b in itertools.pairwise(worst)), worst
