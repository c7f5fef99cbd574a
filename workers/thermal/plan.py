"""The plan of a batch: which method runs each part through each step, decided once, up front.

- ``SERIES``: a linear step (constant h, no radiation, constant properties) as an exact series of modes.
- ``LINE``: a nonlinear step of a plate, two-face plate or bar, marched on a 1-D grid (``line``).
- ``SOLID``: every step of a block or short cylinder that has any nonlinear step, marched on its
  tensor grid (``solid``): a 3-D profile never has to cross between nodes and modes.

A part with a ``composition`` (a steel whose phases are followed) of a 1-D layout is marched at every
step (``LINE``), linear or not: the phases are the march's state and live on its nodes. Blocks and short
cylinders do not follow phases (the solid march does not carry them): they keep the single enthalpy
curve whatever their composition, and the result says so (README, "Known limits").

Parts of one layout that run the same method at every step form a ``Cohort``, the unit every method
works on; each method hands back the same ``StepResult`` (``result``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from enum import StrEnum

from workers.thermal.layout import Layout, layout_of
from workers.thermal.spec import PartThermal, Step


class Method(StrEnum):
    SERIES = "series"
    LINE = "line"
    SOLID = "solid"


@dataclass(frozen=True)
class Cohort:
    """Parts (indices into the batch) of one layout that run the same method at every step."""

    layout: Layout
    methods: tuple[Method, ...]  # one per step
    parts: tuple[int, ...]


def is_linear(part: PartThermal, step: Step) -> bool:
    """Constant properties and, on every face, constant h without radiation."""
    faces = [step.face] + ([step.second_face] if step.second_face is not None else [])
    return part.material.is_constant and all(f.is_linear for f in faces)


def follows_phases(layout: Layout, part: PartThermal) -> bool:
    """The part's phases are followed: it has a composition and a 1-D layout."""
    return part.composition is not None and not layout.solid


def methods_of(layout: Layout, part: PartThermal, steps: Sequence[Step]) -> tuple[Method, ...]:
    linear = [is_linear(part, st) for st in steps]
    if layout.solid:
        return tuple(Method.SERIES if all(linear) else Method.SOLID for _ in steps)
    if follows_phases(layout, part):
        return tuple(Method.LINE for _ in steps)
    return tuple(Method.SERIES if lin else Method.LINE for lin in linear)


def make_plan(parts: Sequence[PartThermal], steps: Sequence[Step]) -> list[Cohort]:
    """Cohorts in a fixed order (layout, then methods), parts in batch order within each."""
    two_face = any(st.second_face is not None for st in steps)
    members: dict[tuple[Layout, tuple[Method, ...]], list[int]] = {}
    for i, p in enumerate(parts):
        layout = layout_of(p, two_face)
        members.setdefault((layout, methods_of(layout, p, steps)), []).append(i)
    return [Cohort(layout, methods, tuple(idx)) for (layout, methods), idx in sorted(members.items())]
