"""The job code the CLI and the service workers share: run a batch, run one part, suggest a soak.

Everything here takes a validated ``BatchSpec`` and returns plain JSON-ready dicts in the shape of the
result contract (README, "The result"), extended with ``checks`` (every target, pass or fail), part
descriptions, step boundaries and the safety notice. No database, no queue: callers store the result.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from models import BatchSpec, PartSpec, SpecError, TargetSpec, target_warnings
from models.results import BatchResult, PartResult, StepWindow, TraceBody, WarningBody
from workers.convert import engine_inputs, steel_of, to_part, to_step
from workers.targets import Check, Target, evaluate
from workers.thermal import PartThermal, Step, Tolerance, Trace, simulate

__all__ = [
    "CHUNK_PARTS",
    "NOTICE",
    "describe_part",
    "part_checks",
    "run_batch",
    "run_part",
    "step_windows",
    "warnings_json",
]

NOTICE = (
    "Predictions are planning estimates. Furnace and quench work follows the site's procedures, the "
    "applicable heat-treatment and pyrometry specifications and the judgement of qualified metallurgists; "
    "a passing prediction never replaces load thermocouples or hardness checks."
)

CHUNK_PARTS = 200
SAMPLES_PER_STEP = 120
_TEMP_DECIMALS = 2  # 0.01 K
_TIME_DECIMALS = 1  # 0.1 s

Progress = Callable[[int, int], None]


# -- describing parts and targets ---------------------------------------------------------------------


def describe_part(part: PartSpec) -> str:
    """Shape and size as the file gave them: "plate 50 mm", "bar dia 80 mm", "block 50 mm x 200 mm x ..."."""
    return f"{part.shape} {part.size_text(lambda text, _m: text, times='x')}"


def to_target(spec: TargetSpec, batch: BatchSpec) -> Target:
    """A file target in SI, with its step's position in the schedule."""
    names = [s.name for s in batch.schedule]
    kind = spec.kind.value
    limit: float | None
    if kind == "max_difference":
        limit = spec.max_difference_k
    elif kind.startswith("temper_parameter"):
        limit = spec.parameter
    elif spec.is_phase:
        limit = spec.phase_limit
    else:
        limit = spec.limit_c
    assert limit is not None  # the models guarantee the kind's value
    time_s = spec.for_s if kind == "hold_above" else spec.within_s
    return Target(
        step=spec.step,
        step_index=names.index(spec.step),
        kind=kind,  # type: ignore[arg-type]  # TargetKind values are the Kind literals
        at=spec.point,
        limit=limit,
        time_s=time_s,
        constant=spec.constant_value,
    )


def part_checks(batch: BatchSpec, part: PartSpec, trace: Trace, step: str | None = None) -> list[Check]:
    """Every target of ``part`` (only those of ``step`` when given) checked against its trace."""
    steel = steel_of(part)
    return [
        evaluate(to_target(t, batch), trace, steel) for t in part.targets if step is None or t.step == step
    ]


# -- results ------------------------------------------------------------------------------------------


def _floats(values: np.ndarray[Any, Any], decimals: int) -> list[float | None]:
    rounded = np.round(np.asarray(values, dtype=float), decimals)
    return [float(v) if math.isfinite(v) else None for v in rounded.tolist()]


def _bounds(values: np.ndarray[Any, Any]) -> list[float | None]:
    """Error bounds (series truncation, or the march's grid and time estimates) to 2 significant digits:
    they span many decades."""
    return [float(f"{v:.2g}") if math.isfinite(v) else None for v in np.asarray(values, float).tolist()]


def _trace_json(trace: Trace) -> TraceBody:
    out: TraceBody = {
        "time_s": [float(v) for v in np.round(np.asarray(trace.time_s, dtype=float), _TIME_DECIMALS)],
        "core_c": _floats(trace.core_c, _TEMP_DECIMALS),
        "surface_c": _floats(trace.surface_c, _TEMP_DECIMALS),
        "ambient_c": _floats(trace.ambient_c, _TEMP_DECIMALS),
        "bound_k": _bounds(trace.bound_k),
    }
    if trace.corner_c is not None:
        out["corner_c"] = _floats(trace.corner_c, _TEMP_DECIMALS)
    if trace.second_surface_c is not None:
        out["underside_c"] = _floats(trace.second_surface_c, _TEMP_DECIMALS)
    return out


def _part_entry(batch: BatchSpec, part: PartSpec, trace: Trace, steps: list[StepWindow]) -> PartResult:
    checks = part_checks(batch, part, trace)
    flags = [c.flag_dict() for c in checks if not c.passed]
    return {
        "id": part.id,
        "flagged": bool(flags),
        "flags": flags,
        "checks": [c.as_dict() for c in checks],
        "shape": part.shape,
        "size": describe_part(part),
        "material": part.material_name,
        "trace": _trace_json(trace),
        "steps": steps,
    }


def step_windows(batch: BatchSpec) -> list[StepWindow]:
    """Where each step sits on the trace's time axis (seconds from the start of the first step)."""
    out: list[StepWindow] = []
    start = 0.0
    for s in batch.schedule:
        out.append({"name": s.name, "start_s": round(start, 1), "end_s": round(start + s.duration_s, 1)})
        start += s.duration_s
    return out


def _simulate(parts: Sequence[PartThermal], steps: Sequence[Step], tol: Tolerance | None) -> list[Trace]:
    return simulate(parts, steps, samples_per_step=SAMPLES_PER_STEP, tol=tol)


def run_batch(
    batch: BatchSpec,
    progress: Progress | None = None,
    *,
    tol: Tolerance | None = None,
    chunk: int = CHUNK_PARTS,
) -> BatchResult:
    """The whole result of a batch: every part's checks, flags and trace, and the safety notice.

    Parts go to the engine ``chunk`` at a time (one vectorised call per chunk); ``progress(done,
    total)`` is called after each chunk and once at the start with ``done = 0``.
    """
    parts, steps = engine_inputs(batch)
    total = len(parts)
    if progress is not None:
        progress(0, total)
    traces: list[Trace] = []
    for first in range(0, total, max(1, chunk)):
        traces += _simulate(parts[first : first + chunk], steps, tol)
        if progress is not None:
            progress(len(traces), total)
    windows = step_windows(batch)
    return {
        "batch": batch.batch,
        "parts": [_part_entry(batch, p, tr, windows) for p, tr in zip(batch.parts, traces, strict=True)],
        "steps": windows,
        "warnings": warnings_json(batch),
        "notice": NOTICE,
    }


def warnings_json(batch: BatchSpec) -> list[WarningBody]:
    """Targets that look physically wrong (computed anyway), each at its field path."""
    return [{"path": w.path, "message": w.message} for w in target_warnings(batch)]


def _find_part(batch: BatchSpec, part_id: str) -> PartSpec:
    for p in batch.parts:
        if p.id == part_id:
            return p
    raise SpecError.single(f"no part '{part_id}' in batch '{batch.batch}'", "part_id")


def run_part(batch: BatchSpec, part_id: str, *, tol: Tolerance | None = None) -> PartResult:
    """One part's entry of the result (same shape as in ``run_batch``), computed on its own."""
    part = _find_part(batch, part_id)
    trace = _simulate([to_part(part)], [to_step(s) for s in batch.schedule], tol)[0]
    return _part_entry(batch, part, trace, step_windows(batch))
