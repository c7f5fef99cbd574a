"""Convergence the engine claims: for the march of nonlinear steps, in the time-step tolerance and in
the grid; and a series truncation that follows ``Tolerance.series_k`` with a bound that covers the
actual error."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from tests.engine.support import record, run_one
from tests.reference import analytic as an
from tests.reference.cases import CR_MO_STEEL, bar, const_face, plate
from tests.reference.mol import MolResult, solve
from workers.thermal import Tolerance, Trace
from workers.thermal.spec import Curve, Face, PartThermal, Shape, Step

K, RHO, CP = 37.7, 7822.0, 444.0  # read: Incropera, Table A.1 (1/2Cr-1/4Mo-Si)
ALPHA = K / (RHO * CP)


def slope(x: tuple[float, ...] | np.ndarray, y: list[float] | np.ndarray) -> float:
    """Least-squares slope of log y against log x."""
    return float(np.polyfit(np.log(np.asarray(x)), np.log(np.asarray(y)), 1)[0])


NONLINEAR = {
    # constant properties: the march's only approximations are its time steps and its grid
    "plate, radiant heating": (
        plate(0.03, initial_c=20.0),
        [Step(600.0, 860.0, Face(Curve.constant(20.0), 0.8))],
    ),
    "plate, quench with h linear in T_s": (
        plate(0.03, initial_c=860.0),
        [Step(120.0, 60.0, Face(Curve((100.0, 800.0), (300.0, 3000.0))))],
    ),
    "bar, quench with h linear in T_s": (
        bar(0.03, initial_c=860.0),
        [Step(120.0, 60.0, Face(Curve((100.0, 800.0), (300.0, 3000.0))))],
    ),
}
STEP_K = (0.2, 0.1, 0.05, 0.025, 0.0125)
INTERVALS = (4, 8, 16)
GRID_CASES = [n for n in NONLINEAR if "quench" in n]  # radiant heating is below 0.01 K from 8 intervals


def max_diff(a: Trace, b: Trace | MolResult) -> float:
    return max(float(np.max(np.abs(a.core_c - b.core_c))), float(np.max(np.abs(a.surface_c - b.surface_c))))


@pytest.mark.parametrize("name", list(NONLINEAR))
def test_march_time_steps_converge(name: str) -> None:
    """Halving the local error allowed per time step (BDF2 with error-per-step control: steps scale
    as step_k^(1/3), the global error as step_k^(2/3)); the grid is the same in every run, so the
    differences between successive runs are the time error alone."""
    part, steps = NONLINEAR[name]
    traces = [run_one(part, steps, samples=8, tol=Tolerance(step_k=s)) for s in STEP_K]
    diffs = [max_diff(a, b) for a, b in itertools.pairwise(traces)]
    rate = slope(STEP_K[:-1], diffs)
    record(
        f"march time-step self-convergence, {name}: fitted order in step_k", "computed with scipy", 0.5, rate
    )
    assert rate > 0.5, f"successive differences {diffs} K at step_k {STEP_K}: order {rate:.2f}"
    # more steps for a tighter tolerance, about 2^(1/3) per halving
    counts = [tr.substeps for tr in traces]
    assert all(b > a for a, b in itertools.pairwise(counts)), counts
    # and against the outside reference the error falls (down to what the grid leaves)
    ref = solve(part, steps, traces[0].time_s, cells=100, rtol=1e-9, atol=1e-9, richardson=True)
    # computed with scipy: the method-of-lines reference (error estimate below 1e-2 K here)
    assert ref.error_k is not None and ref.error_k.max() < 1e-2
    errors = [max_diff(tr, ref) for tr in traces]
    # measured (2026-12): 0.68-0.75 K at step_k 0.2 down to 0.12-0.13 K at 0.0125 for the quenches
    ref_rate = slope(STEP_K, errors)
    record(f"march vs MOL, {name}: fitted order in step_k", "computed with scipy", 0.5, ref_rate)
    assert all(b < a for a, b in itertools.pairwise(errors)), errors
    assert ref_rate > 0.5, f"errors {errors} K at step_k {STEP_K}: order {ref_rate:.2f}"


@pytest.mark.parametrize("name", GRID_CASES)
def test_march_grid_converges_at_second_order_or_better(name: str) -> None:
    """Doubling the grid: the fine grid alone is second order in the node spacing, and the reported
    values, extrapolated from the two grids, at least as good (measured 2026-12: about 3.3). The time
    steps are held tight so that their error (about 0.008 K) stays below the grid's."""
    part, steps = NONLINEAR[name]
    traces = [run_one(part, steps, samples=8, tol=Tolerance(step_k=2e-4, intervals=n)) for n in INTERVALS]
    ref = solve(part, steps, traces[0].time_s, cells=100, rtol=1e-9, atol=1e-9, richardson=True)
    # computed with scipy: the method-of-lines reference (error estimate below 1e-2 K here)
    assert ref.error_k is not None and ref.error_k.max() < 1e-2
    errors = [max_diff(tr, ref) for tr in traces]
    rate = slope(1.0 / np.asarray(INTERVALS, dtype=float), errors)
    record(
        f"march grid convergence vs MOL, {name}: fitted order in spacing", "computed with scipy", 1.8, rate
    )
    assert rate > 1.8, f"errors {errors} K at {INTERVALS} intervals: order {rate:.2f}"


# Blocks and short cylinders with a nonlinear step are marched on tensor grids: the same time-step
# control, checked against themselves (their outside check is in test_against_mol.py).
BLOCK = PartThermal(Shape("block", (0.03, 0.06, 0.09)), CR_MO_STEEL, 860.0)
BLOCK_STEPS = [Step(120.0, 60.0, Face(Curve((100.0, 800.0), (300.0, 3000.0))))]


def test_solid_march_time_steps_converge() -> None:
    traces = [run_one(BLOCK, BLOCK_STEPS, samples=8, tol=Tolerance(step_k=s)) for s in STEP_K[:4]]
    diffs = [
        max(max_diff(a, b), float(np.max(np.abs(a.corner_c - b.corner_c))))  # type: ignore[operator]
        for a, b in itertools.pairwise(traces)
    ]
    rate = slope(STEP_K[:3], diffs)
    record("solid march time-step self-convergence, block quench: order", "computed with scipy", 0.5, rate)
    assert rate > 0.5, f"successive differences {diffs} K at step_k {STEP_K[:4]}: order {rate:.2f}"


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
