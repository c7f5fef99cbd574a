"""Where a target is crossed: the core's arrival at 845 degC on heating and its fall below 200 degC in a
quench, located by the checks on the engine's trace, against the method-of-lines reference.

The reference is tests/reference/mol.py (fine grid, Richardson-extrapolated, scipy's BDF at rtol and
atol 1e-9), sampled every 0.5 s around the crossing; at that spacing its linear crossing is exact to a
few hundredths of a second (computed: the curvature over 0.5 s moves it less than 0.01 s in these
cases). Series steps (constant h and properties) are exact in the engine, so their crossings must agree
within 0.5 s; marched steps (radiation, h(T_s), k(T), cp(T)) within 5 s, the goal of issue 9, and never on
the unsafe side by more than the error the checks state for a crossing (``crossing_error``: the trace's
error bound over the rate there). A hold that starts early, or a fall that comes early, is on the
unsafe side: the part is credited with more soak, or with a quench it did not get.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
import pytest

from tests.reference.cases import EUROCODE_STEEL, OIL_QUENCH, bar, const_face, plate
from tests.reference.mol import solve
from workers.targets import (
    Target,
    crossing_error,
    crossing_time,
    evaluate,
    first_below,
    first_reaching,
    longest_run_above,
)
from workers.thermal import Curve, Face, PartThermal, Step, Tolerance, simulate

FURNACE = Face(Curve.constant(20.0), 0.8)  # gas 20 W/m2K and emissivity 0.8, as tests/engine
SERIES_TOL_S = 0.5
MARCH_TOL_S = 5.0  # issue 9's goal
TIGHT = Tolerance(step_k=0.001)  # the march near its converged limit


@dataclass(frozen=True)
class Case:
    part: PartThermal
    steps: list[Step]
    step: int  # the step the target is in
    heating: bool  # hold above 845 degC on heating, else fall below 200 degC


HEAT = 845.0  # read: austenitizing 4140 845-870 C (SAE data as tabulated in engineering references)
FALL = 200.0  # common practice: a quench is done once the core is below about 200 degC

SERIES = {
    "plate, convective heating": Case(plate(0.03), [Step(3600.0, 860.0, const_face(150.0))], 0, True),
    "bar, convective heating": Case(bar(0.04), [Step(3600.0, 860.0, const_face(150.0))], 0, True),
    "plate, water quench (constant h)": Case(
        plate(0.03, initial_c=860.0), [Step(900.0, 30.0, const_face(3000.0))], 0, False
    ),
    "bar, water quench (constant h)": Case(
        bar(0.04, initial_c=860.0), [Step(900.0, 30.0, const_face(3000.0))], 0, False
    ),
}

MARCHED = {
    "plate, radiant heating": Case(plate(0.03), [Step(3600.0, 860.0, FURNACE)], 0, True),
    "bar, radiant heating": Case(bar(0.04), [Step(3600.0, 860.0, FURNACE)], 0, True),
    "plate, oil quench h(Ts)": Case(
        plate(0.03, initial_c=860.0), [Step(900.0, 60.0, Face(OIL_QUENCH))], 0, False
    ),
    "bar, oil quench h(Ts)": Case(
        bar(0.04, initial_c=860.0), [Step(900.0, 60.0, Face(OIL_QUENCH))], 0, False
    ),
    "plate, k(T) and cp(T), oil quench h(Ts)": Case(
        plate(0.03, EUROCODE_STEEL, initial_c=860.0), [Step(900.0, 60.0, Face(OIL_QUENCH))], 0, False
    ),
    "bar, k(T) and cp(T), soak then oil quench h(Ts)": Case(
        bar(0.04, EUROCODE_STEEL, initial_c=860.0),
        [Step(600.0, 860.0, FURNACE), Step(900.0, 60.0, Face(OIL_QUENCH))],
        1,
        False,
    ),
}

# Slow arrivals: the core creeps up to 845 degC in a furnace at 860, so a small error of the march's
# temperatures is a long time. At the default Tolerance the march's core runs about 0.1 K warm there
# and the crossing comes early (measured: 5.2 s for the 60 mm plate, 19 s for the 200 mm one); the
# crossing is on the solution, so it is as good as the solution (see the TIGHT checks below).
SLOW = {
    "plate 60 mm, k(T) and cp(T), radiant heating": Case(
        plate(0.03, EUROCODE_STEEL), [Step(7200.0, 860.0, FURNACE)], 0, True
    ),
    "bar 150 mm, k(T) and cp(T), radiant heating": Case(
        bar(0.075, EUROCODE_STEEL), [Step(3 * 3600.0, 860.0, FURNACE)], 0, True
    ),
    "plate 200 mm, k(T) and cp(T), ramped radiant heating and soak": Case(
        plate(0.1, EUROCODE_STEEL),
        [Step(4 * 3600.0, 860.0, FURNACE, ambient_start_c=400.0), Step(4 * 3600.0, 860.0, FURNACE)],
        1,
        True,
    ),
}


@dataclass(frozen=True)
class Measured:
    engine_s: float  # the crossing as the checks find it, s from time zero
    stated_s: float  # its stated error (``crossing_error``)
    reference_s: float  # the reference's crossing
    reference_error_s: float  # the reference's own error estimate there over the rate

    @property
    def unsafe_by(self) -> float:
        """How far the engine's crossing is on the unsafe side (positive) of the reference's: earlier,
        for both a hold's start and a fall."""
        return self.reference_s - self.engine_s

    def __str__(self) -> str:
        stated = f"stated error {self.stated_s:.2f} s"
        return f"engine {self.engine_s:.2f} s ({stated}), reference {self.reference_s:.2f} s"


CASES = SERIES | MARCHED | SLOW


@functools.cache
def measured(name: str, tight: bool = False) -> Measured:
    """Engine and reference crossings of a case (each case is computed once per session)."""
    case = CASES[name]
    tr = simulate([case.part], case.steps, tol=TIGHT if tight else Tolerance())[0]
    step = f"s{case.step}"
    if case.heating:
        found = evaluate(Target(step, case.step, "hold_above", "core", HEAT, 60.0), tr).facts["start_s"]
    else:
        found = evaluate(Target(step, case.step, "fall_below", "core", FALL, 3600.0), tr).facts["when_s"]
    assert found is not None, "the engine's core never crossed"
    got = float(sum(s.duration_s for s in case.steps[: case.step])) + float(found)
    # the reference every 0.5 s within 150 s of the engine's crossing
    times = np.arange(max(got - 150.0, 0.0), got + 150.0, 0.5)
    ref = solve(case.part, case.steps, times, cells=60, rtol=1e-9, atol=1e-9, richardson=True)
    limit = HEAT if case.heating else FALL
    want = first_reaching(times, ref.core_c, limit) if case.heating else first_below(times, ref.core_c, limit)
    assert want is not None and times[0] < want < times[-1], "the reference's crossing is outside its window"
    assert ref.error_k is not None
    i = int(np.searchsorted(times, want))
    speed = abs(float(ref.core_c[i] - ref.core_c[i - 1])) / 0.5
    ref_error = float(ref.error_k[i]) / speed
    assert ref_error < 0.25, f"reference not converged at its crossing ({ref_error:.2f} s)"
    return Measured(got, crossing_error(tr, "core", got), float(want), ref_error)


@pytest.mark.parametrize("name", list(SERIES))
def test_series_crossing_matches_the_reference(name: str) -> None:
    # computed with scipy: method-of-lines reference (tests/reference/mol.py)
    m = measured(name)
    assert abs(m.engine_s - m.reference_s) < SERIES_TOL_S, str(m)


@pytest.mark.parametrize("name", list(MARCHED))
def test_marched_crossing_is_within_five_seconds_of_the_reference(name: str) -> None:
    # computed with scipy: method-of-lines reference (tests/reference/mol.py)
    m = measured(name)
    assert abs(m.engine_s - m.reference_s) < MARCH_TOL_S, str(m)


@pytest.mark.parametrize("name", list(SLOW))
def test_slow_arrival_is_as_good_as_the_solution(name: str) -> None:
    # computed with scipy: method-of-lines reference (tests/reference/mol.py). With the march near its
    # converged limit the crossing is within 2.5 s of the reference even where the core creeps up
    m = measured(name, tight=True)
    assert abs(m.engine_s - m.reference_s) < 2.5, str(m)


@pytest.mark.parametrize(
    "name",
    [
        pytest.param(
            name, marks=pytest.mark.xfail(strict=True, reason="the march's error at the default Tolerance")
        )
        for name in SLOW
    ],
)
def test_slow_arrival_within_five_seconds_at_the_default_tolerance(name: str) -> None:
    # computed with scipy: method-of-lines reference (tests/reference/mol.py). Issue 9's goal, not met
    # yet where the core creeps up (the march's temperatures, not the crossing: see above); a march
    # that meets it makes this pass, and the mark must go
    m = measured(name)
    assert abs(m.engine_s - m.reference_s) < MARCH_TOL_S, str(m)


@pytest.mark.parametrize("name", list(CASES))
def test_a_crossing_is_never_unsafe_by_more_than_its_stated_error(name: str) -> None:
    # computed with scipy: method-of-lines reference (tests/reference/mol.py); the comparison allows the
    # reference's own error as well
    m = measured(name)
    assert math.isfinite(m.stated_s), str(m)
    assert m.unsafe_by <= m.stated_s + m.reference_error_s, str(m)


def test_the_cubic_finds_a_crossing_between_far_samples() -> None:
    # T = 860 - 840 exp(-t / 1000) from 20 degC reaches 845 degC at t = 1000 ln(840 / 15) s (by hand);
    # samples 300 s apart with the exact rate: the cubic's crossing within 0.5 s, the straight line's
    # several seconds late
    t = np.arange(0.0, 6001.0, 300.0)
    temp = 860.0 - 840.0 * np.exp(-t / 1000.0)
    rate = 0.84 * np.exp(-t / 1000.0)
    exact = 1000.0 * math.log(840.0 / 15.0)
    cubic = first_reaching(t, temp, 845.0, rate)
    line = first_reaching(t, temp, 845.0)
    assert cubic is not None and line is not None
    assert abs(cubic - exact) < 0.5
    assert line - exact > 3.0
    held, start = longest_run_above(t, temp, 845.0, rate)
    assert start == pytest.approx(cubic)
    assert held == pytest.approx(6000.0 - cubic)


def test_a_cubic_crossing_takes_the_first_root_and_a_run_the_last() -> None:
    # (s - 0.2)(s - 0.5)(s - 0.8) on [0, 1]: -0.08 at 0, +0.08 at 1, roots 0.2, 0.5, 0.8 (by hand);
    # slope 0.66 at both ends (its derivative is 3 s^2 - 3 s + 0.66)
    first = crossing_time(0.0, 1.0, -0.08, 0.08, 0.66, 0.66, 0.0)
    last = crossing_time(0.0, 1.0, -0.08, 0.08, 0.66, 0.66, 0.0, first=False)
    assert first == pytest.approx(0.2)
    assert last == pytest.approx(0.8)
