"""The thermocouple record: a schedule actually run, the parts that carried thermocouples, and the readings.

A record is a YAML (or JSON) file, described in the README ("Thermocouple records"):

- ``record`` (a label), ``date`` (when it was recorded, YYYY-MM-DD), ``schedule`` (steps exactly as in a
  batch file: the exchange given there is the fit's starting guess and holds for the steps not fitted);
- ``parts``: each as in a batch file (id, shape, sizes, material, initial; no targets) plus
  ``thermocouples`` (name -> ``core``, ``surface``, ``corner`` or a depth from a face such as
  ``"12 mm"``) and ``readings``: a CSV table whose header names the time and each thermocouple with its
  unit in brackets (``time [min], TC1 [degC]``), inline or in a ``.csv`` file next to the record.

Every problem is reported with where it is: a field path (``parts[0].thermocouples.TC3``) and, for the
readings, the line (the table's own line and, when it is known, the file's).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import yaml

from models import limits, units
from models.errors import Problem, SpecError
from models.loading import _read_text, format_path, parse_batch, read_document
from models.spec import BatchSpec

__all__ = ["MIN_READINGS", "Record", "RecordPart", "Thermocouple", "load_record_file", "parse_record"]

Where = Literal["core", "surface", "corner", "depth"]
MIN_READINGS = 3  # per thermocouple: fewer cannot show a curve at all
_RECORD_KEYS = ("record", "date", "schedule", "parts")
_PART_OWN_KEYS = ("thermocouples", "readings")
_HEADER = re.compile(r"^\s*(?P<name>[^\[\]]+?)\s*\[\s*(?P<unit>[^\[\]]+?)\s*\]\s*$")
MAX_READINGS = 100_000


@dataclass(frozen=True)
class Thermocouple:
    """One thermocouple: where it sat and its readings (seconds from the record's start, degC)."""

    name: str
    where: Where
    depth_m: float  # from the nearer face; 0 unless ``where`` is "depth"
    time_s: tuple[float, ...]
    temp_c: tuple[float, ...]
    lines: tuple[int, ...]  # the table's line of each reading (the header is line 1)
    position: str  # as written: "core", "surface", "12 mm"


@dataclass(frozen=True)
class RecordPart:
    id: str
    thermocouples: tuple[Thermocouple, ...]
    readings_source: str  # "inline" or the CSV file's name


@dataclass(frozen=True)
class Record:
    """A validated record: the schedule and parts as a batch (for the engine) and the thermocouples."""

    label: str
    date: dt.date
    batch: BatchSpec
    parts: tuple[RecordPart, ...]

    def step_names(self) -> list[str]:
        return [s.name for s in self.batch.schedule]


def _line_where(table_line: int, first_file_line: int | None) -> str:
    if first_file_line is None:
        return f"line {table_line}"
    return f"line {table_line} (file line {first_file_line + table_line - 1})"


def _unit_scale(unit: str, kind: Literal["time", "temperature"]) -> tuple[float, float]:
    """(scale, offset) from the header's unit to seconds or degC: value_si = scale * v + offset."""
    if kind == "time":
        return units.parse_time(f"1 {unit}"), 0.0
    zero = units.parse_temperature(f"0 {unit}")
    one = units.parse_temperature(f"1 {unit}")
    return one - zero, zero


def _depth(text: str, part_half_m: float, full_m: float, shape: str) -> float:
    depth = units.parse_length(text)
    if depth < 0:
        raise ValueError(f"a depth from the face must not be negative, got '{text}'")
    size = "diameter" if shape == "bar" else "thickness"
    if depth > full_m:
        raise ValueError(
            f"'{text}' is deeper than the part itself ({size} {full_m * 1000:g} mm); "
            "give the depth from the nearer face"
        )
    if depth > part_half_m:
        raise ValueError(
            f"'{text}' is past the centre ({size} {full_m * 1000:g} mm); give the depth from the nearer "
            "face, or 'core'"
        )
    return depth


def _positions(
    raw: object, part: Any, path: str
) -> tuple[dict[str, tuple[Where, float, str]], list[Problem]]:
    problems: list[Problem] = []
    out: dict[str, tuple[Where, float, str]] = {}
    if not isinstance(raw, Mapping) or not raw:
        example = "{TC1: core, TC2: surface, TC3: '12 mm'}"
        return out, [Problem(path, f"required: a mapping of thermocouple names to places, e.g. {example}")]
    for key, value in raw.items():
        name = str(key).strip()
        here = f"{path}.{name}"
        if not name or len(name) > limits.MAX_TEXT:
            problems.append(Problem(here, "a thermocouple needs a name of 1 to 200 characters"))
            continue
        if value in ("core", "surface"):
            out[name] = (value, 0.0, value)
            continue
        if value == "corner":
            if part.shape not in ("block", "cylinder"):
                problems.append(
                    Problem(here, f"corner is reported for blocks and cylinders only, not a {part.shape}")
                )
            else:
                out[name] = ("corner", 0.0, "corner")
            continue
        if part.shape not in ("plate", "bar"):
            problems.append(
                Problem(
                    here,
                    f"a {part.shape} takes core, surface or corner; a depth is read in plates and bars only",
                )
            )
            continue
        if not isinstance(value, str):
            problems.append(
                Problem(here, f"expected core, surface or a depth from a face such as '12 mm', got {value!r}")
            )
            continue
        half = part.half_sizes_m[0]
        try:
            out[name] = ("depth", _depth(value, half, 2 * half, part.shape), value.strip())
        except ValueError as exc:
            problems.append(Problem(here, str(exc)))
    return out, problems


def _table_text(raw: object, base: Path | None, path: str) -> tuple[str, str]:
    """The CSV text of the readings and where it came from ("inline" or the file)."""
    if not isinstance(raw, str) or not raw.strip():
        raise SpecError.single(
            "required: a CSV table 'time [min], TC1 [degC], ...' (inline, or a .csv file next to the record)",
            path,
        )
    text = raw.strip()
    if "\n" not in text and text.lower().endswith(".csv"):
        file = Path(text) if base is None else base / text
        try:
            return _read_text(file), text
        except SpecError as exc:
            raise SpecError([Problem(path, p.message) for p in exc.problems]) from None
    return raw, "inline"


def _read_table(
    text: str,
    positions: Mapping[str, tuple[Where, float, str]],
    path: str,
    first_file_line: int | None,
) -> tuple[list[Thermocouple], list[Problem]]:
    rows = list(csv.reader(io.StringIO(text)))
    numbered = [(i + 1, row) for i, row in enumerate(rows) if any(cell.strip() for cell in row)]
    if not numbered:
        return [], [Problem(path, "the table is empty")]
    header_line, header = numbered[0]
    at = _line_where(header_line, first_file_line)
    problems: list[Problem] = []
    columns: list[tuple[str, float, float]] = []
    for j, cell in enumerate(header):
        match = _HEADER.match(cell)
        kind: Literal["time", "temperature"] = "time" if j == 0 else "temperature"
        example = "'time [min]'" if j == 0 else "'TC1 [degC]'"
        if match is None:
            problems.append(
                Problem(f"{path} {at}", f"column {j + 1} '{cell.strip()}' has no unit: write it as {example}")
            )
            continue
        name, unit = match["name"], match["unit"]
        if j > 0 and name not in positions:
            known = ", ".join(positions) or "none"
            problems.append(
                Problem(f"{path} {at}", f"column {j + 1} '{name}' is not among the thermocouples ({known})")
            )
            continue
        try:
            scale, offset = _unit_scale(unit, kind)
        except ValueError:
            what = (
                "a time unit such as min, s or h" if j == 0 else "a temperature unit such as degC, degF or K"
            )
            problems.append(Problem(f"{path} {at}", f"column {j + 1} '{name}': '{unit}' is not {what}"))
            continue
        columns.append((name, scale, offset))
    if len(header) < 2:
        problems.append(
            Problem(f"{path} {at}", "the header needs a time column and at least one thermocouple")
        )
    missing = [n for n in positions if n not in {c[0] for c in columns[1:]}]
    if not problems and missing:
        problems.append(Problem(f"{path} {at}", f"no column for thermocouple {', '.join(missing)}"))
    if problems:
        return [], problems
    if len(numbered) - 1 > MAX_READINGS:
        return [], [Problem(path, f"a table holds at most {MAX_READINGS} rows, got {len(numbered) - 1}")]
    series: dict[str, tuple[list[float], list[float], list[int]]] = {c[0]: ([], [], []) for c in columns[1:]}
    last: tuple[float, int] | None = None
    for line, row in numbered[1:]:
        at = f"{path} {_line_where(line, first_file_line)}"
        if len(row) != len(header):
            problems.append(Problem(at, f"expected {len(header)} values, got {len(row)}"))
            continue
        values: list[float | None] = []
        for j, cell in enumerate(row):
            name = columns[j][0]
            if not cell.strip() and j > 0:
                values.append(None)  # that thermocouple has no reading at this time
                continue
            try:
                v = float(cell)
            except ValueError:
                problems.append(Problem(at, f"{name}: expected a number, got '{cell.strip()}'"))
                values.append(None)
                continue
            if not math.isfinite(v):
                problems.append(
                    Problem(at, f"{name}: '{cell.strip()}' is not a reading (not a finite number)")
                )
                values.append(None)
                continue
            values.append(columns[j][1] * v + columns[j][2])
        t = values[0]
        if t is None:
            continue
        if last is not None and t <= last[0]:
            problems.append(
                Problem(
                    at,
                    f"{columns[0][0]}: time goes backwards or repeats ({row[0].strip()} after the reading "
                    f"of line {last[1]}); readings must be in time order",
                )
            )
            continue
        if t < 0:
            problems.append(
                Problem(at, f"{columns[0][0]}: time before the record's start ({row[0].strip()})")
            )
            continue
        last = (t, line)
        for j in range(1, len(columns)):
            temp = values[j]
            if temp is None:
                continue
            if temp < units.ABSOLUTE_ZERO_C or temp > limits.MAX_TEMPERATURE_C:
                problems.append(
                    Problem(at, f"{columns[j][0]}: {row[j].strip()} is not a plausible temperature")
                )
                continue
            ts, temps, lines = series[columns[j][0]]
            ts.append(t)
            temps.append(temp)
            lines.append(line)
    out = []
    for name, (ts, temps, lines) in series.items():
        if len(ts) < MIN_READINGS and not problems:
            problems.append(Problem(f"{path}", f"{name}: only {len(ts)} readings; at least {MIN_READINGS}"))
        where, depth, shown = positions[name]
        out.append(Thermocouple(name, where, depth, tuple(ts), tuple(temps), tuple(lines), shown))
    return out, problems


def _block_lines(text: str) -> dict[int, int]:
    """File line (1-based) of the first table line of each part's block-scalar ``readings``, by part."""
    out: dict[int, int] = {}
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError:
        return out
    if not isinstance(root, yaml.MappingNode):
        return out
    for key, value in root.value:
        if key.value != "parts" or not isinstance(value, yaml.SequenceNode):
            continue
        for i, item in enumerate(value.value):
            if not isinstance(item, yaml.MappingNode):
                continue
            for k, v in item.value:
                if k.value == "readings" and isinstance(v, yaml.ScalarNode) and v.style in ("|", ">"):
                    out[i] = v.start_mark.line + 2  # the indicator's line, then the content
    return out


def _date(raw: object) -> dt.date:
    if isinstance(raw, dt.datetime):
        return raw.date()
    if isinstance(raw, dt.date):
        return raw
    if isinstance(raw, str):
        try:
            return dt.date.fromisoformat(raw.strip())
        except ValueError:
            pass
    raise ValueError(f"expected the day the readings were taken as YYYY-MM-DD, got {raw!r}")


def parse_record(doc: object, *, base: Path | None = None, lines: Mapping[int, int] | None = None) -> Record:
    """Validate a parsed record document; ``SpecError`` with every problem (field path and line)."""
    if not isinstance(doc, Mapping):
        raise SpecError.single("the top level must be a mapping with record, date, schedule and parts")
    problems = [Problem(k, "unknown field") for k in doc if k not in _RECORD_KEYS]
    try:
        date = _date(doc.get("date"))
    except ValueError as exc:
        problems.append(Problem("date", str(exc)))
        date = dt.date.min
    raw_parts = doc.get("parts")
    parts_in = raw_parts if isinstance(raw_parts, list) else []
    batch_doc = {
        "batch": doc.get("record"),
        "schedule": doc.get("schedule"),
        "parts": [
            {k: v for k, v in p.items() if k not in _PART_OWN_KEYS} if isinstance(p, Mapping) else p
            for p in parts_in
        ]
        if isinstance(raw_parts, list)
        else raw_parts,
    }
    batch: BatchSpec | None = None
    try:
        batch = parse_batch(batch_doc)
    except SpecError as exc:
        problems += [
            Problem("record" + p.path[len("batch") :] if p.path.startswith("batch") else p.path, p.message)
            for p in exc.problems
        ]
    for i, p in enumerate(parts_in):
        if isinstance(p, Mapping) and p.get("targets"):
            problems.append(
                Problem(format_path(("parts", i, "targets")), "a record holds no targets; remove them")
            )
    if batch is None:
        raise SpecError(problems)
    parts: list[RecordPart] = []
    for i, (raw, spec) in enumerate(zip(parts_in, batch.parts, strict=True)):
        path = format_path(("parts", i))
        positions, found = _positions(raw.get("thermocouples"), spec, f"{path}.thermocouples")
        problems += found
        try:
            text, source = _table_text(raw.get("readings"), base, f"{path}.readings")
        except SpecError as exc:
            problems += exc.problems
            continue
        first = 1 if source != "inline" else (lines or {}).get(i)
        tcs, found = _read_table(text, positions, f"{path}.readings", first)
        problems += found
        parts.append(RecordPart(spec.id, tuple(tcs), source))
    if problems:
        raise SpecError(problems)
    return Record(label=batch.batch, date=date, batch=batch, parts=tuple(parts))


def load_record_file(path: str | Path) -> Record:
    """Read and validate a record file: JSON when it ends in .json, YAML otherwise."""
    file = Path(path)
    text, doc = read_document(file)
    lines = _block_lines(text) if file.suffix.lower() != ".json" else {}
    return parse_record(doc, base=file.parent, lines=lines)
