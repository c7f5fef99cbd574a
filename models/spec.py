"""The batch file (README, "The batch file") as pydantic models: one schedule, many parts, their targets.

``BatchSpec`` is the root. Values stay as the user wrote them ("2 in", "1580 degF") for display;
properties such as ``duration_s``, ``ambient_c`` and ``thickness_m`` give SI. Rules across fields
(unique names, targets naming real steps, sizes by shape) are checked even when other fields are
wrong, so one pass reports every problem.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Literal

from models import limits, units
from models.base import Loc, RuleProblem, SpecModel, as_raw
from models.fields import Text, check_text
from models.parts import InlineMaterialSpec, PartSpec
from models.steps import LowerFaceSpec, StepSpec, quench_problem
from models.targets import PHASE_KINDS, TargetKind, TargetSpec

__all__ = [
    "BatchSpec",
    "InlineMaterialSpec",
    "LowerFaceSpec",
    "PartSpec",
    "StepSpec",
    "TargetKind",
    "TargetSpec",
]


def _text(value: object) -> str | None:
    """The text a label or name validates to, or None when it does not (its own field says why)."""
    try:
        return check_text(value)
    except ValueError:
        return None


def _mappings(raw: Mapping[str, Any], key: str) -> list[tuple[int, Mapping[str, Any]]]:
    items = raw.get(key)
    if not isinstance(items, list):
        return []
    return [(i, raw_item) for i, item in enumerate(items) if (raw_item := as_raw(item)) is not None]


def _count(raw: Mapping[str, Any], key: str, what: str, most: int) -> list[RuleProblem]:
    items = raw.get(key)
    if not isinstance(items, list):
        return []
    if not items:
        return [((key,), f"needs at least one {what}")]
    if len(items) > most:
        return [((key,), f"a batch holds at most {most} {what}s, got {len(items)}")]
    return []


def _duplicates(
    items: list[tuple[int, Mapping[str, Any]]], key: str, field: str, what: str
) -> list[RuleProblem]:
    first: dict[str, int] = {}
    problems: list[RuleProblem] = []
    for i, item in items:
        name = _text(item.get(field))
        if name is None:
            continue
        if name in first:
            problems.append(
                ((key, i, field), f"duplicate {what} '{name}' (first used by {key}[{first[name]}])")
            )
        else:
            first.setdefault(name, i)
    return problems


def _seconds(text: object) -> float | None:
    """A valid positive duration, or None (its own field reports why it is not)."""
    try:
        seconds = units.parse_time(text)
    except ValueError:
        return None
    return seconds if seconds > 0.0 else None


def _celsius(text: object) -> float | None:
    try:
        return units.parse_temperature(text) if isinstance(text, str) else None
    except ValueError:
        return None


def _not_quench(steps: list[tuple[int, Mapping[str, Any]]]) -> dict[str, str | None]:
    """Each step name: why it is not a quench (``steps.quench_problem``), None when it is one."""
    out: dict[str, str | None] = {}
    before: float | None = None
    for _, s in steps:
        ambient = _celsius(s.get("ambient"))
        if (name := _text(s.get("name"))) is not None:
            out.setdefault(name, quench_problem(ambient, before))
        before = ambient
    return out


def _target_rules(raw: Mapping[str, Any], steps: list[tuple[int, Mapping[str, Any]]]) -> list[RuleProblem]:
    durations: dict[str, float | None] = {}
    for _, s in steps:
        if (name := _text(s.get("name"))) is not None:
            durations.setdefault(name, _seconds(s.get("duration")))
    not_quench = _not_quench(steps)
    known = ", ".join(durations) or "none"
    problems: list[RuleProblem] = []
    for i, part in _mappings(raw, "parts"):
        for j, target in _mappings(part, "targets"):
            loc: Loc = ("parts", i, "targets", j)
            step = _text(target.get("step"))
            if step is None:
                continue
            if step not in durations:
                problems.append(((*loc, "step"), f"no step named '{step}' in the schedule; steps: {known}"))
                continue
            kind = next((k for k in PHASE_KINDS if target.get(k) is not None), None)
            why = not_quench[step]
            if kind is not None and why is not None:
                problems.append(
                    (
                        (*loc, kind),
                        f"{kind} is the estimate after a quench; step '{step}' is not one: {why}",
                    )
                )
            hold, step_s = _seconds(target.get("for")), durations[step]
            if hold is not None and step_s is not None and hold > step_s:
                problems.append(
                    (
                        (*loc, "for"),
                        f"'{target.get('for')}' is longer than step '{step}' itself, so it can never pass",
                    )
                )
    return problems


def _lower_face_rules(
    raw: Mapping[str, Any], steps: list[tuple[int, Mapping[str, Any]]]
) -> list[RuleProblem]:
    others = [
        _text(p.get("id")) or f"parts[{i}]"
        for i, p in _mappings(raw, "parts")
        if p.get("shape") not in (None, "plate")
    ]
    if not others:
        return []
    shown = ", ".join(others[:5]) + (f" and {len(others) - 5} more" if len(others) > 5 else "")
    return [
        (
            ("schedule", i, "lower_face"),
            f"a different lower face is modelled for plates only; not a plate: {shown}",
        )
        for i, step in steps
        if step.get("lower_face") is not None
    ]


class BatchSpec(SpecModel):
    """A furnace batch: the schedule every part runs, and the parts with their targets."""

    batch: Text
    schedule: list[StepSpec]
    parts: list[PartSpec]

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        steps = _mappings(raw, "schedule")
        return [
            *_count(raw, "schedule", "step", limits.MAX_STEPS),
            *_count(raw, "parts", "part", limits.MAX_PARTS),
            *_duplicates(steps, "schedule", "name", "step name"),
            *_duplicates(_mappings(raw, "parts"), "parts", "id", "part id"),
            *_target_rules(raw, steps),
            *_lower_face_rules(raw, steps),
        ]

    def step(self, name: str) -> StepSpec:
        """The schedule step called ``name``."""
        return next(s for s in self.schedule if s.name == name)

    @property
    def total_duration_s(self) -> float:
        return sum(s.duration_s for s in self.schedule)

    @property
    def temperature_unit(self) -> Literal["degC", "degF"]:
        """The scale the file writes its temperatures in: degF when most of them are in degF."""
        texts = [s.ambient for s in self.schedule] + [s.ambient_start or "" for s in self.schedule]
        texts += [p.initial for p in self.parts]
        texts += [t.hold_above or t.stay_below or t.fall_below or "" for p in self.parts for t in p.targets]
        scales = [units.temperature_scale(text) for text in texts if text]
        return "degF" if scales.count("degF") > len(scales) / 2 else "degC"
