"""Properties every solution of the heat equation has, on randomly drawn parts and schedules.

- maximum principle: no temperature leaves the range of the initial and ambient temperatures
- symmetry: a plate whose two faces are the same matches the symmetric plate; swapping the faces swaps
  the reported surfaces
- monotone approach: from a uniform start, with a constant ambient, every reported temperature moves
  monotonically towards the ambient

Each allowance is the engine's own truncation bound plus rounding: a property is exact for the series.
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from tests.engine.support import run_one
from tests.reference.cases import OIL_QUENCH
from workers.thermal.spec import Curve, Face, Material, PartThermal, Shape, Step, Trace

SETTINGS = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
SAMPLES = 10

sizes = st.floats(0.002, 0.1)
temps = st.floats(0.0, 1000.0)
htcs = st.floats(1.0, 5000.0)


@st.composite
def materials(draw: st.DrawFn) -> Material:
    return Material(
        Curve.constant(draw(st.floats(15.0, 60.0))), 7850.0, Curve.constant(draw(st.floats(400.0, 700.0)))
    )


@st.composite
def faces(draw: st.DrawFn, linear: bool = False) -> Face:
    if linear or draw(st.booleans()):
        return Face(Curve.constant(draw(htcs)))
    kind = draw(st.sampled_from(["radiation", "oil", "curve"]))
    if kind == "radiation":
        return Face(Curve.constant(draw(st.floats(0.0, 50.0))), draw(st.floats(0.1, 0.9)))
    if kind == "oil":
        return Face(OIL_QUENCH)
    lo, hi = draw(htcs), draw(htcs)
    return Face(Curve((100.0, 800.0), (lo, hi)))


@st.composite
def steps(draw: st.DrawFn) -> list[Step]:
    out = []
    for _ in range(draw(st.integers(1, 2))):
        ramp = draw(st.none() | temps)
        out.append(Step(draw(st.floats(10.0, 5000.0)), draw(temps), draw(faces()), ambient_start_c=ramp))
    return out


def span(part: PartThermal, schedule: list[Step]) -> tuple[float, float]:
    values = [part.initial_c]
    for s in schedule:
        values += [v for v in (s.ambient_c, s.ambient_start_c, s.second_ambient_c) if v is not None]
    return min(values), max(values)


def reported(tr: Trace) -> list[np.ndarray]:
    out = [tr.core_c, tr.surface_c, tr.mean_c]
    return out + [v for v in (tr.corner_c, tr.second_surface_c) if v is not None]


@SETTINGS
@given(
    kind=st.sampled_from(["plate", "bar"]),
    size=sizes,
    mat=materials(),
    initial=temps,
    schedule=steps(),
)
def test_maximum_principle(
    kind: str, size: float, mat: Material, initial: float, schedule: list[Step]
) -> None:
    part = PartThermal(Shape(kind, (size,)), mat, initial)  # type: ignore[arg-type]
    tr = run_one(part, schedule, samples=SAMPLES)
    lo, hi = span(part, schedule)
    # bound_k covers the series truncation (linear steps) and the march's grid and time-step error
    # estimates (nonlinear steps); nothing else is allowed
    allow = tr.bound_k + 1e-9 * max(hi - lo, 1.0)
    for values in reported(tr):
        below, above = lo - values, values - hi
        assert np.all(below <= allow), f"{below.max():.4g} K below the lowest of initial and ambients ({lo})"
        assert np.all(above <= allow), f"{above.max():.4g} K above the highest of initial and ambients ({hi})"


@SETTINGS
@given(size=sizes, mat=materials(), initial=temps, amb=temps, face=faces(), dur=st.floats(10.0, 5000.0))
# found by hypothesis (with the earlier substep scheme): the two layouts parted by 0.068 K at 1 s
@example(
    size=0.04035725919278245,
    mat=Material(Curve.constant(15.0), 7850.0, Curve.constant(400.0)),
    initial=640.0,
    amb=0.0,
    face=Face(OIL_QUENCH),
    dur=10.0,
)
# found by hypothesis (with the earlier substep scheme): the two layouts parted by 0.015 K at 8 s
@example(
    size=0.0625,
    mat=Material(Curve.constant(15.0), 7850.0, Curve.constant(400.0)),
    initial=143.0,
    amb=0.0,
    face=Face(OIL_QUENCH),
    dur=10.0,
)
# found by hypothesis: the two layouts part by 4e-6 K at 1 s, more than their truncation bounds allow
@example(
    size=0.0625,
    mat=Material(Curve.constant(15.0), 7850.0, Curve.constant(400.0)),
    initial=103.0,
    amb=0.0,
    face=Face(OIL_QUENCH),
    dur=10.0,
)
def test_plate_with_equal_faces_is_the_symmetric_plate(
    size: float, mat: Material, initial: float, amb: float, face: Face, dur: float
) -> None:
    part = PartThermal(Shape("plate", (size,)), mat, initial)
    sym = run_one(part, [Step(dur, amb, face)], samples=SAMPLES)
    two = run_one(part, [Step(dur, amb, face, second_face=face, second_ambient_c=amb)], samples=SAMPLES)
    assert two.second_surface_c is not None
    # The two layouts differ by their own errors only: series truncation on linear faces, the march's
    # grid and time-step estimates on nonlinear ones; both are in bound_k.
    allow = sym.bound_k + two.bound_k + 1e-9 * max(abs(amb - initial), 1.0)
    for got, want in (
        (two.surface_c, sym.surface_c),
        (two.second_surface_c, sym.surface_c),
        (two.core_c, sym.core_c),
        (two.mean_c, sym.mean_c),
    ):
        assert np.all(np.abs(got - want) <= allow), float(np.max(np.abs(got - want)))


@SETTINGS
@given(
    size=sizes,
    mat=materials(),
    initial=temps,
    amb1=temps,
    amb2=temps,
    f1=faces(linear=True),
    f2=faces(linear=True),
    dur=st.floats(10.0, 5000.0),
)
def test_swapping_faces_swaps_surfaces(
    size: float, mat: Material, initial: float, amb1: float, amb2: float, f1: Face, f2: Face, dur: float
) -> None:
    part = PartThermal(Shape("plate", (size,)), mat, initial)
    a = run_one(part, [Step(dur, amb1, f1, second_face=f2, second_ambient_c=amb2)], samples=SAMPLES)
    b = run_one(part, [Step(dur, amb2, f2, second_face=f1, second_ambient_c=amb1)], samples=SAMPLES)
    assert a.second_surface_c is not None and b.second_surface_c is not None
    allow = a.bound_k + b.bound_k + 1e-9 * max(abs(amb1 - initial), abs(amb2 - initial), 1.0)
    for got, want in (
        (a.surface_c, b.second_surface_c),
        (a.second_surface_c, b.surface_c),
        (a.core_c, b.core_c),
    ):
        assert np.all(np.abs(got - want) <= allow), float(np.max(np.abs(got - want)))


@SETTINGS
@given(
    kind=st.sampled_from(["plate", "bar"]),
    size=sizes,
    mat=materials(),
    initial=temps,
    amb=temps,
    face=faces(),
    dur=st.floats(10.0, 5000.0),
)
# found by hypothesis: heat reaches no further than about 10 mm in 10 s, so the core of this plate cannot move
@example(
    kind="plate",
    size=0.0625,
    mat=Material(Curve.constant(15.0), 7850.0, Curve.constant(400.0)),
    initial=0.0,
    amb=565.0,
    face=Face(OIL_QUENCH),
    dur=10.0,
)
def test_monotone_approach_to_a_constant_ambient(
    kind: str, size: float, mat: Material, initial: float, amb: float, face: Face, dur: float
) -> None:
    part = PartThermal(Shape(kind, (size,)), mat, initial)  # type: ignore[arg-type]
    tr = run_one(part, [Step(dur, amb, face)], samples=SAMPLES)
    direction = np.sign(amb - initial)
    allow = tr.bound_k[1:] + tr.bound_k[:-1] + 1e-9 * max(abs(amb - initial), 1.0)
    for values in reported(tr):
        moves = np.diff(values) * direction
        assert np.all(moves >= -allow), f"moves away from the ambient by {-moves.min():.4g} K"
        beyond = (values - amb) * direction
        assert np.all(beyond <= tr.bound_k + 1e-9 * max(abs(amb - initial), 1.0)), "passes the ambient"
