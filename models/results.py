"""Shapes of a computed result, as typed dictionaries: what the workers produce, the store keeps and the
API and pages read.

They are plain JSON at run time (the result file of ``soakline run`` and the stored result rows are
these very dictionaries), typed for the checker so that every hop names its fields. The README's
"The result" section is the contract; ``checks``, ``steps``, ``size`` and ``material`` extend it.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from typing import NotRequired, TypedDict

__all__ = [
    "BatchResult",
    "CheckBody",
    "FlagBody",
    "PartResult",
    "StepWindow",
    "SuggestBody",
    "TraceBody",
    "WarningBody",
    "json_safe",
]


class FlagBody(TypedDict):
    """A missed target: the contract's flag (``margin`` signed, negative is the shortfall)."""

    step: str
    at: str
    target: str
    required: str
    achieved: str
    margin: str
    margin_value: float
    margin_unit: str
    message: str
    facts: NotRequired[dict[str, float | None]]  # the numbers the texts say (workers.wording)


class CheckBody(FlagBody):
    """Any target's outcome, passed or not. ``limit`` is the target's value (degC, K or P by kind);
    ``misses`` are the [start_s, end_s] spans of the trace where a missed temperature target is not
    met (none when it passes, and none for a difference or a tempering parameter)."""

    passed: bool
    limit: float
    misses: list[list[float]]


class TraceBody(TypedDict):
    """Temperatures in degC against time in seconds from the start of the first step."""

    time_s: list[float]
    core_c: list[float | None]
    surface_c: list[float | None]
    ambient_c: list[float | None]
    corner_c: NotRequired[list[float | None]]
    underside_c: NotRequired[list[float | None]]  # plates in a schedule with a lower face
    bound_k: list[float | None]


class StepWindow(TypedDict):
    """Where a step sits on the trace's time axis."""

    name: str
    start_s: float
    end_s: float


class PartResult(TypedDict):
    """One part's entry of a result: its checks and flags, its description and its trace."""

    id: str
    flagged: bool
    flags: list[FlagBody]
    checks: list[CheckBody]
    shape: str
    size: str
    material: str
    trace: TraceBody
    steps: NotRequired[list[StepWindow]]


class WarningBody(TypedDict):
    """A target that looks physically wrong, computed anyway, at its field path."""

    path: str
    message: str


class BatchResult(TypedDict):
    """The whole result of a batch (``soakline run --json``)."""

    batch: str
    parts: list[PartResult]
    steps: list[StepWindow]
    warnings: list[WarningBody]
    notice: str


class SuggestBody(TypedDict):
    """The shortest duration of a step that clears every target in it, or why there is none."""

    step: str
    duration_s: float | None
    duration: str | None
    limiting_part: str | None
    reason: str | None
    simulations: int
    method: str  # "exact" (read from one run at an upper bound), "search" (trial durations), "none"
    how: str  # how it was found, for people
    notice: str


def json_safe(value: object) -> object:
    """JSON-safe form: numpy scalars and arrays become numbers and lists, non-finite floats None.

    A value that strict JSON already accepts (the engine's results are rounded lists of plain floats)
    is returned as it is: one pass of the C encoder instead of a Python walk over every sample.
    """
    try:
        json.dumps(value, allow_nan=False)
    except (TypeError, ValueError):
        return _json_safe(value)
    return value


def _json_safe(value: object) -> object:
    if isinstance(value, Mapping):
        return {str(k): _json_safe(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_json_safe(v) for v in value]
    if hasattr(value, "tolist"):
        return _json_safe(value.tolist())
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, str | int | bool) or value is None:
        return value
    return str(value)
