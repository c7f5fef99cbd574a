"""What the review pages show, assembled from the store: part rows, the schedule, chart data, CSV.

Values stay in SI until they are put in front of a person; ``Units`` converts them here and nowhere else.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from models import BatchSpec, PartSpec, StepSpec
from models.profiles import ProfileSpec
from models.results import CheckBody, PartResult, TraceBody
from models.tables import FlagStatus
from scheduler.api.schemas import ComparePart, FlagPublic
from scheduler.api.service import PartState
from scheduler.web.units import Units
from workers.targets import TEMPERATURE_KINDS

__all__ = [
    "ChartSeries",
    "CheckMark",
    "FlagLine",
    "PartRow",
    "chart_payload",
    "check_marks",
    "compare_row",
    "flag_lines",
    "hold_steps",
    "overlay_payload",
    "part_rows",
    "part_size",
    "schedule_rows",
    "trace_csv",
]

_SERIES = (
    ("core_c", "core"),
    ("surface_c", "surface"),
    ("corner_c", "corner"),
    ("underside_c", "underside"),
    ("ambient_c", "ambient"),
)


def part_size(part: PartSpec, units: Units) -> str:
    """Section sizes in the viewer's length unit: "50 mm", "dia 80 mm", "50 mm × 200 mm × 400 mm"."""
    return part.size_text(lambda _text, metres: units.fmt_length(metres))


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
    checks: list[CheckBody] = field(default_factory=list)
    open_flags: int = 0
    error: str | None = None


def part_rows(
    parts: Sequence[PartState], spec: BatchSpec, checks: Mapping[str, list[CheckBody]], units: Units
) -> list[PartRow]:
    """Every part in file order, with its job status and, once computed, each target's outcome."""
    specs = {p.id: p for p in spec.parts}
    return [
        PartRow(
            id=part.id,
            shape=specs[part.id].shape,
            size=part_size(specs[part.id], units),
            material=specs[part.id].material_name,
            status=part.status.value,
            flagged=part.flagged,
            checks=list(checks.get(part.id, [])),
            open_flags=sum(1 for f in part.flags if f.get("status") == FlagStatus.OPEN.value),
            error=part.error,
        )
        for part in parts
    ]


@dataclass(frozen=True)
class CheckMark:
    """One target's outcome in a long table (the report): verdict, what it is, margin in the viewer's
    unit; the margin alone is said, not the other texts."""

    passed: bool
    label: str
    margin: str


def check_marks(checks: list[CheckBody], units: Units) -> list[CheckMark]:
    """A part's checks as the report's parts table prints them."""
    return [
        CheckMark(
            bool(c["passed"]),
            f"{c['step']} · {c['at']} · {c['target'].replace('_', ' ')}",
            units.margin(c),
        )
        for c in checks
    ]


@dataclass(frozen=True)
class FlagLine:
    """A flag of the report's flags table: its texts in the viewer's unit and its dispositions."""

    part: str
    label: str
    required: str
    achieved: str
    dispositions: list[str]


def flag_lines(flags: list[FlagPublic], units: Units) -> list[FlagLine]:
    """The report's flags table, texts said once per flag in the viewer's unit."""
    lines = []
    for f in flags:
        said = units.texts(f.model_dump(include=_TEXT_FIELDS))
        lines.append(
            FlagLine(
                f.part,
                f"{f.step} · {f.at} · {f.target.replace('_', ' ')}",
                said.required,
                said.achieved,
                [
                    f"{d.decision.value} by {d.by} ({d.at.strftime('%Y-%m-%d %H:%M')} UTC): {d.comment}"
                    for d in f.dispositions
                ],
            )
        )
    return lines


_TEXT_FIELDS = {
    "step",
    "at",
    "target",
    "required",
    "achieved",
    "margin",
    "margin_value",
    "margin_unit",
    "message",
    "facts",
}


def _step_text(step: StepSpec, units: Units) -> dict[str, str]:
    ambient = units.fmt_temp(step.ambient_c)
    if step.ambient_start is not None:
        ambient = f"{units.fmt_temp(step.ambient_start_c)} → {ambient}"
    exchange = step.medium or step.htc or ""
    if step.severity is not None:
        exchange += f" × {step.severity:.3g}"
    if step.emissivity is not None:
        exchange += f", emissivity {step.emissivity:g}"
    if step.profile is not None:
        exchange = f"profile {step.profile}: {exchange}"
    return {"name": step.name, "duration": step.duration, "ambient": ambient, "exchange": exchange}


def schedule_rows(spec: BatchSpec, units: Units) -> list[dict[str, str]]:
    """The schedule as the pages print it: name, duration, ambient (ramp shown as a range), exchange."""
    return [_step_text(s, units) for s in spec.schedule]


@dataclass
class ChartSeries:
    key: str
    label: str


def _marks(body: PartResult, units: Units) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Each temperature target's line over its step, and the spans where a missed one is missed, as the
    worker stored them with the result."""
    windows = {w["name"]: w for w in body.get("steps", [])}
    thresholds, spans = [], []
    for check in body["checks"]:
        window = windows.get(check["step"])
        if check["target"] not in TEMPERATURE_KINDS or window is None or "limit" not in check:
            continue
        label = f"{check['step']} {check['at']} {check['target'].replace('_', ' ')}"
        thresholds.append(
            {
                "label": label,
                "value": units.temp(check["limit"]),
                "start_min": window["start_s"] / 60.0,
                "end_min": window["end_s"] / 60.0,
                "at": check["at"],
                "flagged": not check["passed"],
            }
        )
        spans += [{"start_min": a / 60.0, "end_min": b / 60.0, "label": label} for a, b in check["misses"]]
    return thresholds, spans


def _columns(trace: TraceBody) -> dict[str, list[float | None]]:
    """The trace's temperature columns present in this result, by key (a result stored before the
    underside had its name calls it second_surface_c)."""
    found = {k: v for k, v in trace.items() if k.endswith("_c") and isinstance(v, list)}
    if "second_surface_c" in found:
        found.setdefault("underside_c", found.pop("second_surface_c"))
    return found


def chart_payload(body: PartResult, units: Units) -> dict[str, Any]:
    """Everything the part chart draws, in display units: time in minutes, series, marks and spans."""
    trace = body["trace"]
    columns = _columns(trace)
    series = [ChartSeries(k, label) for k, label in _SERIES if k in columns]
    data: list[list[float | None]] = [[round(s / 60.0, 3) for s in trace["time_s"]]]
    for s in series:
        data.append([units.temp(v) for v in columns[s.key]])
    thresholds, spans = _marks(body, units)
    steps = body.get("steps", [])
    return {
        "part": body["id"],
        "temp_unit": units.temp_label,
        "series": [s.label for s in series],
        "data": data,
        "steps": [
            {"name": w["name"], "start_min": w["start_s"] / 60.0, "end_min": w["end_s"] / 60.0} for w in steps
        ],
        "thresholds": thresholds,
        "spans": spans,
    }


def trace_csv(body: PartResult, units: Units) -> str:
    """A part's trace as CSV: time in seconds and minutes, then each temperature in the display unit."""
    trace = body["trace"]
    columns = _columns(trace)
    keys = [(k, label) for k, label in _SERIES if k in columns]
    unit = "degF" if units.temp_unit == "F" else "degC"
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["time_s", "time_min", *(f"{label}_{unit}" for _, label in keys)])
    for i, t in enumerate(trace["time_s"]):
        temps = [units.temp(columns[k][i]) for k, _ in keys]
        writer.writerow([t, round(t / 60.0, 3), *("" if v is None else round(v, 2) for v in temps)])
    return out.getvalue()


def overlay_payload(part_id: str, before: PartResult, after: PartResult, units: Units) -> dict[str, Any]:
    """Core and surface of one part, original against rerun, as two tables the page joins on time."""

    def table(body: PartResult) -> list[list[float | None]]:
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


def profile_chart_payload(profile: ProfileSpec, units: Units) -> dict[str, Any]:
    """A profile's readings (points) and fitted curves (lines) per thermocouple, residuals below; time in
    minutes, temperatures in the viewer's unit, residuals as differences in that unit."""
    curves: list[list[list[float | None]]] = []  # per table: times, then values (uPlot.join's input)
    residuals: list[list[list[float | None]]] = []
    labels: list[str] = []
    for s in profile.series:
        name = f"{s.part} {s.thermocouple} ({s.position})"
        labels.append(name)
        minutes: list[float | None] = [round(t / 60.0, 4) for t in s.time_s]
        model_minutes: list[float | None] = [round(t / 60.0, 4) for t in s.model_time_s]
        curves.append([model_minutes, [units.temp(v) for v in s.model_c]])
        curves.append([minutes, [units.temp(v) for v in s.reading_c]])
        inside = [(m, r) for m, r in zip(minutes, s.residual_k, strict=True) if r is not None]
        residuals.append([[m for m, _ in inside], [round(units.delta(r), 3) for _, r in inside]])
    delta_unit = "°F" if units.temp_unit == "F" else "K"
    return {
        "temp_unit": units.temp_label,
        "delta_unit": delta_unit,
        "labels": labels,
        "curves": curves,
        "residuals": residuals,
    }
