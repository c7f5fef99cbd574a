"""Entry point of the thermal engine: a batch of parts through one schedule, traces at common times.

Parts are grouped by layout (plate, two-face plate, bar, block, short cylinder) and each group moves
through the schedule in array operations. Linear steps (constant h, no radiation, constant properties)
are one exact series step each. Other steps are split into substeps: h and properties are frozen over a
substep at the average of their values at its two ends (predictor-corrector; measured order about 1.5
in the tolerance), and a substep is shortened until no frozen coefficient changes by more than
``Tolerance.substep`` across it.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from workers.thermal import layout
from workers.thermal.frozen import Frozen
from workers.thermal.group import Group, State
from workers.thermal.spec import FloatArray, PartThermal, Step, Tolerance, Trace

_MIN_FRACTION = 1e-9  # smallest substep as a fraction of the step
# The heat capacity of a substep is the enthalpy secant (energy-exact), so it may change five times
# further than h or k before a substep is cut (tested: same error against the reference, far fewer
# substeps).
RC_WEIGHT = 0.2
GROWTH = 2.0  # largest growth of a substep over the one before


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


def _check(parts: Sequence[PartThermal], steps: Sequence[Step], samples_per_step: int) -> None:
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
    _check(parts, steps, samples_per_step)
    time_s, step_index = sample_times(steps, samples_per_step)
    two_face = any(st.second_face is not None for st in steps)
    groups: dict[tuple[layout.Layout, int], list[int]] = {}
    for i, p in enumerate(parts):
        groups.setdefault((layout.layout_of(p, two_face), _speed_class(p)), []).append(i)
    traces: list[Trace | None] = [None] * len(parts)
    ambient = np.concatenate(
        [[steps[0].ambient_at(0.0)]]
        + [
            st.ambient_at(st.duration_s * np.arange(1, samples_per_step + 1) / samples_per_step)
            for st in steps
        ]
    )
    for (kind, _), idx in sorted(groups.items()):
        out = _run(Group(kind, [parts[i] for i in idx], tol), steps, samples_per_step, tol)
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
                substeps=int(out["substeps"][0, 0]),
            )
    return [t for t in traces if t is not None]


def _speed_class(p: PartThermal) -> int:
    """Parts whose thermal time constants are within a factor of 4 share substeps (and their cost)."""
    m = p.material
    alpha = float(m.conductivity(20.0)) / (m.density * float(m.specific_heat(20.0)))
    tc = min(p.shape.half_sizes_m) ** 2 / alpha
    return int(np.floor(np.log(max(tc, 1e-9)) / np.log(4.0)))


def _span(g: Group, steps: Sequence[Step], upto: int) -> FloatArray:
    """Largest temperature difference any profile can hold at the start of step ``upto`` (per part)."""
    temps = [g.initial]
    for st in steps[: upto + 1]:
        for v in (st.ambient_c, st.ambient_start_c, st.second_ambient_c):
            if v is not None:
                temps.append(np.full(g.P, v))
    stack = np.stack(temps)
    return np.asarray(stack.max(axis=0) - stack.min(axis=0), dtype=float)


def _run(g: Group, steps: Sequence[Step], n: int, tol: Tolerance) -> dict[str, FloatArray]:
    total = 1 + n * len(steps)
    out: dict[str, FloatArray] = {}
    state = State(None, None, g.initial.copy(), np.zeros(g.P))
    face_c = np.repeat(g.initial[:, None], len(g.faces), axis=1)
    mean_c = g.initial.copy()
    prof_c = None if g.quad_xi is None else np.repeat(g.initial[:, None], len(g.quad_xi), axis=1)
    heat_acc = np.zeros(g.P)
    substeps = 0
    col = 1

    def store(vals: dict[str, FloatArray], heat: FloatArray, cols: slice) -> None:
        for name, v in vals.items():
            if name.startswith("face"):
                continue
            out.setdefault(name, np.empty((g.P, total)))[:, cols] = v
        out.setdefault("heat", np.empty((g.P, total)))[:, cols] = heat

    for name in ("core", "surface", "mean"):
        out[name] = np.empty((g.P, total))
        out[name][:, 0] = g.initial
    if g.points.corner is not None:
        out["corner"] = np.empty((g.P, total))
        out["corner"][:, 0] = g.initial
    if g.points.second is not None:
        out["second"] = np.empty((g.P, total))
        out["second"][:, 0] = g.initial
    out["heat"] = np.zeros((g.P, total))
    out["bound"] = np.zeros((g.P, total))

    for k, st in enumerate(steps):
        specs = g.face_specs(st)
        linear = g.mats.constant and all(f.is_linear for f, _ in specs)
        dur = st.duration_s
        offsets = dur * np.arange(1, n + 1) / n
        span = _span(g, steps, k)
        rate = _ramp_rate(st)
        alpha = np.full(g.P, np.inf)
        t = 0.0
        dt = dur if linear else dur / n
        while t < dur * (1 - 1e-12):
            t1 = min(dur, t + dt)
            if dur - t1 < _MIN_FRACTION * dur:
                t1 = dur
            f0 = g.freeze(specs, face_c, mean_c, t)
            if prof_c is not None:
                f0 = Frozen(f0.h, f0.k, g.capacity(prof_c))
            alpha = np.minimum(alpha, f0.k / f0.rc)
            # fewer modes are needed as the step goes on and the high ones die out
            g.choose_modes(max(t, offsets[0]), float(span.max()), rate, alpha, None if linear else t1 - t)
            sub = g.prepare(state, f0, specs, t)
            if not linear:
                vals1 = g.evaluate(sub, np.array([t1 - t]))[0]
                face1, mean1 = _face_and_mean(g, vals1)
                prof1 = g.profile(vals1, 0)
                f1 = g.freeze(specs, face1, mean1, t1)
                if prof1 is not None:
                    f1 = Frozen(f1.h, f1.k, g.capacity(prof1))
                change = f0.change(f1, RC_WEIGHT)
                if change > tol.substep and (t1 - t) > _MIN_FRACTION * dur * 10:
                    dt = (t1 - t) * max(0.2, 0.8 * tol.substep / change)
                    continue
                rc = g.mats.secant_capacity(mean_c, mean1) if prof_c is None else g.capacity(prof_c, prof1)
                avg = Frozen(0.5 * (f0.h + f1.h), 0.5 * (f0.k + f1.k), rc)
                alpha = np.minimum(alpha, avg.k / avg.rc)
                sub = g.prepare(state, avg, specs, t)
                dt = (t1 - t) * min(GROWTH, 0.8 * tol.substep / max(change, 1e-12))
            inside = (offsets > t + 1e-12 * dur) & (offsets <= t1 + 1e-12 * dur)
            times = np.append(offsets[inside], t1) - t
            vals, heat = g.evaluate(sub, times)
            if inside.any():
                cols = np.nonzero(inside)[0] + col
                sl = slice(cols[0], cols[-1] + 1)
                store({nm: v[:, :-1] for nm, v in vals.items()}, heat[:, :-1] + heat_acc[:, None], sl)
                out["bound"][:, sl] = g.bound(offsets[inside], span, rate, alpha)
            heat_acc = heat_acc + heat[:, -1]
            face_c, mean_c = _face_and_mean(g, {nm: v[:, -1:] for nm, v in vals.items()})
            prof_c = g.profile(vals, -1)
            state = g.advance(sub, t1 - t)
            substeps += 1
            t = t1
        col += n
    out["substeps"] = np.full((1, 1), float(substeps))
    return out


def _ramp_rate(st: Step) -> float:
    """Ambient ramp rate of a step in K/s (0 when it holds)."""
    if st.ambient_start_c is None:
        return 0.0
    return (st.ambient_c - st.ambient_start_c) / st.duration_s


def _face_and_mean(g: Group, vals: dict[str, FloatArray]) -> tuple[FloatArray, FloatArray]:
    """Face-average and mean temperatures from a one-time read-out."""
    faces = np.stack([vals[f"face{i}"][:, 0] for i in range(len(g.faces))], axis=1)
    return faces, vals["mean"][:, 0]
