"""What the review pages show, assembled from the store: part rows, the schedule, chart data, CSV.

Values stay in SI until they are put in front of a person; ``Units`` converts them here and nowhere else.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from models import BatchSpec, PartSpec, StepSpec
from models.tables import Batch, Flag, Job, Part, Result
from scheduler.api import service
from scheduler.api.schemas import ComparePart
from scheduler.web.units import Units
from workers.jobs import to_target

__all__ = [
    "ChartSeries",
    "PartRow",
    "batch_spec",
    "chart_payload",
    "compare_row",
    "flags_with_history",
    "hold_steps",
    "overlay_payload",
    "part_rows",
    "part_size",
    "schedule_rows",
    "step_windows",
    "trace_csv",
]

_THRESHOLD_KINDS = {"hold_above", "stay_below", "fall_below"}
_SERIES = (("core_c", "core"), ("surface_c", "surface"), ("corner_c", "corner"), ("ambient_c", "ambient"))


def batch_spec(batch: Batch) -> BatchSpec:
    """The batch file as validated, with a rerun's durations applied."""
    spec: BatchSpec = service.validate(batch.spec, batch.durations or None)
    return spec


def step_windows(spec: BatchSpec) -> list[tuple[str, float, float]]:
    """(name, start_s, end_s) of every step; time zero is the start of the first."""
    out, start = [], 0.0
    for step in spec.schedule:
        out.append((step.name, start, start + step.duration_s))
        start += step.duration_s
    return out


def part_size(part: PartSpec, units: Units) -> str:
    """Section sizes in the viewer's length unit: "50 mm", "dia 80 mm", "50 x 200 x 400 mm"."""
    f = units.fmt_length
    if part.shape == "plate":
        return f(part.thickness_m)
    if part.shape == "bar":
        return f"dia {f(part.diameter_m)}"
    if part.shape == "block":
        return f"{f(part.thickness_m)} × {f(part.width_m)} × {f(part.length_m)}"
    return f"dia {f(part.diameter_m)} × {f(part.length_m)}"


def hold_steps(spec: BatchSpec) -> list[str]:
    """Steps that some part has a hold target in: the ones a soak suggestion can lengthen."""
    names = {t.step for p in spec.parts for t in p.targets if t.kind.value == "hold_above"}
    return [s.name for s in spec.schedule if s.name in names]


@dataclass
class PartRow:
    """One line of a batch's parts table."""

    id: str
    shape: str
    size: str
    material: str
    status: str
    flagged: bool | None
    checks: list[dict[str, Any]] = field(default_factory=list)
    open_flags: int = 0
    error: str | None = None


def part_rows(session: Session, batch: Batch, spec: BatchSpec, units: Units) -> list[PartRow]:
    """Every part in file order, with its job status and, once computed, each target's outcome."""
    specs = {p.id: p for p in spec.parts}
    jobs = {j.part_id: j for j in session.scalars(select(Job).where(Job.batch_id == batch.id))}
    results = {r.part_id: r for r in session.scalars(select(Result).where(Result.batch_id == batch.id))}
    open_flags: dict[str, int] = {}
    for flag in session.scalars(select(Flag).where(Flag.batch_id == batch.id, Flag.status == "open")):
        open_flags[flag.part_id] = open_flags.get(flag.part_id, 0) + 1
    order = session.scalars(select(Part.part_id).where(Part.batch_id == batch.id).order_by(Part.position))
    rows = []
    for pid in order:
        p = specs[pid]
        result = results.get(pid)
        job = jobs.get(pid)
        rows.append(
            PartRow(
                id=pid,
                shape=p.shape,
                size=part_size(p, units),
                material=p.material if isinstance(p.material, str) else "inline",
                status=job.status if job else "unknown",
                flagged=None if result is None else bool(result.flagged),
                checks=list(result.body.get("checks", [])) if result else [],
                open_flags=open_flags.get(pid, 0),
                error=job.error if job else None,
            )
        )
    return rows


def _step_text(step: StepSpec, units: Units) -> dict[str, str]:
    ambient = units.fmt_temp(step.ambient_c)
    if step.ambient_start is not None:
        ambient = f"{units.fmt_temp(step.ambient_start_c)} → {ambient}"
    exchange = step.medium or step.htc or ""
    if step.emissivity is not None:
        exchange += f", emissivity {step.emissivity:g}"
    return {"name": step.name, "duration": step.duration, "ambient": ambient, "exchange": exchange}


def schedule_rows(spec: BatchSpec, units: Units) -> list[dict[str, str]]:
    """The schedule as the pages print it: name, duration, ambient (ramp shown as a range), exchange."""
    return [_step_text(s, units) for s in spec.schedule]


@dataclass
class ChartSeries:
    key: str
    label: str


def _spans(t: np.ndarray[Any, Any], bad: np.ndarray[Any, Any]) -> list[tuple[float, float]]:
    """Contiguous runs of ``bad`` as (start, end) times."""
    out: list[tuple[float, float]] = []
    start: float | None = None
    for i, flag in enumerate(bad.tolist()):
        if flag and start is None:
            start = float(t[i])
        if not flag and start is not None:
            out.append((start, float(t[i - 1])))
            start = None
    if start is not None:
        out.append((start, float(t[-1])))
    return out


def _threshold_marks(
    spec: BatchSpec, part: PartSpec, trace: dict[str, Any], flags: Sequence[dict[str, Any]], units: Units
) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    windows = {name: (a, b) for name, a, b in step_windows(spec)}
    t = np.asarray(trace["time_s"], dtype=float)
    flagged = {(f["step"], f["at"], f["target"]) for f in flags}
    thresholds, spans = [], []
    for target_spec in part.targets:
        target = to_target(target_spec, spec)
        if target.kind not in _THRESHOLD_KINDS:
            continue
        a, b = windows[target.step]
        is_flagged = (target.step, target.at, target.kind) in flagged
        thresholds.append(
            {
                "label": f"{target.step} {target.at} {target.kind.replace('_', ' ')}",
                "value": units.temp(target.limit),
                "start_min": a / 60.0,
                "end_min": b / 60.0,
                "at": target.at,
                "flagged": is_flagged,
            }
        )
        if not is_flagged:
            continue
        values = trace.get(f"{target.at}_c")
        if values is None:
            continue
        temp = np.asarray([np.nan if v is None else v for v in values], dtype=float)
        in_step = (t >= a) & (t <= b)
        if target.kind == "hold_above":
            bad = in_step & (temp < target.limit)
        elif target.kind == "stay_below":
            bad = in_step & (temp > target.limit)
        else:  # fall_below: still too hot when the allowed time ran out, up to the end of the step
            bad = in_step & (t >= a + (target.time_s or 0.0)) & (temp > target.limit)
        found = _spans(t, bad) or [(a, b)]
        spans += [
            {"start_min": s / 60.0, "end_min": e / 60.0, "label": thresholds[-1]["label"]} for s, e in found
        ]
    return thresholds, spans


def chart_payload(spec: BatchSpec, part_id: str, body: dict[str, Any], units: Units) -> dict[str, Any]:
    """Everything the part chart draws, in display units: time in minutes, series, marks and spans."""
    part = next(p for p in spec.parts if p.id == part_id)
    trace = body["trace"]
    series = [ChartSeries(k, label) for k, label in _SERIES if trace.get(k) is not None]
    data = [[round(s / 60.0, 3) for s in trace["time_s"]]]
    for s in series:
        data.append([units.temp(v) for v in trace[s.key]])
    thresholds, spans = _threshold_marks(spec, part, trace, body.get("flags", []), units)
    return {
        "part": part_id,
        "temp_unit": units.temp_label,
        "series": [s.label for s in series],
        "data": data,
        "steps": [{"name": n, "start_min": a / 60.0, "end_min": b / 60.0} for n, a, b in step_windows(spec)],
        "thresholds": thresholds,
        "spans": spans,
    }


def flags_with_history(session: Session, batch_id: int, part_id: str) -> list[Flag]:
    """The part's flags with their dispositions, oldest first."""
    return list(
        session.scalars(
            select(Flag)
            .where(Flag.batch_id == batch_id, Flag.part_id == part_id)
            .options(selectinload(Flag.dispositions))
            .order_by(Flag.seq)
        )
    )


def trace_csv(body: dict[str, Any], units: Units) -> str:
    """A part's trace as CSV: time in seconds and minutes, then each temperature in the display unit."""
    trace = body["trace"]
    keys = [(k, label) for k, label in _SERIES if trace.get(k) is not None]
    unit = "degF" if units.temp_unit == "F" else "degC"
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["time_s", "time_min", *(f"{label}_{unit}" for _, label in keys)])
    for i, t in enumerate(trace["time_s"]):
        temps = [units.temp(trace[k][i]) for k, _ in keys]
        writer.writerow([t, round(t / 60.0, 3), *("" if v is None else round(v, 2) for v in temps)])
    return out.getvalue()


def overlay_payload(
    part_id: str, before: dict[str, Any], after: dict[str, Any], units: Units
) -> dict[str, Any]:
    """Core and surface of one part, original against rerun, as two tables the page joins on time."""

    def table(body: dict[str, Any]) -> list[list[float | None]]:
        trace = body["trace"]
        return [
            [round(s / 60.0, 3) for s in trace["time_s"]],
            [units.temp(v) for v in trace["core_c"]],
            [units.temp(v) for v in trace["surface_c"]],
        ]

    return {
        "part": part_id,
        "temp_unit": units.temp_label,
        "labels": ["original core", "original surface", "rerun core", "rerun surface"],
        "tables": [table(before), table(after)],
    }


def _flag_key(flag: dict[str, Any]) -> tuple[str, str, str]:
    return (str(flag["step"]), str(flag["at"]), str(flag["target"]))


def compare_row(part: ComparePart) -> dict[str, Any]:
    """One part of a comparison, with the flags the rerun cleared and those it gained (once both exist)."""
    row: dict[str, Any] = {
        "id": part.id,
        "change": part.change,
        "before": part.before,
        "after": part.after,
        "cleared": [],
        "gained": [],
    }
    if part.before.flagged is None or part.after.flagged is None:
        return row
    before = {_flag_key(f) for f in part.before.flags}
    after = {_flag_key(f) for f in part.after.flags}
    row["cleared"] = [f for f in part.before.flags if _flag_key(f) not in after]
    row["gained"] = [f for f in part.after.flags if _flag_key(f) not in before]
    return row
