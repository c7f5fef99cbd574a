"""Target checks on computed traces: did a part hold, stay below, cool in time, temper enough?

Pure numpy and small dataclasses. Every checking function takes SI values (seconds, degC, kelvin
differences) for one location within one step; ``evaluate`` applies a ``Target`` to a ``Trace`` and
returns a ``Check`` whose texts carry units for people (degC, K, s/min/h).

Conventions (each is a choice a reviewer may want to know):
- A step's window runs from its start (the last sample of the step before, or time zero) to its end.
- Between samples temperatures are linear, so crossings are interpolated linearly.
- hold_above counts the longest continuous time at or above the temperature, starting when the location
  reaches it, not when the furnace does (common practice: soak counts from the part).
- The tempering parameter is Hollomon-Jaffe P = T (C + log10 t), T in kelvin, t in hours (read: the
  Hollomon-Jaffe tempering parameter, heat-treating references), summed over the real history by
  equivalent time.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from models.results import CheckBody, FlagBody
from workers.thermal import Trace
from workers.thermal.constants import KELVIN

FloatArray = NDArray[np.float64]
Kind = Literal[
    "hold_above", "stay_below", "fall_below", "max_difference", "temper_parameter_min", "temper_parameter_max"
]
Point = Literal["core", "surface", "corner", "underside"]
MissSpans = tuple[tuple[float, float], ...]
# Targets whose value is a temperature on the trace's own axis (a chart draws them as a line).
TEMPERATURE_KINDS: tuple[str, ...] = ("hold_above", "stay_below", "fall_below")

HOUR_S = 3600.0

__all__ = [
    "TEMPERATURE_KINDS",
    "Check",
    "Target",
    "evaluate",
    "first_below",
    "format_duration",
    "format_temperature",
    "hold_time",
    "longest_run_above",
    "max_difference",
    "miss_spans",
    "peak",
    "step_window",
    "tempering_parameter",
]


# -- formatting ---------------------------------------------------------------------------------------


def _trim(x: float, digits: int) -> str:
    text = f"{x:.{digits}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def format_duration(seconds: float, signed: bool = False) -> str:
    """A time as a shop floor says it: "45 s", "12.5 min", "2 h 05 min"; a sign on request."""
    sign = ("+" if seconds >= 0 else "-") if signed else ("-" if seconds < 0 else "")
    s = abs(seconds)
    if s < 120.0:
        body = f"{_trim(s, 0)} s"
    elif s < 100 * 60.0:
        body = f"{_trim(s / 60.0, 1)} min"
    else:
        hours, minutes = divmod(round(s / 60.0), 60)
        body = f"{hours} h {minutes:02d} min"
    return sign + body


def format_temperature(temp_c: float) -> str:
    return f"{_trim(temp_c, 1)} degC"


def _kelvin_delta(k: float, signed: bool = False) -> str:
    text = _trim(k, 1)
    return f"{'+' if signed and k >= 0 else ''}{text} K"


def _parameter(p: float, signed: bool = False) -> str:
    return f"{'+' if signed and p >= 0 else ''}{p:.0f}"


# -- the checks on arrays -----------------------------------------------------------------------------


def step_window(trace: Trace, step_index: int) -> tuple[FloatArray, NDArray[np.intp]]:
    """Sample indices of a step (its start sample included) and their time since the step started."""
    idx = np.nonzero(trace.step_index == step_index)[0]
    if idx.size == 0:
        raise ValueError(f"the trace has no samples of step {step_index}")
    if idx[0] > 0:
        idx = np.concatenate([[idx[0] - 1], idx])
    t = np.asarray(trace.time_s[idx] - trace.time_s[idx[0]], dtype=float)
    return t, idx


def longest_run_above(t: FloatArray, temp: FloatArray, limit_c: float) -> tuple[float, float | None]:
    """Longest continuous time at or above ``limit_c`` and when that run started (None: never reached).

    Linear between samples: a crossing inside an interval starts or ends a run at the interpolated time.
    """
    best, best_start = 0.0, None
    run, run_start = 0.0, None
    for i in range(len(t) - 1):
        t0, t1, a, b = t[i], t[i + 1], temp[i], temp[i + 1]
        up0, up1 = a >= limit_c, b >= limit_c
        cross = t0 + (limit_c - a) / (b - a) * (t1 - t0) if up0 != up1 else t0
        if up0 and up1:
            if run_start is None:
                run_start = t0
            run += t1 - t0
        elif up0:  # drops below inside the interval: the run ends at the crossing
            if run_start is None:
                run_start = t0
            run += cross - t0
        elif up1:  # reaches the limit inside the interval: a new run starts at the crossing
            run, run_start = t1 - cross, cross
        if run_start is not None and run >= best:
            best, best_start = run, run_start
        if not up1:
            run, run_start = 0.0, None
    if best_start is None and len(t) and temp[0] >= limit_c:
        best_start = float(t[0])
    return float(best), None if best_start is None else float(best_start)


def hold_time(t: FloatArray, temp: FloatArray, limit_c: float) -> float:
    """Longest continuous time (s) at or above ``limit_c``."""
    return longest_run_above(t, temp, limit_c)[0]


def peak(temp: FloatArray) -> float:
    return float(np.max(temp))


def first_below(t: FloatArray, temp: FloatArray, limit_c: float) -> float | None:
    """First time the location is below ``limit_c`` (linear crossing); None if it never is."""
    below = np.nonzero(temp < limit_c)[0]
    if below.size == 0:
        return None
    i = int(below[0])
    if i == 0:
        return float(t[0])
    a, b = temp[i - 1], temp[i]
    return float(t[i - 1] + (limit_c - a) / (b - a) * (t[i] - t[i - 1]))


def max_difference(core: FloatArray, other: FloatArray) -> float:
    """Largest |core - other| (K) over the samples."""
    return float(np.max(np.abs(core - other)))


def tempering_parameter(t: FloatArray, temp_c: FloatArray, constant: float) -> float:
    """Hollomon-Jaffe P of a non-isothermal history (T in K, t in h), by equivalent-time summation.

    State: log10 of the equivalent time at a reference temperature (the history's peak). For each
    sample interval at its mean temperature T_i, the state converts to the time t_i at T_i giving the
    same P, the interval's length is added, and the result converts back. An isothermal hold gives
    exactly T (C + log10 t). Logarithms keep cold intervals (tiny equivalent times) from underflowing.
    """
    t_ref = float(np.max(temp_c)) + KELVIN
    log_ref = -math.inf  # nothing accumulated yet
    for i in range(len(t) - 1):
        dt_h = (t[i + 1] - t[i]) / HOUR_S
        if dt_h <= 0.0:
            continue
        t_i = 0.5 * (temp_c[i] + temp_c[i + 1]) + KELVIN
        log_here = -math.inf if log_ref == -math.inf else (t_ref / t_i) * (constant + log_ref) - constant
        log_dt = math.log10(dt_h)
        hi, lo = max(log_here, log_dt), min(log_here, log_dt)
        log_sum = hi + math.log10(1.0 + 10.0 ** (lo - hi)) if lo > -math.inf else hi
        log_ref = (t_i / t_ref) * (constant + log_sum) - constant
    if log_ref == -math.inf:
        raise ValueError("a tempering parameter needs a history of positive length")
    return t_ref * (constant + log_ref)


# -- targets and their checks -------------------------------------------------------------------------


@dataclass(frozen=True)
class Target:
    """One target in SI, as the checks take it. ``limit`` is degC, K or P by kind; ``time_s`` is the
    hold's ``for`` or the fall's ``within``; ``constant`` the Hollomon-Jaffe C."""

    step: str
    step_index: int
    kind: Kind
    at: Point
    limit: float
    time_s: float | None = None
    constant: float = 20.0


@dataclass(frozen=True)
class Check:
    """A target's outcome: texts with units for people, ``margin_value`` in ``margin_unit`` for programs.

    ``margin`` is signed: positive is room to spare, negative is what the target was missed by.
    """

    step: str
    at: str
    target: str
    passed: bool
    required: str
    achieved: str
    margin: str
    margin_value: float
    margin_unit: str
    message: str
    limit: float  # the target's own value: degC, K or P by kind
    misses: MissSpans = ()

    def flag_dict(self) -> FlagBody:
        """The contract's flag: everything but the pass marker."""
        return FlagBody(
            step=self.step,
            at=self.at,
            target=self.target,
            required=self.required,
            achieved=self.achieved,
            margin=self.margin,
            margin_value=self.margin_value,
            margin_unit=self.margin_unit,
            message=self.message,
        )

    def as_dict(self) -> CheckBody:
        """The check as stored, with ``limit`` and the ``misses`` spans the charts draw."""
        return CheckBody(
            step=self.step,
            at=self.at,
            target=self.target,
            passed=self.passed,
            required=self.required,
            achieved=self.achieved,
            margin=self.margin,
            margin_value=self.margin_value,
            margin_unit=self.margin_unit,
            message=self.message,
            limit=self.limit,
            misses=[[a, b] for a, b in self.misses],
        )


def _location(trace: Trace, at: Point) -> FloatArray:
    if at == "core":
        return trace.core_c
    if at == "surface":
        return trace.surface_c
    if at == "underside":
        # a plate whose schedule gives no lower face exchanges alike on both faces: its underside is its
        # surface
        return trace.surface_c if trace.second_surface_c is None else trace.second_surface_c
    if trace.corner_c is None:
        raise ValueError("this part has no corner (blocks and short cylinders only)")
    return trace.corner_c


def _make(
    target: Target, passed: bool, required: str, achieved: str, margin: tuple[float, str, str], message: str
) -> Check:
    value, unit, text = margin
    return Check(
        target.step,
        target.at,
        target.kind,
        bool(passed),
        required,
        achieved,
        text,
        float(value),
        unit,
        message,
        target.limit,
    )


def _time_margin(seconds: float) -> tuple[float, str, str]:
    return seconds, "s", format_duration(seconds, signed=True)


def _temp_margin(kelvin: float) -> tuple[float, str, str]:
    return kelvin, "K", _kelvin_delta(kelvin, signed=True)


def _hold(target: Target, t: FloatArray, temp: FloatArray) -> Check:
    need = target.time_s or 0.0
    held, start = longest_run_above(t, temp, target.limit)
    lim = format_temperature(target.limit)
    required = f">= {lim} for {format_duration(need)}"
    ok = held >= need
    if start is None:
        achieved = f"never reached {lim} (peak {format_temperature(peak(temp))})"
        msg = (
            f"{target.at} never reached {lim} in {target.step}: peak {format_temperature(peak(temp))}, "
            f"{format_duration(need)} at or above it required"
        )
    else:
        achieved = f"{format_duration(held)} from {format_duration(start)} into {target.step}"
        msg = (
            f"{target.at} held at or above {lim} for {format_duration(held)} of the required "
            f"{format_duration(need)}"
            if not ok
            else f"{target.at} held at or above {lim} for {format_duration(held)} "
            f"({format_duration(need)} required)"
        )
    return _make(target, ok, required, achieved, _time_margin(held - need), msg)


def _stay(target: Target, temp: FloatArray) -> Check:
    top = peak(temp)
    lim = format_temperature(target.limit)
    ok = top <= target.limit
    margin = target.limit - top
    msg = (
        f"{target.at} peaked at {format_temperature(top)}, {_kelvin_delta(-margin)} over the {lim} limit"
        if not ok
        else f"{target.at} peaked at {format_temperature(top)}, {_kelvin_delta(margin)} under {lim}"
    )
    return _make(target, ok, f"<= {lim}", f"peak {format_temperature(top)}", _temp_margin(margin), msg)


def _fall(target: Target, t: FloatArray, temp: FloatArray) -> Check:
    within = target.time_s or 0.0
    lim = format_temperature(target.limit)
    required = f"< {lim} within {format_duration(within)}"
    when = first_below(t, temp, target.limit)
    if when is None:
        # never below in the step: say how far above the limit it still was at the deadline
        at_deadline = float(np.interp(min(within, float(t[-1])), t, temp))
        margin = _temp_margin(target.limit - at_deadline)
        achieved = f"still {format_temperature(float(temp[-1]))} at the end of {target.step}"
        msg = (
            f"{target.at} never fell below {lim} in {target.step}; at {format_duration(within)} it was "
            f"{format_temperature(at_deadline)}"
        )
        return _make(target, False, required, achieved, margin, msg)
    ok = when <= within
    when_text, within_text = format_duration(when), format_duration(within)
    msg = (
        f"{target.at} fell below {lim} after {when_text} ({within_text} allowed)"
        if ok
        else f"{target.at} fell below {lim} only after {when_text}, {within_text} allowed"
    )
    return _make(target, ok, required, f"after {format_duration(when)}", _time_margin(within - when), msg)


def _difference(target: Target, core: FloatArray, other: FloatArray) -> Check:
    worst = max_difference(core, other)
    ok = worst <= target.limit
    margin = target.limit - worst
    msg = f"core-{target.at} difference reached {_kelvin_delta(worst)}" + (
        f", over the {_kelvin_delta(target.limit)} limit"
        if not ok
        else f" (limit {_kelvin_delta(target.limit)})"
    )
    return _make(
        target,
        ok,
        f"<= {_kelvin_delta(target.limit)}",
        f"{_kelvin_delta(worst)} at most",
        _temp_margin(margin),
        msg,
    )


def _temper(target: Target, t: FloatArray, temp: FloatArray) -> Check:
    p = tempering_parameter(t, temp, target.constant)
    minimum = target.kind == "temper_parameter_min"
    margin = p - target.limit if minimum else target.limit - p
    ok = margin >= 0.0
    word = "minimum" if minimum else "maximum"
    required = f"P {'>=' if minimum else '<='} {_parameter(target.limit)} (C = {_trim(target.constant, 2)})"
    relation = "meets" if ok else ("below" if minimum else "above")
    msg = (
        f"{target.at} tempering parameter {_parameter(p)}, {relation} the {word} {_parameter(target.limit)} "
        f"(P = T[K] (C + log10 t[h]), C = {_trim(target.constant, 2)})"
    )
    return _make(
        target, ok, required, f"P {_parameter(p)}", (margin, "", _parameter(margin, signed=True)), msg
    )


def _check(target: Target, t: FloatArray, idx: NDArray[np.intp], trace: Trace) -> Check:
    if target.kind == "max_difference":
        return _difference(target, trace.core_c[idx], _location(trace, target.at)[idx])
    temp = _location(trace, target.at)[idx]
    if target.kind == "hold_above":
        return _hold(target, t, temp)
    if target.kind == "stay_below":
        return _stay(target, temp)
    if target.kind == "fall_below":
        return _fall(target, t, temp)
    return _temper(target, t, temp)


def _runs(time_s: FloatArray, bad: NDArray[np.bool_]) -> list[tuple[float, float]]:
    """Contiguous runs of ``bad`` samples as (first time, last time)."""
    edges = np.diff(np.concatenate([[0], bad.astype(np.int8), [0]]))
    starts, ends = np.nonzero(edges == 1)[0], np.nonzero(edges == -1)[0] - 1
    return [(float(time_s[a]), float(time_s[b])) for a, b in zip(starts, ends, strict=True)]


def miss_spans(target: Target, check: Check, t: FloatArray, idx: NDArray[np.intp], trace: Trace) -> MissSpans:
    """Where on the trace (seconds from time zero) a missed temperature target is not met.

    For a hold, the samples of the step below the temperature; for stay_below, those above it; for a
    fall, those still above it from the time allowed to the end of the step. A miss with no such sample
    (a hold broken into runs each too short) spans its whole step. Other kinds, and passed checks, have
    none: a difference or a tempering parameter is not a temperature line on the chart.
    """
    if check.passed or target.kind not in TEMPERATURE_KINDS:
        return ()
    temp = _location(trace, target.at)[idx]
    if target.kind == "hold_above":
        bad = temp < target.limit
    elif target.kind == "stay_below":
        bad = temp > target.limit
    else:
        bad = (t >= (target.time_s or 0.0)) & (temp > target.limit)
    time_s = np.asarray(trace.time_s[idx], dtype=float)
    spans = _runs(time_s, bad) or [(float(time_s[0]), float(time_s[-1]))]
    return tuple((round(a, 1), round(b, 1)) for a, b in spans)


def evaluate(target: Target, trace: Trace) -> Check:
    """Apply one target to one part's trace, within the target's step; missed temperature targets carry
    the spans of the trace where they are missed."""
    t, idx = step_window(trace, target.step_index)
    check = _check(target, t, idx, trace)
    misses = miss_spans(target, check, t, idx, trace)
    return replace(check, misses=misses) if misses else check
