"""Warnings on a valid batch: targets a steel part cannot physically mean, or can never meet or miss.

A warning never stops a run: the batch is computed as written, and the warning, naming the field like
an input error does, tells the person what looks like a slip (a degF value under degC, a tempering
parameter computed with temperatures in degrees Rankine, a hold above every furnace temperature).
Bounds that come from outside live in ``catalog/plausibility.yaml`` with their sources; the rest follows
from heat conduction itself: with no heat made inside it, a part never gets hotter than the hottest of
its start and the ambients it has seen, nor colder than the coldest (the maximum principle).
"""

from __future__ import annotations

import math

from models import catalog
from models.chemistry_warnings import composition_warnings
from models.errors import Problem
from models.loading import format_path
from models.spec import BatchSpec, TargetKind, TargetSpec

__all__ = ["target_warnings"]

KELVIN = 273.15


def _c(temp_c: float) -> str:
    return f"{temp_c:.0f} degC"


def _span(spec: BatchSpec, step: str) -> tuple[float, float]:
    """Coldest and hottest temperature any part can have by the end of ``step``: starts and ambients."""
    temps = [p.initial_c for p in spec.parts]
    for s in spec.schedule:
        temps += [s.ambient_c]
        temps += [] if s.ambient_start_c is None else [s.ambient_start_c]
        if s.lower_face is not None and s.lower_face.ambient_c is not None:
            temps += [s.lower_face.ambient_c]
        if s.name == step:
            break
    return min(temps), max(temps)


def _temper(target: TargetSpec, bounds: catalog.Bounds) -> list[str]:
    found: list[str] = []
    constant = target.constant_value
    if not bounds.constant_low <= constant <= bounds.constant_high:
        found.append(
            f"C = {constant:g} is outside {bounds.constant_low:g}-{bounds.constant_high:g}, the range of "
            f"steels ({bounds.constant_source})"
        )
    p = target.parameter
    assert p is not None
    low = (bounds.temper_lowest_c + KELVIN) * (constant + math.log10(bounds.temper_shortest_h))
    high = (bounds.lower_critical_c + KELVIN) * (constant + math.log10(bounds.temper_longest_h))
    if low <= p <= high:
        return found
    one_hour_c = p / constant - KELVIN
    where = (
        f"above the lower critical temperature ({_c(bounds.lower_critical_c)}), where tempering ends"
        if one_hour_c > bounds.lower_critical_c
        else "below any tempering"
    )
    text = (
        f"P {p:.0f} would need {_c(one_hour_c)} for 1 h, {where}; tempering at "
        f"{bounds.temper_lowest_c:.0f}-{_c(bounds.lower_critical_c)} for "
        f"{bounds.temper_shortest_h * 60:g} min to {bounds.temper_longest_h:g} h gives "
        f"P {low:.0f}-{high:.0f} with C = {constant:g} (T in kelvin, t in hours)"
    )
    if p > high and low <= p / 1.8 <= high:
        text += f"; with T in degrees Rankine P is 1.8 times larger: did you mean {p / 1.8:.0f}?"
    return [*found, text]


def _temperature(target: TargetSpec, spec: BatchSpec, bounds: catalog.Bounds) -> list[str]:
    limit = target.limit_c
    assert limit is not None
    if limit > bounds.melting_c:
        return [
            f"{_c(limit)} is above where steels begin to melt (about {_c(bounds.melting_c)}); "
            "was it meant in degF?"
        ]
    coldest, hottest = _span(spec, target.step)
    kind = target.kind
    if kind is TargetKind.HOLD_ABOVE and limit > hottest:
        return [
            f"{_c(limit)} is above every start and ambient temperature up to the end of '{target.step}' "
            f"(hottest {_c(hottest)}): no part can reach it"
        ]
    if kind is TargetKind.FALL_BELOW and limit <= coldest:
        return [
            f"{_c(limit)} is not above every start and ambient temperature up to the end of "
            f"'{target.step}' (coldest {_c(coldest)}): no part can fall below it"
        ]
    return []


def _difference(target: TargetSpec, spec: BatchSpec) -> list[str]:
    limit = target.max_difference_k
    assert limit is not None
    coldest, hottest = _span(spec, target.step)
    if limit >= hottest - coldest:
        return [
            f"{limit:g} K is more than the whole spread of start and ambient temperatures up to the end "
            f"of '{target.step}' ({hottest - coldest:.0f} K): this target can never be missed"
        ]
    return []


def target_warnings(spec: BatchSpec) -> list[Problem]:
    """Every target of ``spec`` that looks physically wrong, at its field path, in file order, then every
    part composition outside the range of a method its estimate uses (``chemistry_warnings``)."""
    bounds = catalog.bounds()
    found: list[Problem] = []
    two_faces = any(s.lower_face is not None for s in spec.schedule)
    for i, part in enumerate(spec.parts):
        for j, target in enumerate(part.targets):
            if target.at == "underside" and not two_faces:
                found.append(
                    Problem(
                        format_path(("parts", i, "targets", j, "at")),
                        "no step gives the plate a lower face, so its underside exchanges heat like its "
                        "surface and reads the same",
                    )
                )
            kind = target.kind
            path = format_path(("parts", i, "targets", j, kind.value))
            if kind in (TargetKind.TEMPER_PARAMETER_MIN, TargetKind.TEMPER_PARAMETER_MAX):
                texts = _temper(target, bounds)
            elif kind is TargetKind.MAX_DIFFERENCE:
                texts = _difference(target, spec)
            elif target.is_phase:
                texts = []  # checked by the rules (a quench step, a steel with phases)
            else:
                texts = _temperature(target, spec, bounds)
            found += [Problem(path, text) for text in texts]
    return found + composition_warnings(spec)
