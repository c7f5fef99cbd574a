"""Entry point of the thermal engine: a batch of parts through one schedule, traces at common times.

``simulate`` plans the batch (``plan``: which method runs each part through each step), then runs the
schedule step by step; every method hands back a ``StepResult`` for its cohorts:

- Linear steps (constant h, no radiation, constant properties) are one exact series step each
  (``series``).
- Nonlinear steps (radiation, h(T_s), k(T), cp(T)) of plates, two-face plates and bars are marched on
  1-D grids (``line``), every such cohort of the batch in one vectorised solve. The profile passes
  between the march's nodes and the series' modes where the two kinds of step meet.
- Blocks and short cylinders with any nonlinear step are marched through their whole schedule by a
  ``SolidMarch`` (``solid``), so no 3-D profile has to cross between nodes and modes.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from workers.thermal import series
from workers.thermal.group import Group, State
from workers.thermal.line import LineMarch
from workers.thermal.plan import Cohort, Method, make_plan
from workers.thermal.result import StepResult
from workers.thermal.solid import SolidFactory, TensorMarch
from workers.thermal.spec import FloatArray, PartThermal, PhaseTrace, Step, Tolerance, Trace


def sample_times(steps: Sequence[Step], samples_per_step: int) -> tuple[FloatArray, NDArray[np.int64]]:
    """Common time grid (s from the start of the first step) and the step index of each sample."""
    times = [0.0]
    index = [0]
    start = 0.0
    for k, st in enumerate(steps):
        j = np.arange(1, samples_per_step + 1)
        times.extend(start + st.duration_s * j / samples_per_step)
        index.extend([k] * samples_per_step)
        start += st.duration_s
    return np.array(times), np.array(index, dtype=np.int64)


def _check(
    parts: Sequence[PartThermal], steps: Sequence[Step], samples_per_step: int, tol: Tolerance
) -> None:
    for name in ("intervals", "solid_intervals"):
        n = getattr(tol, name)
        if n < 4 or n % 2:
            raise ValueError(f"Tolerance.{name} must be an even number of at least 4")
    if not steps:
        raise ValueError("the schedule has no steps")
    if samples_per_step < 1:
        raise ValueError("samples_per_step must be at least 1")
    for st in steps:
        if not st.duration_s > 0:
            raise ValueError("every step needs a positive duration")
        if st.second_ambient_c is not None and st.second_face is None:
            raise ValueError("a second ambient needs a second face (how heat crosses it)")
    for p in parts:
        if any(not s > 0 for s in p.shape.half_sizes_m):
            raise ValueError("every part size must be positive")


class _Record:
    """A cohort's read-outs at every reported time, filled step by step from the methods' results."""

    def __init__(self, g: Group, n_steps: int, n: int) -> None:
        total = 1 + n * n_steps
        names = ["core", "surface", "mean"]
        names += ["corner"] if g.points.corner is not None else []
        names += ["second"] if g.points.second is not None else []
        self.out = {name: np.full((g.P, total), np.nan) for name in names}  # filled step by step
        for name in names:
            self.out[name][:, 0] = g.initial
        # rates likewise; at time zero nothing has started, the part is uniform and still
        self.rates = {name: np.full((g.P, total), np.nan) for name in names if name != "mean"}
        for v in self.rates.values():
            v[:, 0] = 0.0
        self.heat = np.zeros((g.P, total))
        self.bound = np.zeros((g.P, total))
        self.steps = np.zeros(g.P, dtype=np.int64)
        self.col = 1
        self.step = 0
        self.phases: dict[str, FloatArray] = {}  # name -> (P, steps, ...) when any step had phases
        self.n_steps = n_steps

    def add(self, r: StepResult) -> None:
        if r.phases is not None:
            for name, v in r.phases.items():
                if name not in self.phases:
                    self.phases[name] = np.full((v.shape[0], self.n_steps, *v.shape[1:]), np.nan)
                self.phases[name][:, self.step] = v
        self.step += 1
        m = r.heat.shape[1]
        cols = slice(self.col, self.col + m)
        for name, v in self.out.items():
            v[:, cols] = r.values[name]
        for name, v in self.rates.items():
            v[:, cols] = r.rates[name]
        self.heat[:, cols] = r.heat + self.heat[:, self.col - 1 : self.col]
        self.bound[:, cols] = r.bound
        self.steps += r.steps
        self.col += m

    def check(self) -> None:
        every = self.out | {f"{name} rate": v for name, v in self.rates.items()}
        unset = [name for name, v in every.items() if np.isnan(v).any()]
        if unset or self.col != self.heat.shape[1]:
            raise ArithmeticError(f"no method filled every reported time of {', '.join(unset) or 'heat'}")


def simulate(
    parts: Sequence[PartThermal],
    steps: Sequence[Step],
    *,
    samples_per_step: int = 120,
    tol: Tolerance | None = None,
    solid_march: SolidFactory = TensorMarch,
) -> list[Trace]:
    """Core, surface (and corner) temperatures of every part through every step.

    ``solid_march`` builds the marcher of blocks and short cylinders that have a nonlinear step (see
    ``solid``).
    """
    tol = tol or Tolerance()
    _check(parts, steps, samples_per_step, tol)
    time_s, step_index = sample_times(steps, samples_per_step)
    cohorts = make_plan(parts, steps)
    groups = [Group(c.layout, [parts[i] for i in c.parts], tol) for c in cohorts]
    states = [State.uniform(g.initial) for g in groups]
    records = [_Record(g, len(steps), samples_per_step) for g in groups]
    solids = {
        c: solid_march(cohort.layout, groups[c].parts, tol)
        for c, cohort in enumerate(cohorts)
        if Method.SOLID in cohort.methods
    }
    line = LineMarch(tol)
    for k, st in enumerate(steps):
        offsets = st.duration_s * np.arange(1, samples_per_step + 1) / samples_per_step
        results: dict[int, StepResult] = {}
        for c, cohort in enumerate(cohorts):
            if cohort.methods[k] == Method.SERIES:
                results[c] = series.run(groups[c], states[c], steps, k, offsets)
            elif cohort.methods[k] == Method.SOLID:
                results[c] = solids[c].step(st, offsets)
        marched = [c for c, cohort in enumerate(cohorts) if cohort.methods[k] == Method.LINE]
        if marched:
            done = line.step([(c, groups[c], states[c]) for c in marched], st, offsets)
            results.update(zip(marched, done, strict=True))
        for c, r in results.items():
            records[c].add(r)
            if r.end is not None:
                states[c] = r.end
    ambient = np.concatenate(
        [[steps[0].ambient_at(0.0)]]
        + [
            st.ambient_at(st.duration_s * np.arange(1, samples_per_step + 1) / samples_per_step)
            for st in steps
        ]
    )
    return _traces(cohorts, records, len(parts), time_s, step_index, ambient)


def _traces(
    cohorts: Sequence[Cohort],
    records: Sequence[_Record],
    n_parts: int,
    time_s: FloatArray,
    step_index: NDArray[np.int64],
    ambient: FloatArray,
) -> list[Trace]:
    traces: dict[int, Trace] = {}
    for cohort, rec in zip(cohorts, records, strict=True):
        rec.check()
        out, rates = rec.out, rec.rates
        for j, i in enumerate(cohort.parts):
            traces[i] = Trace(
                time_s=time_s,
                step_index=step_index,
                core_c=out["core"][j],
                surface_c=out["surface"][j],
                ambient_c=ambient,
                bound_k=rec.bound[j],
                mean_c=out["mean"][j],
                heat_in_j_m3=rec.heat[j],
                corner_c=out["corner"][j] if "corner" in out else None,
                second_surface_c=out["second"][j] if "second" in out else None,
                core_rate_k_s=rates["core"][j],
                surface_rate_k_s=rates["surface"][j],
                corner_rate_k_s=rates["corner"][j] if "corner" in rates else None,
                second_surface_rate_k_s=rates["second"][j] if "second" in rates else None,
                substeps=int(rec.steps[j]),
                phases=_phase_trace(rec, j),
            )
    return [traces[i] for i in range(n_parts)]


def _phase_trace(rec: _Record, j: int) -> PhaseTrace | None:
    """Part ``j``'s phases at each step end, when they were followed (every step marched with them)."""
    ph = rec.phases
    if not ph or np.isnan(ph["core"][j]).any():
        return None
    return PhaseTrace(ph["core"][j], ph["surface"][j], ph["core_rate700"][j], ph["surface_rate700"][j])
