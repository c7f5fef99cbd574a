"""Entry point of the thermal engine: a batch of parts through one schedule, traces at common times.

Parts are grouped by layout (plate, two-face plate, bar, block, short cylinder) and each group moves
through the schedule in array operations, step by step:

- Linear steps (constant h, no radiation, constant properties) are one exact series step each.
- Nonlinear steps (radiation, h(T_s), k(T), cp(T)) of plates, two-face plates and bars are marched by
  an implicit finite-volume scheme (``march``), all such parts of the batch in one flat system. The
  profile passes between the march's nodes and the series' modes where the two kinds of step meet.
- Blocks and short cylinders with any nonlinear step are marched on tensor grids through the whole
  schedule (their linear steps too), so no 3-D profile has to cross between nodes and modes.

Earlier versions froze h and the properties, uniform over the section, over substeps and chained
series: that cannot place a latent-heat peak or a steep k(T) gradient moving through a part in a
quench (20-120 K off the reference), which is why nonlinear steps are marched.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from workers.thermal import layout, march
from workers.thermal.group import Group, State
from workers.thermal.nodes import Kind, Laws, Nodes, PartGrid, Solid, SolidGrid
from workers.thermal.spec import FloatArray, Material, PartThermal, Step, Tolerance, Trace


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


def simulate(
    parts: Sequence[PartThermal],
    steps: Sequence[Step],
    *,
    samples_per_step: int = 120,
    tol: Tolerance | None = None,
) -> list[Trace]:
    """Core, surface (and corner) temperatures of every part through every step."""
    tol = tol or Tolerance()
    _check(parts, steps, samples_per_step, tol)
    time_s, step_index = sample_times(steps, samples_per_step)
    two_face = any(st.second_face is not None for st in steps)
    # One group per layout. Blocks and short cylinders with any nonlinear step are marched through the
    # whole schedule, each on its own: their sparse factorization is refreshed whenever any part in it
    # needs it, so a shared one costs more per part as the batch grows (measured: 12 s for one block,
    # 23 s per block for ten together).
    groups: dict[tuple[layout.Layout, int], list[int]] = {}
    for i, p in enumerate(parts):
        kind = layout.layout_of(p, two_face)
        alone = kind in SOLIDS and not all(_linear(p, st) for st in steps)
        groups.setdefault((kind, i if alone else -1), []).append(i)
    runners = [
        (_Series(Group(kind, [parts[i] for i in idx], tol), len(steps), samples_per_step, tol), idx)
        for (kind, _), idx in sorted(groups.items())
    ]
    marcher = _Marcher(tol)
    solid = [r for r, _ in runners if r.g.kind in SOLIDS and not all(r.linear(st) for st in steps)]
    for k, st in enumerate(steps):
        lines: list[_Series] = []
        for r, _ in runners:
            if r in solid:
                continue
            if r.g.kind in MARCHED and not r.linear(st):
                lines.append(r)
            else:
                r.step(k, st, steps)
        for pending in [lines] + [[r] for r in solid]:
            if pending:
                marcher.step(pending, st, samples_per_step)
    ambient = np.concatenate(
        [[steps[0].ambient_at(0.0)]]
        + [
            st.ambient_at(st.duration_s * np.arange(1, samples_per_step + 1) / samples_per_step)
            for st in steps
        ]
    )
    traces: list[Trace | None] = [None] * len(parts)
    for r, idx in runners:
        out = r.out
        unset = [name for name, v in out.items() if np.isnan(v).any()]
        if unset:
            raise ArithmeticError(f"no method filled every reported time of {', '.join(unset)}")
        for j, i in enumerate(idx):
            traces[i] = Trace(
                time_s=time_s,
                step_index=step_index,
                core_c=out["core"][j],
                surface_c=out["surface"][j],
                ambient_c=ambient,
                bound_k=out["bound"][j],
                mean_c=out["mean"][j],
                heat_in_j_m3=out["heat"][j],
                corner_c=out["corner"][j] if "corner" in out else None,
                second_surface_c=out["second"][j] if "second" in out else None,
                substeps=int(r.substeps[j]),
            )
    return [t for t in traces if t is not None]


def _linear(p: PartThermal, st: Step) -> bool:
    """Whether a step is linear for a part: constant properties and constant h without radiation."""
    faces = [st.face] + ([st.second_face] if st.second_face is not None else [])
    return p.material.is_constant and all(f.is_linear for f in faces)


def _span(g: Group, steps: Sequence[Step], upto: int) -> FloatArray:
    """Largest temperature difference any profile can hold at the start of step ``upto`` (per part)."""
    temps = [g.initial]
    for st in steps[: upto + 1]:
        for v in (st.ambient_c, st.ambient_start_c, st.second_ambient_c):
            if v is not None:
                temps.append(np.full(g.P, v))
    stack = np.stack(temps)
    return np.asarray(stack.max(axis=0) - stack.min(axis=0), dtype=float)


class _Series:
    """One group of parts through the schedule: its linear steps by exact series (``step``), the others
    handed to the march. Holds the group's read-outs (name -> (P, samples)) and its series state."""

    def __init__(self, g: Group, n_steps: int, n: int, tol: Tolerance) -> None:
        self.g = g
        self.n = n
        self.tol = tol
        total = 1 + n * n_steps
        self.out: dict[str, FloatArray] = {}
        names = ["core", "surface", "mean"]
        names += ["corner"] if g.points.corner is not None else []
        names += ["second"] if g.points.second is not None else []
        for name in names:
            self.out[name] = np.full((g.P, total), np.nan)  # columns are filled step by step
            self.out[name][:, 0] = g.initial
        self.out["heat"] = np.zeros((g.P, total))
        self.out["bound"] = np.zeros((g.P, total))
        self.state = State(None, None, g.initial.copy(), np.zeros(g.P))
        self.heat_acc = np.zeros(g.P)
        self.substeps = np.zeros(g.P, dtype=np.int64)
        self.col = 1

    def linear(self, st: Step) -> bool:
        return all(_linear(p, st) for p in self.g.parts)

    def store(self, vals: dict[str, FloatArray], heat: FloatArray, cols: slice) -> None:
        for name, v in vals.items():
            if name in self.out:
                self.out[name][:, cols] = v
        self.out["heat"][:, cols] = heat

    def step(self, k: int, st: Step, steps: Sequence[Step]) -> None:
        """One linear step: a single exact series step, read out at every reported time."""
        g, n = self.g, self.n
        assert self.linear(st)
        specs = g.face_specs(st)
        offsets = st.duration_s * np.arange(1, n + 1) / n
        span = _span(g, steps, k)
        rate = _ramp_rate(st)
        # h, k and rho*c are constant here: any temperature reads them
        fr = g.freeze(specs, np.repeat(g.initial[:, None], len(g.faces), axis=1), g.initial, 0.0)
        alpha = fr.k / fr.rc
        g.choose_modes(offsets[0], float(span.max()), rate, alpha)
        sub = g.prepare(self.state, fr, specs, 0.0)
        vals, heat = g.evaluate(sub, offsets)
        cols = slice(self.col, self.col + n)
        self.store(vals, heat + self.heat_acc[:, None], cols)
        self.out["bound"][:, cols] = g.bound(offsets, span, rate, alpha)
        self.heat_acc = self.heat_acc + heat[:, -1]
        self.state = g.advance(sub, st.duration_s)
        self.substeps += 1
        self.col += n


MARCHED = ("plate", "plate2", "bar")
SOLIDS = ("block", "cylinder")
SOLID_AXES: dict[str, tuple[Kind, ...]] = {
    "block": ("plate", "plate", "plate"),
    "cylinder": ("bar", "plate"),
}


class _Marcher:
    """Marches the nonlinear steps: of the 1-D groups all their parts at once, of each block or short
    cylinder the whole schedule (see ``march``).

    Between consecutive marched steps the flat node temperatures (both grids) carry over; after a
    series step they are rebuilt from the series, and a series step after a marched one starts from the
    fine-grid profile (``State.profile``).
    """

    def __init__(self, tol: Tolerance) -> None:
        self.tol = tol
        self.nodes: dict[tuple[int, ...], Nodes] = {}
        # per set of runners: end node temperatures of its last marched step and the states it left
        self.last: dict[tuple[int, ...], tuple[FloatArray, list[State]]] = {}

    def _nodes(self, runners: Sequence[_Series]) -> Nodes:
        key = tuple(id(r) for r in runners)
        if key in self.nodes:
            return self.nodes[key]
        mats: list[Material] = []
        for r in runners:
            for p in r.g.parts:
                if p.material not in mats:
                    mats.append(p.material)
        if runners[0].g.kind in SOLIDS:
            solids = []
            for r in runners:
                axes = SOLID_AXES[r.g.kind]
                for j, p in enumerate(r.g.parts):
                    lengths = tuple(float(x) for x in r.g.lengths[j])
                    surface = tuple(float(x) for x in r.g.points.surface[j])
                    spacings = self.tol.solid_intervals * (2 if len(axes) == 2 else 1)  # cylinders: twice
                    solids.append(SolidGrid(axes, lengths, mats.index(p.material), surface, spacings))
            self.nodes[key] = Solid(solids, mats)
        else:
            grids = []
            for r in runners:
                for p, length in zip(r.g.parts, r.g.lengths[:, 0], strict=True):
                    grids.append(PartGrid(r.g.kind, float(length), mats.index(p.material)))  # type: ignore[arg-type]
            self.nodes[key] = Nodes(grids, mats, self.tol.intervals)
        return self.nodes[key]

    def step(self, runners: Sequence[_Series], st: Step, n: int) -> None:
        nodes = self._nodes(runners)
        key = tuple(id(r) for r in runners)
        last = self.last.get(key)
        if last is not None and all(r.state is s for r, s in zip(runners, last[1], strict=True)):
            T0 = last[0]
        elif isinstance(nodes, Solid):
            # marched from the first step on: the start is uniform
            T0 = np.concatenate([r.g.initial for r in runners])[nodes.part]
        else:
            profiles = [r.g.temperatures(r.state, nodes.xi[r.g.kind]) for r in runners]  # type: ignore[index]
            T0 = nodes.fill([row for prof in profiles for row in prof])
        start = st.ambient_c if st.ambient_start_c is None else st.ambient_start_c
        main = (st.face, start, _ramp_rate(st))
        # a step without its own lower face uses the main face's law on both faces of a two-face plate
        lower = None
        if st.second_face is not None:
            if st.second_ambient_c is None:
                lower = (st.second_face, start, _ramp_rate(st))
            else:
                lower = (st.second_face, st.second_ambient_c, 0.0)
        offsets = st.duration_s * np.arange(1, n + 1) / n
        lengths = np.concatenate([r.g.lengths.min(axis=1) for r in runners])
        alpha = np.concatenate([r.g.alpha_min for r in runners])
        spacings = self.tol.solid_intervals if isinstance(nodes, Solid) else self.tol.intervals
        first = np.minimum((lengths / spacings) ** 2 / alpha, offsets[0])
        res = march.march(nodes, Laws(main, lower), T0, offsets, self.tol.step_k, first)
        states = []
        row = 0
        for r in runners:
            P = r.g.P
            rows = slice(row, row + P)
            cols = slice(r.col, r.col + n)
            for name, v in res.values.items():
                if name in r.out:
                    r.out[name][:, cols] = v[rows]
            r.out["heat"][:, cols] = res.heat[rows] + r.heat_acc[:, None]
            r.out["bound"][:, cols] = res.error[rows]
            r.heat_acc = r.heat_acc + res.heat[rows, -1]
            r.substeps += res.steps[rows]
            r.col += n
            row += P
            if isinstance(nodes, Solid):
                states.append(r.state)
                continue
            xi = nodes.xi[r.g.kind]  # type: ignore[index]
            prof = nodes.fine_profile(res.end, rows)
            zero = np.zeros(P)
            r.state = State(None, None, zero, zero.copy(), (xi, prof))
            states.append(r.state)
        self.last[key] = (res.end, states)


def _ramp_rate(st: Step) -> float:
    """Ambient ramp rate of a step in K/s (0 when it holds)."""
    if st.ambient_start_c is None:
        return 0.0
    return (st.ambient_c - st.ambient_start_c) / st.duration_s
