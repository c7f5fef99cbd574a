"""The solid march: blocks and short cylinders that have any nonlinear step, through every step of their
schedule, on their own grids. This is the engine's plug-in point for solids.

``SolidMarch`` is what the engine asks of a solid marcher; ``SolidFactory`` builds one for a cohort of
blocks or of short cylinders at the start of ``simulate``. The engine then calls ``step`` once per
schedule step, in order; the marcher keeps its own state between steps (``StepResult.end`` is None)
and starts from each part's uniform ``initial_c``. Units and points as everywhere in the engine: SI,
degC; ``layout.axis_lengths`` and ``layout.points`` give each part's axes and the xi of its core,
surface and corner.

``TensorMarch`` is the default: each part on its own tensor grid of the 1-D march's nodes (``nodes.
Solid``), marched by ``march`` with a ``SparseSolver`` of its own (a shared factorization is refreshed
whenever any part in it needs it, so each part keeps one).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Protocol

import numpy as np

from workers.thermal import march
from workers.thermal.layout import AXES, Layout, axis_lengths, points
from workers.thermal.line import step_laws
from workers.thermal.nodes import Solid, SolidGrid
from workers.thermal.properties import slowest_diffusivity
from workers.thermal.result import StepResult
from workers.thermal.spec import FloatArray, PartThermal, Step, Tolerance


class SolidMarch(Protocol):
    """Marches a cohort of blocks (or of short cylinders) step by step from their initial temperature."""

    def step(self, st: Step, offsets: FloatArray) -> StepResult:
        """The next schedule step, reported at ``offsets`` (s after its start, the last its end):
        ``values`` core, surface, corner and mean, ``rates`` (dT/dt) of core, surface and corner,
        ``heat``, ``bound`` and ``steps`` per part, in the order of the parts given to the factory;
        ``end`` None."""
        ...


class SolidFactory(Protocol):
    def __call__(self, layout: Layout, parts: Sequence[PartThermal], tol: Tolerance) -> SolidMarch: ...


class TensorMarch:
    """Default solid marcher: every part on its own tensor grid with its own sparse solver."""

    def __init__(self, layout: Layout, parts: Sequence[PartThermal], tol: Tolerance) -> None:
        if not layout.solid:
            raise ValueError(f"the solid march takes blocks and short cylinders, not {layout}")
        self.tol = tol
        axes = AXES[layout]
        # short cylinders: twice the spacings, a 2-D grid is cheap
        spacings = tol.solid_intervals * (2 if len(axes) == 2 else 1)
        self.parts = []
        for p in parts:
            lengths = axis_lengths(layout, p)
            surface = points(layout, np.array([lengths]))
            grid = SolidGrid(axes, lengths, 0, tuple(float(x) for x in surface.surface[0]), spacings)
            nodes = Solid([grid], [p.material])
            T = np.full(nodes.N, p.initial_c)
            first = (min(lengths) / tol.solid_intervals) ** 2 / slowest_diffusivity(p.material)
            self.parts.append((nodes, march.SparseSolver(), T, first))

    def step(self, st: Step, offsets: FloatArray) -> StepResult:
        laws = step_laws(st)
        results = []
        for i, (nodes, solver, T, first) in enumerate(self.parts):
            res = march.march(
                nodes, laws, solver, T, offsets, self.tol.step_k, np.array([min(first, float(offsets[0]))])
            )
            self.parts[i] = (nodes, solver, res.end, first)
            results.append(res)
        names = ("core", "surface", "corner", "mean")
        return StepResult(
            values={n: np.concatenate([r.values[n] for r in results]) for n in names},
            rates={n: np.concatenate([r.rates[n] for r in results]) for n in names if n != "mean"},
            heat=np.concatenate([r.heat for r in results]),
            bound=np.concatenate([r.error for r in results]),
            steps=np.concatenate([r.steps for r in results]),
            end=None,
        )
