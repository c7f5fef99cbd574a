"""Linear steps by exact series: one series step per schedule step, read out at every reported time.

The group's state is re-expanded on the step's modes (``Group.prepare``), evolved exactly (ramps
included) and read out; the truncation bound of the kept modes is the reported error bound.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from workers.thermal.group import Group, State
from workers.thermal.result import POINTS, RATE_POINTS, StepResult
from workers.thermal.spec import FloatArray, Step


def ramp_rate(step: Step) -> float:
    """Ambient ramp rate of a step in K/s (0 when it holds)."""
    if step.ambient_start_c is None:
        return 0.0
    return (step.ambient_c - step.ambient_start_c) / step.duration_s


def span(g: Group, steps: Sequence[Step], upto: int) -> FloatArray:
    """Largest temperature difference any profile can hold at the start of step ``upto`` (per part)."""
    temps = [g.initial]
    for st in steps[: upto + 1]:
        for v in (st.ambient_c, st.ambient_start_c, st.second_ambient_c):
            if v is not None:
                temps.append(np.full(g.P, v))
    stack = np.stack(temps)
    return np.asarray(stack.max(axis=0) - stack.min(axis=0), dtype=float)


def run(g: Group, state: State, steps: Sequence[Step], k: int, offsets: FloatArray) -> StepResult:
    """Step ``k`` of the schedule from ``state``, read out at ``offsets`` (s after the step start)."""
    st = steps[k]
    specs = g.face_specs(st)
    co = g.coefficients(specs)
    alpha = co.k / co.rc
    reach = span(g, steps, k)
    rate = ramp_rate(st)
    g.choose_modes(float(offsets[0]), float(reach.max()), rate, alpha)
    sub = g.prepare(state, co, specs)
    vals, heat, rates = g.evaluate(sub, offsets)
    return StepResult(
        values={name: v for name, v in vals.items() if name in POINTS},
        rates={name: v for name, v in rates.items() if name in RATE_POINTS},
        heat=heat,
        bound=g.bound(offsets, reach, rate, alpha),
        steps=np.ones(g.P, dtype=np.int64),
        end=g.advance(sub, st.duration_s),
    )
