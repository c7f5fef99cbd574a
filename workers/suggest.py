"""The shortest duration of one schedule step at which every part passes every target of that step.

A pure function of a validated batch (no database, no queue), so the CLI, the API and a queued job call
the same thing.

How it is found:
- exact, for a step whose ambient does not ramp: what happens inside the step up to any time t does not
  depend on how long the step lasts, so one run of the schedule with the step at an upper-bound duration
  D holds every shorter step too. From that run each target gives a bound on the duration: a hold
  passes from when its point has been at temperature for the time required without a break (its
  ``hold_done_at``), a fall from when the point crosses below, a minimum temper from when the
  parameter reaches it; a stay-below, a largest difference or a maximum temper fail from when they are
  first exceeded. The answer is the largest lower bound (at least a minute), rounded up to a whole
  minute, and confirmed by one run at that duration, sampled as every run is, of the parts whose bound
  lies near the answer (parts are computed independently; the others have minutes to spare). D starts
  at twice the longer of the file's duration and the longest hold and doubles while a lower bound lies
  beyond it.
- search, for a ramped step (its ambient at time t depends on the step's length) or when the exact
  answer does not confirm: the targets are evaluated at trial durations, bracketed by doubling, then
  bisected on whole minutes.
Either way the answer is a whole minute (or, where a minute more would break an upper bound, a whole
second) at which a run of the batch passes every target of the step: never short.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np

from models import BatchSpec, PartSpec, SpecError, TargetKind
from models import limits as _limits
from models.results import SuggestBody
from workers.convert import to_part, to_step
from workers.jobs import NOTICE, SAMPLES_PER_STEP, part_checks
from workers.targets import (
    Check,
    first_above,
    first_below,
    first_reaching,
    hold_done_at,
    location_rate,
    step_window,
    tempering_parameters,
)
from workers.thermal import Step, Tolerance, Trace, simulate
from workers.wording import format_duration

__all__ = ["suggest"]

EXACT_SPACING_S = 5.0  # sample spacing of the upper-bound run, at most
EXACT_SAMPLES_MAX = 6000
MINUTE_S = 60.0
Method = Literal["exact", "search", "none"]

# A longer step helps a hold and a minimum temper; it helps a fall only while the step is shorter than
# the time allowed (the crossing itself does not move). Every other miss at one duration is a miss at
# every longer one.
# A hardness or martensite minimum is read at the step's end: a longer quench lets the austenite finish
# transforming and cools further below Ms (more martensite), so it helps those too, but the estimate at
# every shorter end is not in one run's samples: a step with such targets is searched.
_HELPED_BY_LONGER = ("hold_above", "temper_parameter_min", "hardness_min", "martensite_min")


class _Runs:
    """Runs the schedule up to the step, with the step at a trial duration, for the parts with targets in
    it (later steps cannot matter), and counts the runs."""

    def __init__(self, batch: BatchSpec, step: str, tol: Tolerance | None) -> None:
        self.batch, self.step, self.tol = batch, step, tol
        self.k = [s.name for s in batch.schedule].index(step)
        self.parts = [p for p in batch.parts if any(t.step == step for t in p.targets)]
        self.thermal = [to_part(p) for p in self.parts]
        self.steps = [to_step(s) for s in batch.schedule[: self.k + 1]]
        self.count = 0

    def traces(
        self, duration_s: float, samples: int = SAMPLES_PER_STEP, only: set[str] | None = None
    ) -> list[Trace]:
        last = self.steps[-1]
        steps = [
            *self.steps[:-1],
            Step(
                duration_s=duration_s,
                ambient_c=last.ambient_c,
                face=last.face,
                ambient_start_c=last.ambient_start_c,
                second_face=last.second_face,
                second_ambient_c=last.second_ambient_c,
            ),
        ]
        self.count += 1
        chosen = [i for i, p in enumerate(self.parts) if only is None or p.id in only]
        return simulate([self.thermal[i] for i in chosen], steps, samples_per_step=samples, tol=self.tol)

    def checks(self, duration_s: float, only: set[str] | None = None) -> list[tuple[str, Check]]:
        parts = [p for p in self.parts if only is None or p.id in only]
        return [
            (p.id, c)
            for p, tr in zip(parts, self.traces(duration_s, only=only), strict=True)
            for c in part_checks(self.batch, p, tr, self.step)
        ]

    def failures(self, duration_s: float, only: set[str] | None = None) -> list[tuple[str, Check]]:
        return [(pid, c) for pid, c in self.checks(duration_s, only) if not c.passed]


def _answer(
    step: str,
    duration_s: float | None,
    limiting: str | None,
    reason: str | None,
    runs: int,
    method: Method,
    how: str,
) -> SuggestBody:
    return {
        "step": step,
        "duration_s": None if duration_s is None else round(duration_s, 1),
        "duration": None if duration_s is None else format_duration(duration_s),
        "limiting_part": limiting,
        "reason": reason,
        "simulations": runs,
        "method": method,
        "how": how,
        "notice": NOTICE,
    }


def _whole_minutes(seconds: float) -> float:
    return MINUTE_S * math.ceil(seconds / MINUTE_S - 1e-9)


# -- exact: bounds from one run at an upper-bound duration --------------------------------------------


@dataclass(frozen=True)
class _Bound:
    """What one target says about the step's duration, read from the upper-bound run."""

    part: str
    what: str  # "core hold_above 845 degC" -- for messages
    lower: float | None = None  # the step must last at least this long
    upper: float | None = None  # ... and at most this long
    impossible: str | None = None  # no duration passes (the reason)
    beyond: bool = False  # decided only by a longer run


def _point(trace: Trace, at: str) -> np.ndarray:
    if at == "core":
        return trace.core_c
    if at == "surface":
        return trace.surface_c
    if at == "underside":
        return trace.surface_c if trace.second_surface_c is None else trace.second_surface_c
    assert trace.corner_c is not None
    return trace.corner_c


def _hottest_ambient(batch: BatchSpec, step: str) -> float:
    spec = batch.step(step)
    lower = spec.lower_face.ambient_c if spec.lower_face is not None else None
    return max(spec.ambient_c, spec.ambient_c if lower is None else lower)


def _bounds(
    part: PartSpec, step: str, k: int, trace: Trace, horizon_s: float, hottest_c: float
) -> list[_Bound]:
    t, idx = step_window(trace, k)
    points = [trace.core_c, trace.surface_c, trace.corner_c, trace.second_surface_c]
    warmest_at_end = max(float(p[idx][-1]) for p in points if p is not None)
    found: list[_Bound] = []
    for target in part.targets:
        if target.step != step:
            continue
        kind = target.kind
        temp = _point(trace, target.point)[idx]
        rates = location_rate(trace, target.point)
        rate = None if rates is None else rates[idx]
        what = f"{target.point} {kind.value}"
        if kind is TargetKind.HOLD_ABOVE:
            limit, need = target.limit_c or 0.0, target.for_s or 0.0
            done = hold_done_at(t, temp, limit, need, rate)
            if done is None and limit > hottest_c and warmest_at_end < limit:
                # with no heat made inside, a part below the limit in a furnace below it never gets there
                reason = (
                    f"{target.point} never reaches {target.hold_above}: the step's ambient is only "
                    f"{hottest_c:.0f} degC"
                )
                found.append(_Bound(part.id, what, impossible=reason))
                continue
            found.append(_Bound(part.id, what, lower=done, beyond=done is None))
        elif kind is TargetKind.STAY_BELOW:
            found.append(_Bound(part.id, what, upper=first_above(t, temp, target.limit_c or 0.0, rate)))
        elif kind is TargetKind.FALL_BELOW:
            within = target.within_s or 0.0
            crossing = first_below(t, temp, target.limit_c or 0.0, rate)
            if crossing is None and within > horizon_s:
                found.append(_Bound(part.id, what, beyond=True))
            elif crossing is None or crossing > within:
                when = "not by" if crossing is None else f"only after {format_duration(crossing)}, after"
                reason = f"{target.point} falls below {target.fall_below} {when} the {target.within} allowed"
                found.append(_Bound(part.id, what, impossible=reason))
            else:
                # a second past the crossing the point is below the limit, as the check requires
                found.append(_Bound(part.id, what, lower=crossing + 1.0))
        elif kind is TargetKind.MAX_DIFFERENCE:
            gap = np.abs(trace.core_c[idx] - temp)
            found.append(_Bound(part.id, what, upper=first_above(t, gap, target.max_difference_k or 0.0)))
        else:
            p = tempering_parameters(t, temp, target.constant_value)
            limit = target.parameter or 0.0
            if kind is TargetKind.TEMPER_PARAMETER_MIN:
                reach = first_reaching(t, p, limit)
                found.append(_Bound(part.id, what, lower=reach, beyond=reach is None))
            else:
                found.append(_Bound(part.id, what, upper=first_above(t, p, limit)))
    return found


def _exact(runs: _Runs, step: str) -> SuggestBody | None:
    """The answer from upper-bound runs, or None when it does not confirm (the search takes over)."""
    spec = runs.batch.step(step)
    holds = [t.for_s or 0.0 for p in runs.parts for t in p.targets if t.step == step and t.for_s]
    horizon = min(2.0 * max(spec.duration_s, *holds, MINUTE_S), _limits.MAX_STEP_S)
    while True:
        samples = int(min(EXACT_SAMPLES_MAX, max(SAMPLES_PER_STEP, math.ceil(horizon / EXACT_SPACING_S))))
        traces = runs.traces(horizon, samples)
        hottest = _hottest_ambient(runs.batch, step)
        bounds = [
            b
            for p, tr in zip(runs.parts, traces, strict=True)
            for b in _bounds(p, step, runs.k, tr, horizon, hottest)
        ]
        if not any(b.beyond for b in bounds) or any(b.impossible for b in bounds):
            break
        if horizon >= _limits.MAX_STEP_S:
            break
        horizon = min(2.0 * horizon, _limits.MAX_STEP_S)
    impossible = next((b for b in bounds if b.impossible), None)
    if impossible is not None:
        return _answer(
            step,
            None,
            impossible.part,
            f"{impossible.part}: {impossible.impossible}; a longer '{step}' does not change that, so no "
            f"duration of '{step}' clears every target of that step.",
            runs.count,
            "exact",
            f"one run with '{step}' at {format_duration(horizon)}",
        )
    unreached = next((b for b in bounds if b.beyond), None)
    if unreached is not None:
        return _answer(
            step,
            None,
            unreached.part,
            f"{unreached.part}: the {unreached.what} target is not met even with '{step}' at "
            f"{format_duration(horizon)}, the longest step allowed.",
            runs.count,
            "exact",
            f"runs with '{step}' up to {format_duration(horizon)}",
        )
    lowers = [b for b in bounds if b.lower is not None]
    uppers = [b for b in bounds if b.upper is not None]
    limiting = max(lowers, key=lambda b: b.lower or 0.0) if lowers else None
    exact_s = max(MINUTE_S, limiting.lower or 0.0) if limiting else MINUTE_S
    first_fail = min(uppers, key=lambda b: b.upper or 0.0) if uppers else None
    ceiling = first_fail.upper if first_fail is not None and first_fail.upper is not None else math.inf
    if exact_s > ceiling:
        assert first_fail is not None and limiting is not None
        return _answer(
            step,
            None,
            first_fail.part,
            f"{first_fail.part}: the {first_fail.what} target is missed from {format_duration(ceiling)} "
            f"into '{step}', but {limiting.part}'s {limiting.what} target needs "
            f"{format_duration(exact_s)}: no duration of '{step}' clears both.",
            runs.count,
            "exact",
            f"one run with '{step}' at {format_duration(horizon)}",
        )
    answer_s = _whole_minutes(exact_s)
    rounding = "rounded up to a whole minute"
    if answer_s > ceiling:
        answer_s, rounding = (
            float(math.ceil(exact_s)),
            "rounded up to a whole second (a minute more breaks a limit)",
        )
    # Parts are computed independently: only those with a bound near the answer can miss at it, as a
    # run samples the step (120 samples, a linear crossing between them), so only they are run again.
    near = max(2.0 * MINUTE_S, 3.0 * answer_s / SAMPLES_PER_STEP)
    close = {
        b.part
        for b in bounds
        if (b.lower is not None and b.lower > answer_s - near)
        or (b.upper is not None and b.upper < answer_s + near)
    }
    if close and runs.failures(answer_s, close):
        return None
    return _answer(
        step,
        answer_s,
        None if limiting is None else limiting.part,
        None,
        runs.count,
        "exact",
        f"exact: {exact_s:.0f} s read from one run with '{step}' at {format_duration(horizon)}, "
        f"{rounding} and confirmed by a run at {format_duration(answer_s)} of the "
        f"{len(close)} part(s) whose bound lies within {format_duration(near)} of it",
    )


# -- search: trial durations ------------------------------------------------------------------------------


def _helped(runs: _Runs, pid: str, check: Check, duration_s: float) -> bool:
    """Whether a longer step can clear this miss."""
    if check.target in _HELPED_BY_LONGER:
        return True
    if check.target != "fall_below":
        return False
    part = next(p for p in runs.parts if p.id == pid)
    return any(
        t.step == runs.step
        and t.kind == "fall_below"
        and t.point == check.at
        and duration_s < (t.within_s or 0.0)
        for t in part.targets
    )


def _worst(failed: Sequence[tuple[str, Check]]) -> tuple[str, Check]:
    """The miss to name: a hold short by the most time first, else the first miss."""
    holds = [f for f in failed if f[1].target == "hold_above"]
    return min(holds, key=lambda f: f[1].margin_value) if holds else failed[0]


def _search(runs: _Runs, step: str, why: str) -> SuggestBody:
    """Bracket by doubling from the file's duration (or bisect below it), then bisect on whole minutes."""
    at: dict[float, list[tuple[str, Check]]] = {}
    how = f"search ({why}): bisection on whole minutes"

    def improvable(d: float) -> list[tuple[str, Check]]:
        return [f for f in at[d] if _helped(runs, f[0], f[1], d)]

    def stuck(d: float) -> SuggestBody:
        pid, c = next(f for f in at[d] if not _helped(runs, f[0], f[1], d))
        reason = (
            f"{pid}: {c.message}. A longer '{step}' cannot clear a {c.target} target, so no duration of "
            f"'{step}' clears every target of that step."
        )
        return _answer(step, None, pid, reason, runs.count, "search", how)

    limit_s = _limits.MAX_STEP_S
    hi = _whole_minutes(runs.batch.step(step).duration_s)
    at[hi] = runs.failures(hi)
    if improvable(hi):
        lo = hi
        while improvable(lo):
            if len(improvable(lo)) < len(at[lo]):
                return stuck(lo)  # both kinds miss: shorter and longer both fail
            if lo >= limit_s:
                pid, c = _worst(improvable(lo))
                longest = format_duration(lo)
                reason = f"{pid}: {c.message} even with '{step}' at {longest}, the longest step allowed"
                return _answer(step, None, pid, reason, runs.count, "search", how)
            hi = min(2.0 * lo, limit_s)
            at[hi] = runs.failures(hi)
            if not improvable(hi):
                break
            lo = hi
    else:
        lo = MINUTE_S
        if lo < hi:
            at[lo] = runs.failures(lo)
            if not improvable(lo):
                hi = lo
    while hi - lo > MINUTE_S:
        mid = _whole_minutes(0.5 * (lo + hi))
        mid = mid if mid < hi else hi - MINUTE_S
        at[mid] = runs.failures(mid)
        if improvable(mid):
            lo = mid
        else:
            hi = mid
    if at[hi]:
        return stuck(hi)
    limiting = _worst(improvable(lo))[0] if lo in at and improvable(lo) else None
    return _answer(step, hi, limiting, None, runs.count, "search", how)


def suggest(
    batch: BatchSpec, step: str, *, tol: Tolerance | None = None, method: Literal["auto", "search"] = "auto"
) -> SuggestBody:
    """The shortest duration of ``step`` (a whole minute) at which every part passes every target of it.

    ``method="search"`` skips the exact reading (for comparisons). When no duration up to the product
    limit clears the targets, ``duration_s`` is None and ``reason`` says why; when no part has a target
    in the step, ``method`` is "none" and there is nothing to clear.
    """
    names = [s.name for s in batch.schedule]
    if step not in names:
        raise SpecError.single(f"no step named '{step}' in the schedule; steps: {', '.join(names)}", "step")
    runs = _Runs(batch, step, tol)
    if not runs.parts:
        return _answer(
            step,
            None,
            None,
            f"no part has a target in step '{step}': there is nothing to clear",
            0,
            "none",
            "no run needed",
        )
    spec = batch.step(step)
    if spec.ambient_start_c is not None and spec.ambient_start_c != spec.ambient_c:
        return _search(runs, step, "the step ramps, so its history depends on its length")
    if any(t.is_phase for p in runs.parts for t in p.targets if t.step == step):
        return _search(runs, step, "a hardness or martensite target is read at the step's end")
    if method == "auto":
        found = _exact(runs, step)
        if found is not None:
            return found
        return _search(runs, step, "the exact reading did not confirm")
    return _search(runs, step, "asked for")
