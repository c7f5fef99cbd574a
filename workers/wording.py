"""The words of a target's outcome, in the reader's temperature unit.

A check keeps the numbers it found (its ``facts``, SI: degC, kelvin differences, seconds from the start
of the step, the tempering parameter); ``describe`` turns them into the four texts a person reads --
required, achieved, margin and message -- in degC or degF. The checks call it once in degC for the
stored result; the CLI and the review pages call it again in the unit their reader chose.

Facts by target:
- hold_above: ``limit_c``, ``need_s``, ``held_s``, ``start_s`` (None: never reached), ``peak_c``
- stay_below: ``limit_c``, ``peak_c``, ``peak_s``
- fall_below: ``limit_c``, ``within_s``, ``step_s``, ``when_s`` (None: never below in the step) and,
  when it never fell, ``instant_s`` (the time allowed, or the step's end if that comes first) and
  ``temp_c`` there
- max_difference: ``limit_k``, ``worst_k``, ``worst_s``
- temper_parameter_min / _max: ``limit``, ``value``, ``constant``
- hardness_min / martensite_min: ``limit`` (HRC, or the martensite fraction 0-1), ``hv``, ``hrc`` (None
  below 20 HRC), the fractions ``martensite``, ``bainite``, ``ferrite_pearlite``, ``austenite``,
  ``rate_k_s`` (cooling rate at 700 degC), ``temp_c`` and ``ms_c`` at the step's end, ``unsettled`` (1:
  austenite still above Ms, no as-quenched estimate)
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

__all__ = [
    "TEMP_UNITS",
    "TempUnit",
    "Texts",
    "describe",
    "describe_margin",
    "format_duration",
    "format_temperature",
]

TempUnit = Literal["degC", "degF"]
TEMP_UNITS: tuple[TempUnit, ...] = ("degC", "degF")

Facts = Mapping[str, float | None]


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


def format_temperature(temp_c: float, unit: TempUnit = "degC") -> str:
    """A temperature to 0.1 degree in ``unit``."""
    if unit == "degF":
        return f"{_trim(temp_c * 9.0 / 5.0 + 32.0, 1)} degF"
    return f"{_trim(temp_c, 1)} degC"


def format_difference(kelvin: float, unit: TempUnit = "degC", signed: bool = False) -> str:
    """A temperature difference: kelvin beside degC, degF (1.8 per kelvin) beside degF."""
    value, name = (kelvin * 9.0 / 5.0, "degF") if unit == "degF" else (kelvin, "K")
    return f"{'+' if signed and value >= 0 else ''}{_trim(value, 1)} {name}"


def _parameter(p: float, signed: bool = False) -> str:
    return f"{'+' if signed and p >= 0 else ''}{p:.0f}"


@dataclass(frozen=True)
class Texts:
    """What a person reads about one target."""

    required: str
    achieved: str
    margin: str
    message: str


def _f(facts: Facts, key: str) -> float:
    value = facts[key]
    if value is None:
        raise ValueError(f"the check has no {key}")
    return float(value)


def _hold(at: str, step: str, facts: Facts, unit: TempUnit) -> Texts:
    lim, need, held = format_temperature(_f(facts, "limit_c"), unit), _f(facts, "need_s"), _f(facts, "held_s")
    start = facts.get("start_s")
    margin = format_duration(held - need, signed=True)
    required = f">= {lim} for {format_duration(need)}"
    if start is None:
        top = format_temperature(_f(facts, "peak_c"), unit)
        return Texts(
            required,
            f"never reached {lim} (peak {top})",
            margin,
            f"{at} never reached {lim} in {step}: peak {top}, {format_duration(need)} at or above it "
            "required",
        )
    held_text, need_text = format_duration(held), format_duration(need)
    message = (
        f"{at} held at or above {lim} for {held_text} ({need_text} required)"
        if held >= need
        else f"{at} held at or above {lim} for {held_text} of the required {need_text}"
    )
    return Texts(required, f"{held_text} from {format_duration(start)} into {step}", margin, message)


def _stay(at: str, step: str, facts: Facts, unit: TempUnit) -> Texts:
    limit, top = _f(facts, "limit_c"), _f(facts, "peak_c")
    lim, top_text = format_temperature(limit, unit), format_temperature(top, unit)
    when = f"{format_duration(_f(facts, 'peak_s'))} into {step}"
    message = (
        f"{at} peaked at {top_text} at {when}, {format_difference(top - limit, unit)} over the {lim} limit"
        if top > limit
        else f"{at} peaked at {top_text} at {when}, {format_difference(limit - top, unit)} under {lim}"
    )
    return Texts(
        f"<= {lim}", f"peak {top_text} at {when}", format_difference(limit - top, unit, signed=True), message
    )


def _fall(at: str, step: str, facts: Facts, unit: TempUnit) -> Texts:
    limit, within, step_s = _f(facts, "limit_c"), _f(facts, "within_s"), _f(facts, "step_s")
    lim, within_text = format_temperature(limit, unit), format_duration(within)
    required = f"< {lim} within {within_text}"
    when = facts.get("when_s")
    if when is None:
        # never below in time: every text is about one instant, the time allowed (or the step's end)
        temp = _f(facts, "temp_c")
        instant = (
            f"at {within_text}, the time allowed"
            if within <= step_s
            else f"at the end of {step} ({format_duration(step_s)}), before the {within_text} allowed"
        )
        return Texts(
            required,
            f"still {format_temperature(temp, unit)} {instant}",
            format_difference(limit - temp, unit, signed=True),
            f"{at} was still {format_temperature(temp, unit)} {instant}, "
            f"{format_difference(temp - limit, unit)} above {lim}",
        )
    when_text = format_duration(when)
    message = (
        f"{at} fell below {lim} after {when_text} ({within_text} allowed)"
        if when <= within
        else f"{at} fell below {lim} only after {when_text}, {within_text} allowed"
    )
    return Texts(required, f"below after {when_text}", format_duration(within - when, signed=True), message)


def _difference(at: str, step: str, facts: Facts, unit: TempUnit) -> Texts:
    limit, worst = _f(facts, "limit_k"), _f(facts, "worst_k")
    pair = f"difference between core and {at}"
    when = f"{format_duration(_f(facts, 'worst_s'))} into {step}"
    limit_text, worst_text = format_difference(limit, unit), format_difference(worst, unit)
    message = f"{pair} reached {worst_text} at {when}" + (
        f", over the {limit_text} limit" if worst > limit else f" (limit {limit_text})"
    )
    return Texts(
        f"{pair} <= {limit_text}",
        f"{pair} up to {worst_text}, at {when}",
        format_difference(limit - worst, unit, signed=True),
        message,
    )


def _temper(at: str, target: str, facts: Facts) -> Texts:
    limit, p, constant = _f(facts, "limit"), _f(facts, "value"), _f(facts, "constant")
    minimum = target == "temper_parameter_min"
    margin = p - limit if minimum else limit - p
    word = "minimum" if minimum else "maximum"
    relation = "meets" if margin >= 0 else ("below" if minimum else "above")
    c_text = _trim(constant, 2)
    return Texts(
        f"P {'>=' if minimum else '<='} {_parameter(limit)} (C = {c_text})",
        f"P {_parameter(p)}",
        _parameter(margin, signed=True),
        f"{at} tempering parameter {_parameter(p)}, {relation} the {word} {_parameter(limit)} "
        f"(P = T[K] (C + log10 t[h]), C = {c_text})",
    )


def _pct(fraction: float, signed: bool = False) -> str:
    return f"{'+' if signed and fraction >= 0 else ''}{_trim(100.0 * fraction, 0)} %"


def _structure(facts: Facts) -> str:
    parts = [
        f"martensite {_pct(_f(facts, 'martensite'))}",
        f"bainite {_pct(_f(facts, 'bainite'))}",
        f"ferrite+pearlite {_pct(_f(facts, 'ferrite_pearlite'))}",
        f"retained austenite {_pct(_f(facts, 'austenite'))}",
    ]
    return ", ".join(parts)


def _unsettled(at: str, step: str, facts: Facts, unit: TempUnit) -> str:
    return (
        f"{at} still {format_temperature(_f(facts, 'temp_c'), unit)} at the end of {step}, above its Ms "
        f"{format_temperature(_f(facts, 'ms_c'), unit)} with {_pct(_f(facts, 'austenite'))} austenite "
        "untransformed: no as-quenched estimate yet (a longer quench lets it finish)"
    )


def _hardness(at: str, step: str, facts: Facts, unit: TempUnit) -> Texts:
    limit = _f(facts, "limit")
    required = f">= {_trim(limit, 1)} HRC after {step}"
    if facts.get("unsettled") or facts.get("hv") is None:
        return Texts(required, "no estimate", "unknown", _unsettled(at, step, facts, unit))
    hv, hrc = _f(facts, "hv"), facts.get("hrc")
    said = (
        f"{_trim(hv, 0)} HV, below 20 HRC"
        if hrc is None
        else f"{_trim(float(hrc), 1)} HRC ({_trim(hv, 0)} HV)"
    )
    margin_hrc = (20.0 if hrc is None else float(hrc)) - limit
    margin = f"{'< ' if hrc is None else ''}{'+' if margin_hrc >= 0 else ''}{_trim(margin_hrc, 1)} HRC"
    met = hrc is not None and float(hrc) >= limit
    message = (
        f"{at} predicted {said} as quenched, {'meets' if met else 'below'} the minimum {_trim(limit, 1)} HRC "
        f"({_structure(facts)}; cooling {_trim(_f(facts, 'rate_k_s'), 1)} K/s at 700 degC)"
    )
    return Texts(required, f"predicted {said}", margin, message)


def _martensite(at: str, step: str, facts: Facts, unit: TempUnit) -> Texts:
    limit = _f(facts, "limit")
    required = f">= {_pct(limit)} martensite after {step}"
    if facts.get("unsettled") or facts.get("hv") is None:
        return Texts(required, "no estimate", "unknown", _unsettled(at, step, facts, unit))
    found = _f(facts, "martensite")
    met = found >= limit
    message = (
        f"{at} predicted {_pct(found)} martensite, {'meets' if met else 'below'} the minimum {_pct(limit)} "
        f"({_structure(facts)})"
    )
    return Texts(required, f"predicted {_pct(found)} martensite", _pct(found - limit, signed=True), message)


def describe(target: str, at: str, step: str, facts: Facts, unit: TempUnit = "degC") -> Texts:
    """The texts of one outcome from its facts, temperatures in ``unit``."""
    if target == "hold_above":
        return _hold(at, step, facts, unit)
    if target == "stay_below":
        return _stay(at, step, facts, unit)
    if target == "fall_below":
        return _fall(at, step, facts, unit)
    if target == "max_difference":
        return _difference(at, step, facts, unit)
    if target == "hardness_min":
        return _hardness(at, step, facts, unit)
    if target == "martensite_min":
        return _martensite(at, step, facts, unit)
    return _temper(at, target, facts)


def describe_margin(value: float, margin_unit: str, said: str, unit: TempUnit = "degC") -> str:
    """The margin text of :func:`describe` from a check's ``margin_value``, ``margin_unit`` and its
    stored margin ``said`` (said in degC): what a long table of margins needs, without saying the other
    three texts. Only a temperature difference (K) reads differently in degF; a time, a tempering
    parameter, a hardness or a fraction reads the same in either unit."""
    if margin_unit == "K":
        return format_difference(value, unit, signed=True)
    return said
