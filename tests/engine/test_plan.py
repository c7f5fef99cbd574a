"""The plan: which method runs each part through each step, and the solid march as a plug-in.

These check the engine's own bookkeeping (README, "How the temperatures are computed": linear steps by
series, nonlinear steps of plates and bars by the 1-D march, blocks and short cylinders with any
nonlinear step by the solid march through their whole schedule), not physics.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import ClassVar

import numpy as np

from tests.reference.cases import CR_MO_STEEL, EUROCODE_STEEL, OIL_QUENCH, const_face
from workers.thermal import simulate
from workers.thermal.layout import Layout
from workers.thermal.plan import Method, make_plan
from workers.thermal.result import StepResult
from workers.thermal.solid import SolidMarch, TensorMarch
from workers.thermal.spec import Face, FloatArray, PartThermal, Shape, Step, Tolerance

LINEAR = Step(600.0, 860.0, const_face(150.0))
OIL = Step(300.0, 60.0, Face(OIL_QUENCH))


def part(kind: str, sizes: tuple[float, ...], steel: bool = False) -> PartThermal:
    return PartThermal(Shape(kind, sizes), EUROCODE_STEEL if steel else CR_MO_STEEL, 20.0)  # type: ignore[arg-type]


def test_methods_follow_linearity_and_layout() -> None:
    parts = [
        part("plate", (0.02,)),
        part("plate", (0.03,), steel=True),
        part("bar", (0.02,)),
        part("block", (0.02, 0.03, 0.04)),
        part("block", (0.02, 0.03, 0.04), steel=True),
        part("cylinder", (0.02, 0.05)),
    ]
    plan = make_plan(parts, [LINEAR, OIL])
    method = {i: c.methods for c in plan for i in c.parts}
    layout = {i: c.layout for c in plan for i in c.parts}
    assert method[0] == (Method.SERIES, Method.LINE)
    assert method[1] == (Method.LINE, Method.LINE)  # k(T), cp(T): every step is nonlinear
    assert method[2] == (Method.SERIES, Method.LINE)
    assert method[3] == method[5] == (Method.SOLID, Method.SOLID)  # one nonlinear step: all marched
    assert method[4] == (Method.SOLID, Method.SOLID)
    assert layout == {
        0: Layout.PLATE,
        1: Layout.PLATE,
        2: Layout.BAR,
        3: Layout.BLOCK,
        4: Layout.BLOCK,
        5: Layout.CYLINDER,
    }
    assert sorted(i for c in plan for i in c.parts) == list(range(len(parts)))
    linear_only = make_plan(parts[3:4], [LINEAR, LINEAR])
    assert linear_only[0].methods == (Method.SERIES, Method.SERIES)


def test_a_lower_face_anywhere_makes_every_plate_a_two_face_plate() -> None:
    hearth = Step(600.0, 860.0, const_face(150.0), second_face=const_face(300.0), second_ambient_c=700.0)
    plan = make_plan([part("plate", (0.02,))], [hearth, OIL])
    assert [c.layout for c in plan] == [Layout.PLATE2]
    assert plan[0].methods == (Method.SERIES, Method.LINE)


class Counting:
    """A solid marcher that hands every step to the default one and counts the calls."""

    made: ClassVar[list[tuple[Layout, int]]] = []

    def __init__(self, layout: Layout, parts: Sequence[PartThermal], tol: Tolerance) -> None:
        Counting.made.append((layout, len(parts)))
        self.inner: SolidMarch = TensorMarch(layout, parts, tol)
        self.steps = 0

    def step(self, st: Step, offsets: FloatArray) -> StepResult:
        self.steps += 1
        return self.inner.step(st, offsets)


def test_the_solid_march_is_a_plug_in() -> None:
    Counting.made = []
    parts = [part("block", (0.01, 0.015, 0.02)), part("plate", (0.01,)), part("cylinder", (0.01, 0.02))]
    steps = [Step(60.0, 860.0, const_face(150.0)), Step(20.0, 60.0, Face(OIL_QUENCH))]
    plugged = simulate(parts, steps, samples_per_step=4, solid_march=Counting)
    default = simulate(parts, steps, samples_per_step=4)
    assert sorted(Counting.made) == [(Layout.BLOCK, 1), (Layout.CYLINDER, 1)]
    for a, b in zip(plugged, default, strict=True):
        assert np.array_equal(a.core_c, b.core_c) and np.array_equal(a.bound_k, b.bound_k)
