"""The 1-D march: nonlinear steps of plates, two-face plates and bars, every cohort marched at a step in
one vectorised solve (``march`` with a ``ChainSolver`` on the ``nodes`` of all their parts).

A cohort starts from the state the step before left: the march's own end nodes (``State.carry``) when
it was marched too, else the series evaluated at the nodes. It hands on the fine-grid profile (for a
series that follows) and its end nodes (for a march that follows).

Parts with a ``composition`` carry their phases (``phases.carried``): their nodes' tables hold the
base curve (the transformation peak cut out of cp), the phase state starts from the node temperatures
at the first step and goes on in ``State.phases``; each step reports the phases at its end.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from workers.thermal import march
from workers.thermal.group import Group, State
from workers.thermal.nodes import Law, Laws, Nodes, PartGrid
from workers.thermal.phases.carried import NodePhases, base_material
from workers.thermal.result import StepResult
from workers.thermal.series import ramp_rate
from workers.thermal.spec import FloatArray, Material, PartThermal, Step, Tolerance


def step_laws(st: Step) -> Laws:
    """The step's face laws; a step without its own lower face uses the main face's law on both faces
    (README, "The batch file")."""
    start = st.ambient_c if st.ambient_start_c is None else st.ambient_start_c
    main: Law = (st.face, start, ramp_rate(st))
    lower: Law | None = None
    if st.second_face is not None:
        if st.second_ambient_c is None:
            lower = (st.second_face, start, ramp_rate(st))
        else:
            lower = (st.second_face, st.second_ambient_c, 0.0)
    return Laws(main, lower)


def _reported(g: Group) -> tuple[str, ...]:
    return (
        ("core", "surface", "mean", "second") if g.points.second is not None else ("core", "surface", "mean")
    )


class LineMarch:
    """Marches the cohorts handed to it through one step at a time (all of them at once)."""

    def __init__(self, tol: Tolerance) -> None:
        self.tol = tol
        self._nodes: dict[tuple[int, ...], Nodes] = {}  # by the cohorts' numbers in the plan

    def nodes(self, cohorts: Sequence[tuple[int, Group]]) -> Nodes:
        key = tuple(c for c, _ in cohorts)
        if key not in self._nodes:
            mats: list[Material] = []
            for _, g in cohorts:
                mats += [_table_material(p) for p in g.parts if _table_material(p) not in mats]
            grids = [
                PartGrid(g.layout, float(length), mats.index(_table_material(p)))
                for _, g in cohorts
                for p, length in zip(g.parts, g.lengths[:, 0], strict=True)
            ]
            self._nodes[key] = Nodes(grids, mats, self.tol.intervals)
        return self._nodes[key]

    @staticmethod
    def _phases(
        nodes: Nodes, cohorts: Sequence[tuple[int, Group, State]], T0: FloatArray
    ) -> NodePhases | None:
        """The phase state at the step start: carried from the step before, or started from ``T0``."""
        parts = [p for _, g, _ in cohorts for p in g.parts]
        if all(p.composition is None for p in parts):
            return None
        fresh = NodePhases.start(
            [p.composition for p in parts],
            [base_material(p.material)[1] if p.composition is not None else 0.0 for p in parts],
            [p.material.density for p in parts],
            nodes.part,
            T0,
        )
        pieces = []
        for (_, _g, state), (_, span) in zip(
            cohorts, LineMarch._blocks(nodes, [g for _, g, _ in cohorts]), strict=True
        ):
            carried = state.phases
            if carried is not None and carried.on.size == span.stop - span.start:
                pieces.append(carried)
            else:
                pieces.append(fresh.subset(span))
        return NodePhases.join(pieces)

    def step(
        self, cohorts: Sequence[tuple[int, Group, State]], st: Step, offsets: FloatArray
    ) -> list[StepResult]:
        """One step of every cohort given (number in the plan, group, state at the step start)."""
        nodes = self.nodes([(c, g) for c, g, _ in cohorts])
        blocks = self._blocks(nodes, [g for _, g, _ in cohorts])
        starts = []
        for (_, g, state), (_, span) in zip(cohorts, blocks, strict=True):
            if state.carry is not None and state.carry.size == span.stop - span.start:
                starts.append(state.carry)
            else:
                fine = state.temperatures(nodes.xi[g.layout])
                starts.append(np.concatenate([np.concatenate([f, f[::2]]) for f in fine]))
        T0 = np.concatenate(starts)
        lengths = np.concatenate([g.lengths[:, 0] for _, g, _ in cohorts])
        alpha = np.concatenate([g.alpha_min for _, g, _ in cohorts])
        first = np.minimum((lengths / self.tol.intervals) ** 2 / alpha, offsets[0])
        phases = self._phases(nodes, cohorts, T0)
        res = march.march(
            nodes,
            step_laws(st),
            march.ChainSolver(),
            T0,
            offsets,
            self.tol.step_k,
            first,
            phases,
            self.tol.phase_change,
        )
        read = None if res.phases is None else _read_phases(nodes, res.phases)
        out = []
        for (_, g, _), (rows, span) in zip(cohorts, blocks, strict=True):
            profile = (nodes.xi[g.layout], nodes.fine_profile(res.end, rows))
            zero = np.zeros(g.P)
            ends = None if res.phases is None else res.phases.subset(span)
            out.append(
                StepResult(
                    values={name: v[rows] for name, v in res.values.items() if name in _reported(g)},
                    rates={name: v[rows] for name, v in res.rates.items() if name in _reported(g)},
                    heat=res.heat[rows],
                    bound=res.error[rows],
                    steps=res.steps[rows],
                    end=State(None, None, zero, zero.copy(), profile, res.end[span], ends),
                    phases=None if read is None else {k: v[rows] for k, v in read.items()},
                )
            )
        return out

    @staticmethod
    def _blocks(nodes: Nodes, groups: Sequence[Group]) -> list[tuple[slice, slice]]:
        """Each cohort's rows (parts) and span of flat nodes, in the order they were laid out."""
        out = []
        row = 0
        for g in groups:
            first = int(nodes.starts[row])
            last = int(nodes.starts[row + g.P]) if row + g.P < nodes.P else nodes.N
            out.append((slice(row, row + g.P), slice(first, last)))
            row += g.P
        return out


def _table_material(part: PartThermal) -> Material:
    """What the nodes' tables hold: the base curve for a steel whose phases are followed."""
    return part.material if part.composition is None else base_material(part.material)[0]


def _read_phases(nodes: Nodes, ph: NodePhases) -> dict[str, FloatArray]:
    """Fractions (P, 5) and rate at 700 degC (P,) at each part's core and surface (fine grid), nan for
    parts without phases."""
    out: dict[str, FloatArray] = {}
    for name, idx in (("core", nodes.core[0]), ("surface", nodes.surface[0])):
        on = ph.on[idx]
        out[name] = np.where(on[:, None], ph.frac[:, idx].T, np.nan)
        out[f"{name}_rate700"] = np.where(on, ph.rate700[idx], np.nan)
    return out
