"""Target checks on computed traces: did a part hold, stay below, cool in time, temper enough?

Pure numpy and small dataclasses. Every checking function takes SI values (seconds, degC, kelvin
differences) for one location within one step; ``evaluate`` applies a ``Target`` to a ``Trace`` and
returns a ``Check``: the numbers it found (``facts``) and, from them, texts for people in degC
(``workers.wording`` says them again in another unit).

Conventions (each is a choice a reviewer may want to know):
- A step's window runs from its start (the last sample of the step before, or time zero) to its end.
- A crossing between samples is located on the solution itself: the cubic through the two samples
  with the solution's time derivative at each (``Trace.*_rate_k_s``, from the method that computed the
  trace), solved for its first (or, where a run starts, last) root in the interval; the samples say
  which intervals hold a crossing. In a step's first interval the left sample may belong to the step
  before (a face law can jump there), so the quadratic with the right sample's rate is taken. A trace
  without rates is linear between samples. Its error is the trace's error bound over the rate there
  (``crossing_error``).
- hold_above counts the longest continuous time at or above the temperature, starting when the location
  reaches it, not when the furnace does (common practice: soak counts from the part).
- hardness_min and martensite_min read the phases the engine followed (a part with a composition) at
  the target step's end: Maynier's hardness from the fractions and the point's cooling rate at 700 degC,
  in HRC by ASTM E140 (``models.phasedata``); a point whose austenite has not finished transforming
  (still above Ms at the step's end) has no as-quenched estimate yet, and misses the target.
- The tempering parameter is Hollomon-Jaffe P = T (C + log10 t), T in kelvin, t in hours (read: the
  Hollomon-Jaffe tempering parameter, heat-treating references), summed over the real history by
  equivalent time.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from models.phasedata import hv_to_hrc
from models.results import CheckBody, FlagBody
from workers.thermal import Trace
from workers.thermal.constants import KELVIN
from workers.thermal.phases import Composition
from workers.thermal.phases.estimate import PointEstimate, point_estimate
from workers.wording import Facts, TempUnit, Texts, describe, format_duration, format_temperature

FloatArray = NDArray[np.float64]
Kind = Literal[
    "hold_above",
    "stay_below",
    "fall_below",
    "max_difference",
    "temper_parameter_min",
    "temper_parameter_max",
    "hardness_min",
    "martensite_min",
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
    "crossing_error",
    "crossing_time",
    "evaluate",
    "facts_texts",
    "first_above",
    "first_below",
    "first_reaching",
    "format_duration",
    "format_temperature",
    "hold_done_at",
    "hold_time",
    "location_rate",
    "longest_run_above",
    "max_difference",
    "miss_spans",
    "peak",
    "phase_estimate",
    "step_window",
    "tempering_parameter",
    "tempering_parameters",
]


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


def _slopes(t: FloatArray, temp: FloatArray, rate: FloatArray | None) -> tuple[FloatArray, FloatArray]:
    """The slope (K/s) each interval's cubic takes at its left and right sample.

    With the solution's rates (``Trace.*_rate_k_s``) these are the rates themselves, but for the
    window's first interval, whose left sample may belong to the step before (a face law can jump at
    the boundary): there the left slope is chosen so that the cubic is the quadratic through both
    samples with the right rate. Without rates both are the secant, and the cubic is the straight line.
    """
    dt = np.diff(t)
    with np.errstate(divide="ignore", invalid="ignore"):
        secant = np.where(dt > 0.0, np.diff(temp) / np.where(dt > 0.0, dt, 1.0), 0.0)
    if rate is None:
        return secant, secant.copy()
    left = np.array(rate[:-1], dtype=float)
    right = np.array(rate[1:], dtype=float)
    if left.size:
        left[0] = 2.0 * secant[0] - right[0]
    return left, right


def _root(c0: float, c1: float, c2: float, c3: float, first: bool) -> float:
    """The first (or last) root in [0, 1] of c0 + c1 s + c2 s^2 + c3 s^3, whose ends differ in sign
    (or one is zero): the cubic is cut at its turning points into monotone pieces, and the first (last)
    piece that holds a root is solved by Newton's method kept inside the piece by bisection."""

    def f(s: float) -> float:
        return ((c3 * s + c2) * s + c1) * s + c0

    knots = [0.0, 1.0]
    qa, qb, qc = 3.0 * c3, 2.0 * c2, c1  # the derivative
    if qa != 0.0:
        disc = qb * qb - 4.0 * qa * qc
        if disc > 0.0:
            r = math.sqrt(disc)
            knots += [(-qb - r) / (2.0 * qa), (-qb + r) / (2.0 * qa)]
    elif qb != 0.0:
        knots.append(-qc / qb)
    cuts = sorted(k for k in knots if 0.0 <= k <= 1.0)
    pieces = list(itertools.pairwise(cuts))
    for lo, hi in pieces if first else reversed(pieces):
        flo, fhi = f(lo), f(hi)
        if first and flo == 0.0:
            return lo
        if fhi == 0.0:
            return hi
        if not first and flo == 0.0:
            return lo
        if (flo < 0.0) != (fhi < 0.0):
            return _solve_piece(f, c1, c2, c3, lo, hi, flo)
    return 0.0 if abs(f(0.0)) <= abs(f(1.0)) else 1.0  # not reached: the ends differ in sign


def _solve_piece(
    f: Callable[[float], float], c1: float, c2: float, c3: float, lo: float, hi: float, flo: float
) -> float:
    """The root of a monotone piece of the cubic between ``lo`` and ``hi`` (signs differ at its ends)."""
    s = 0.5 * (lo + hi)
    for _ in range(60):
        fs = f(s)
        if fs == 0.0:
            return s
        if (fs < 0.0) == (flo < 0.0):
            lo = s
        else:
            hi = s
        d = (3.0 * c3 * s + 2.0 * c2) * s + c1
        nxt = s - fs / d if d != 0.0 else lo - 1.0
        if not lo < nxt < hi:
            nxt = 0.5 * (lo + hi)  # Newton left the bracket: bisect
        if abs(nxt - s) <= 1e-13:
            return nxt
        s = nxt
    return s


def crossing_time(
    t0: float, t1: float, a: float, b: float, left: float, right: float, limit: float, first: bool = True
) -> float:
    """When the cubic through (t0, a) and (t1, b) with slopes ``left`` and ``right`` (K/s) there meets
    ``limit``, with ``a`` and ``b`` on either side of it (or on it): the first such time in the
    interval, or the last one (``first=False``: where a run that goes on past t1 starts)."""
    dt = t1 - t0
    if dt <= 0.0:
        return t0
    da, db = dt * left, dt * right
    c2 = 3.0 * (b - a) - 2.0 * da - db
    c3 = 2.0 * (a - b) + da + db
    return t0 + dt * _root(a - limit, da, c2, c3, first)


def _cross(
    t: FloatArray, v: FloatArray, left: FloatArray, right: FloatArray, i: int, limit: float, first: bool
) -> float:
    """``crossing_time`` in the interval from sample ``i`` to ``i + 1``."""
    return crossing_time(
        float(t[i]),
        float(t[i + 1]),
        float(v[i]),
        float(v[i + 1]),
        float(left[i]),
        float(right[i]),
        limit,
        first,
    )


def _runs_above(
    t: FloatArray, temp: FloatArray, limit_c: float, rate: FloatArray | None
) -> list[tuple[float, float]]:
    """Every continuous run at or above ``limit_c`` as (start, end) times, in order.

    The samples say which intervals a crossing lies in; inside one, the crossing is on the cubic of
    ``_slopes`` (the solution's own, with rates).
    """
    up = np.asarray(temp >= limit_c)
    if not up.any():
        return []
    edges = np.diff(np.concatenate([[False], up, [False]]).astype(np.int8))
    firsts, lasts = np.nonzero(edges == 1)[0], np.nonzero(edges == -1)[0] - 1
    left, right = _slopes(t, temp, rate)
    runs = []
    for i, j in zip(firsts.tolist(), lasts.tolist(), strict=True):
        start = float(t[0]) if i == 0 else _cross(t, temp, left, right, i - 1, limit_c, first=False)
        end = float(t[-1]) if j == len(t) - 1 else _cross(t, temp, left, right, j, limit_c, first=True)
        runs.append((start, end))
    return runs


def longest_run_above(
    t: FloatArray, temp: FloatArray, limit_c: float, rate: FloatArray | None = None
) -> tuple[float, float | None]:
    """Longest continuous time at or above ``limit_c`` and when that run started (None: never reached);
    of equally long runs, the last.

    A crossing inside an interval starts or ends a run at the time the solution crosses (``rate``: its
    time derivative at the samples; without it, linear between samples).
    """
    runs = _runs_above(t, temp, limit_c, rate)
    if not runs:
        return 0.0, None
    lengths = [end - start for start, end in runs]
    best = max(lengths)
    k = len(lengths) - 1 - lengths[::-1].index(best)
    return float(best), float(runs[k][0])


def hold_time(t: FloatArray, temp: FloatArray, limit_c: float, rate: FloatArray | None = None) -> float:
    """Longest continuous time (s) at or above ``limit_c``."""
    return longest_run_above(t, temp, limit_c, rate)[0]


def peak(temp: FloatArray) -> float:
    return float(np.max(temp))


def _first(
    t: FloatArray, values: FloatArray, hit: NDArray[np.bool_], limit: float, rate: FloatArray | None
) -> float | None:
    """The time of the first sample where ``hit`` holds, or the crossing into it inside the interval
    before (first root of the interval's cubic); None when no sample hits."""
    found = np.nonzero(hit)[0]
    if found.size == 0:
        return None
    i = int(found[0])
    if i == 0:
        return float(t[0])
    left, right = _slopes(t[: i + 1], values[: i + 1], None if rate is None else rate[: i + 1])
    return _cross(t, values, left, right, i - 1, limit, first=True)


def first_below(
    t: FloatArray, temp: FloatArray, limit_c: float, rate: FloatArray | None = None
) -> float | None:
    """First time the location is below ``limit_c``; None if it never is. Between samples the crossing
    is on the solution (``rate``: its time derivative at the samples; without it, linear)."""
    return _first(t, temp, np.asarray(temp < limit_c), limit_c, rate)


def first_above(
    t: FloatArray, values: FloatArray, limit: float, rate: FloatArray | None = None
) -> float | None:
    """First time ``values`` exceed ``limit``; None if they never do (crossings as ``first_below``)."""
    return _first(t, values, np.asarray(values > limit), limit, rate)


def first_reaching(
    t: FloatArray, values: FloatArray, limit: float, rate: FloatArray | None = None
) -> float | None:
    """First time ``values`` reach ``limit`` or more; None if they never do (crossings as
    ``first_below``)."""
    return _first(t, values, np.asarray(values >= limit), limit, rate)


def hold_done_at(
    t: FloatArray, temp: FloatArray, limit_c: float, need_s: float, rate: FloatArray | None = None
) -> float | None:
    """Earliest time by which the location has been at or above ``limit_c`` for ``need_s`` without a
    break (None: not within ``t``): a step at least this long passes the hold.

    Same crossings as ``longest_run_above``.
    """
    for start, end in _runs_above(t, temp, limit_c, rate):
        if end - start >= need_s:
            return float(start + need_s)
    return None


def max_difference(core: FloatArray, other: FloatArray) -> float:
    """Largest |core - other| (K) over the samples."""
    return float(np.max(np.abs(core - other)))


def tempering_parameter(t: FloatArray, temp_c: FloatArray, constant: float) -> float:
    """Hollomon-Jaffe P of the whole history (T in K, t in h); see ``tempering_parameters``."""
    if len(t) < 2 or not np.any(np.diff(t) > 0.0):
        raise ValueError("a tempering parameter needs a history of positive length")
    return float(tempering_parameters(t, temp_c, constant)[-1])


def tempering_parameters(t: FloatArray, temp_c: FloatArray, constant: float) -> FloatArray:
    """Hollomon-Jaffe P (T in K, t in h) of the history up to each sample (0 at the first), by
    equivalent-time summation: never falls as the history grows.

    State: log10 of the equivalent time at a reference temperature (the history's peak). For each
    sample interval at its mean temperature T_i, the state converts to the time t_i at T_i giving the
    same P, the interval's length is added, and the result converts back. An isothermal hold gives
    exactly T (C + log10 t). Logarithms keep cold intervals (tiny equivalent times) from underflowing.
    """
    t_ref = float(np.max(temp_c)) + KELVIN
    log_ref = -math.inf  # nothing accumulated yet
    out = np.zeros(len(t))
    for i in range(len(t) - 1):
        dt_h = (t[i + 1] - t[i]) / HOUR_S
        if dt_h > 0.0:
            t_i = 0.5 * (temp_c[i] + temp_c[i + 1]) + KELVIN
            log_here = -math.inf if log_ref == -math.inf else (t_ref / t_i) * (constant + log_ref) - constant
            log_dt = math.log10(dt_h)
            hi, lo = max(log_here, log_dt), min(log_here, log_dt)
            log_sum = hi + math.log10(1.0 + 10.0 ** (lo - hi)) if lo > -math.inf else hi
            log_ref = (t_i / t_ref) * (constant + log_sum) - constant
        out[i + 1] = 0.0 if log_ref == -math.inf else t_ref * (constant + log_ref)
    return out


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
    """A target's outcome: texts with units for people, ``margin_value`` in ``margin_unit`` for programs,
    and the ``facts`` the texts are said from (``workers.wording``).

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
    facts: Facts = field(default_factory=dict)

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
            facts=dict(self.facts),
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
            facts=dict(self.facts),
        )


def facts_texts(body: FlagBody | CheckBody, unit: TempUnit) -> Texts:
    """A stored outcome's texts said again in ``unit``; a result stored before facts were kept keeps its
    own (degC) texts."""
    facts = body.get("facts")
    if not facts:
        return Texts(body["required"], body["achieved"], body["margin"], body["message"])
    return describe(body["target"], body["at"], body["step"], facts, unit)


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


def location_rate(trace: Trace, at: Point) -> FloatArray | None:
    """The time derivative (K/s) of a location's temperature at the samples, None when not known."""
    if at == "core":
        return trace.core_rate_k_s
    if at == "surface":
        return trace.surface_rate_k_s
    if at == "underside":
        return trace.surface_rate_k_s if trace.second_surface_c is None else trace.second_surface_rate_k_s
    return trace.corner_rate_k_s


def crossing_error(trace: Trace, at: Point, time_s: float) -> float:
    """The stated error (s) of a crossing of ``at`` at ``time_s`` (from time zero): the trace's error
    bound there over the location's rate there, both linear between samples (inf where it is still;
    0 where the bound is). The crossing itself is on the cubic, whose own error is far below."""
    rate = location_rate(trace, at)
    bound = float(np.interp(time_s, trace.time_s, trace.bound_k))
    if rate is None or bound == 0.0:
        return bound and math.inf
    speed = abs(float(np.interp(time_s, trace.time_s, rate)))
    return bound / speed if speed > 0.0 else math.inf


def _make(target: Target, passed: bool, margin: tuple[float, str], facts: Facts) -> Check:
    texts = describe(target.kind, target.at, target.step, facts)
    value, unit = margin
    return Check(
        target.step,
        target.at,
        target.kind,
        bool(passed),
        texts.required,
        texts.achieved,
        texts.margin,
        float(value),
        unit,
        texts.message,
        target.limit,
        facts=dict(facts),
    )


def _hold(target: Target, t: FloatArray, temp: FloatArray, rate: FloatArray | None) -> Check:
    need = target.time_s or 0.0
    held, start = longest_run_above(t, temp, target.limit, rate)
    facts = {"limit_c": target.limit, "need_s": need, "held_s": held, "start_s": start, "peak_c": peak(temp)}
    return _make(target, held >= need, (held - need, "s"), facts)


def _stay(target: Target, t: FloatArray, temp: FloatArray) -> Check:
    i = int(np.argmax(temp))
    top = float(temp[i])
    facts = {"limit_c": target.limit, "peak_c": top, "peak_s": float(t[i])}
    return _make(target, top <= target.limit, (target.limit - top, "K"), facts)


def _fall(target: Target, t: FloatArray, temp: FloatArray, rate: FloatArray | None) -> Check:
    within, step_s = target.time_s or 0.0, float(t[-1])
    when = first_below(t, temp, target.limit, rate)
    facts: dict[str, float | None] = {
        "limit_c": target.limit,
        "within_s": within,
        "step_s": step_s,
        "when_s": when,
    }
    if when is None:
        # never below in the step: how far above the limit it still was when the time allowed ran out
        instant = min(within, step_s)
        facts |= {"instant_s": instant, "temp_c": float(np.interp(instant, t, temp))}
        return _make(target, False, (target.limit - float(facts["temp_c"] or 0.0), "K"), facts)
    return _make(target, when <= within, (within - when, "s"), facts)


def _difference(target: Target, t: FloatArray, core: FloatArray, other: FloatArray) -> Check:
    gap = np.abs(core - other)
    i = int(np.argmax(gap))
    worst = float(gap[i])
    facts = {"limit_k": target.limit, "worst_k": worst, "worst_s": float(t[i])}
    return _make(target, worst <= target.limit, (target.limit - worst, "K"), facts)


def _temper(target: Target, t: FloatArray, temp: FloatArray) -> Check:
    p = tempering_parameter(t, temp, target.constant)
    margin = p - target.limit if target.kind == "temper_parameter_min" else target.limit - p
    facts = {"limit": target.limit, "value": p, "constant": target.constant}
    return _make(target, margin >= 0.0, (margin, ""), facts)


def phase_estimate(trace: Trace, steel: Composition, step_index: int, at: Point) -> PointEstimate:
    """The as-quenched estimate at ``at`` (core or surface) at the end of step ``step_index``."""
    ph = trace.phases
    if ph is None:
        raise ValueError("the part's phases were not followed (no composition, or not a plate or bar)")
    if at == "core":
        frac, rate, temp = ph.core[step_index], ph.core_rate700[step_index], trace.core_c
    elif at == "surface":
        frac, rate, temp = ph.surface[step_index], ph.surface_rate700[step_index], trace.surface_c
    else:
        raise ValueError(f"phases are followed at the core and the surface, not at the {at}")
    end = int(np.nonzero(trace.step_index == step_index)[0][-1])
    return point_estimate(steel, frac, float(rate), float(temp[end]))


def estimate_facts(e: PointEstimate) -> dict[str, float | None]:
    """The numbers a phase target's texts are said from (``workers.wording``)."""
    return {
        "hv": e.hv,
        "hrc": None if e.hv is None else hv_to_hrc(e.hv),
        "martensite": e.martensite,
        "bainite": e.bainite,
        "ferrite_pearlite": e.ferrite_pearlite,
        "austenite": e.austenite,
        "rate_k_s": e.rate700_k_s,
        "temp_c": e.temp_c,
        "ms_c": e.ms_c,
        "unsettled": 1.0 if e.unsettled else 0.0,
    }


def _phase(target: Target, e: PointEstimate) -> Check:
    facts = {"limit": target.limit, **estimate_facts(e)}
    if e.unsettled or e.hv is None:
        return _make(target, False, (0.0, "HRC" if target.kind == "hardness_min" else "%"), facts)
    if target.kind == "martensite_min":
        margin = e.martensite - target.limit
        return _make(target, margin >= 0.0, (100.0 * margin, "%"), facts)
    hrc = facts["hrc"]
    value = HRC_FLOOR if hrc is None else hrc
    return _make(target, hrc is not None and hrc >= target.limit, (value - target.limit, "HRC"), facts)


HRC_FLOOR = 20.0  # the lowest Rockwell C the conversion gives (ASTM E140)


def _check(
    target: Target, t: FloatArray, idx: NDArray[np.intp], trace: Trace, steel: Composition | None = None
) -> Check:
    if target.kind in ("hardness_min", "martensite_min"):
        if steel is None:
            raise ValueError(f"{target.kind} needs the steel's composition")
        return _phase(target, phase_estimate(trace, steel, target.step_index, target.at))
    if target.kind == "max_difference":
        return _difference(target, t, trace.core_c[idx], _location(trace, target.at)[idx])
    temp = _location(trace, target.at)[idx]
    rates = location_rate(trace, target.at)
    rate = None if rates is None else rates[idx]
    if target.kind == "hold_above":
        return _hold(target, t, temp, rate)
    if target.kind == "stay_below":
        return _stay(target, t, temp)
    if target.kind == "fall_below":
        return _fall(target, t, temp, rate)
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


def evaluate(target: Target, trace: Trace, steel: Composition | None = None) -> Check:
    """Apply one target to one part's trace, within the target's step; missed temperature targets carry
    the spans of the trace where they are missed. ``steel``: the composition whose phases the trace
    followed, for hardness and martensite targets."""
    t, idx = step_window(trace, target.step_index)
    check = _check(target, t, idx, trace, steel)
    misses = miss_spans(target, check, t, idx, trace)
    return replace(check, misses=misses) if misses else check
