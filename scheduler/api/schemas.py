"""Request and response bodies of the API, one family per entity (``...Create`` in, ``...Public`` out)."""

from __future__ import annotations

from datetime import date, datetime
from typing import Annotated, Any, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field

from models.limits import MAX_STEPS, MAX_TEXT
from models.profiles import ProfileSpec
from models.tables import BatchStatus, Decision, FlagStatus, JobStatus
from models.text import text_problem

__all__ = [
    "ERROR_RESPONSES",
    "BatchCreated",
    "BatchPage",
    "BatchPublic",
    "BatchSummary",
    "Change",
    "ComparePart",
    "ComparePublic",
    "DispositionCreate",
    "DispositionPublic",
    "ErrorPublic",
    "FlagPage",
    "FlagPublic",
    "HealthPublic",
    "PartFlags",
    "PartSummary",
    "ProblemPublic",
    "ProfilePublic",
    "ProfileSummary",
    "RerunCreate",
    "SuggestPublic",
]


def _storable(single_line: bool) -> AfterValidator:
    def check(value: str) -> str:
        problem = text_problem(value, single_line=single_line)
        if problem is not None:
            raise ValueError(problem)
        return value

    return AfterValidator(check)


# Text a client sends that is stored or compared in the database: no NUL, control characters or lone
# surrogates (see models.text); a line has no line breaks either.
StoredText = Annotated[str, _storable(single_line=False)]
StoredLine = Annotated[str, Field(max_length=MAX_TEXT), _storable(single_line=True)]


class ProblemPublic(BaseModel):
    path: str = Field(description='Field the problem is in, e.g. "parts[2].thickness" or "query.limit".')
    message: str


class ErrorPublic(BaseModel):
    """Body of every error response; ``problems`` only for 422."""

    detail: str
    problems: list[ProblemPublic] | None = None


ERROR_RESPONSES: dict[int | str, dict[str, Any]] = {
    401: {"model": ErrorPublic, "description": "Missing or unknown token."},
    403: {"model": ErrorPublic, "description": "The token's role may not do this."},
    404: {"model": ErrorPublic, "description": "No such batch, part or flag."},
    422: {"model": ErrorPublic, "description": "Invalid input; every problem with its field path."},
}


class _Out(BaseModel):
    model_config = ConfigDict(from_attributes=True)


class BatchCreated(_Out):
    id: int
    status: BatchStatus
    parent_id: int | None = None


class ProfilePublic(_Out):
    """A stored exchange profile: the profile as created, who created it and when."""

    profile: ProfileSpec
    created_by: str
    created_at: datetime


class ProfileSummary(_Out):
    name: str
    exchange: str = Field(description="What the profile puts into a step, in words.")
    step: str
    record: str
    record_date: date
    rms_k: float
    warnings: int
    created_by: str
    created_at: datetime


class BatchSummary(_Out):
    id: int
    batch: str = Field(description="The batch label from the file.")
    status: BatchStatus
    parent_id: int | None
    durations: dict[str, str] = Field(description="Step durations a rerun changed.")
    part_count: int
    submitted_by: str
    created_at: datetime
    finished_at: datetime | None


class BatchPage(_Out):
    items: list[BatchSummary]
    total: int
    limit: int
    offset: int


class PartSummary(_Out):
    id: str
    status: JobStatus
    flagged: bool | None = Field(description="None until the part has a result.")
    flags: list[dict[str, Any]]
    error: str | None = None


class BatchPublic(BatchSummary):
    done_count: int
    flagged_count: int
    parts: list[PartSummary]


class DispositionCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    decision: Decision
    comment: StoredText = Field(min_length=1, max_length=4000)


class DispositionPublic(_Out):
    id: int
    flag_id: int
    decision: Decision
    comment: str
    by: str
    at: datetime


class FlagPublic(_Out):
    id: int
    batch: int
    batch_label: str
    part: str
    step: str
    at: str
    target: str
    required: Any = None
    achieved: Any = None
    margin: Any = Field(default=None, description='By how much the target is missed, e.g. "-10 min".')
    margin_value: float | None = Field(default=None, description="The margin as a number, in margin_unit.")
    margin_unit: str | None = None
    message: str | None = None
    facts: dict[str, float | None] | None = Field(
        default=None, description="The numbers the texts say (degC, K, s from the step's start, P)."
    )
    status: FlagStatus
    dispositions: list[DispositionPublic]


class FlagPage(_Out):
    items: list[FlagPublic]
    total: int
    limit: int
    offset: int


class RerunCreate(BaseModel):
    model_config = ConfigDict(extra="forbid")

    durations: dict[StoredLine, StoredLine] = Field(
        min_length=1,
        max_length=MAX_STEPS,
        description='New step durations, e.g. {"soak": "4 h"}.',
        examples=[{"soak": "4 h"}],
    )


class PartFlags(_Out):
    flagged: bool | None
    flags: list[dict[str, Any]]


Change = Literal["cleared", "new", "still-flagged", "pass", "pending"]


class ComparePart(_Out):
    id: str
    before: PartFlags
    after: PartFlags
    change: Change


class ComparePublic(_Out):
    before: int
    after: int
    parts: list[ComparePart]


class SuggestPublic(_Out):
    step: str
    duration_s: float | None
    duration: str | None = None
    limiting_part: str | None
    reason: str | None = None
    simulations: int = 0
    method: str = "search"
    how: str = ""


class HealthPublic(_Out):
    status: Literal["ok", "degraded"]
    database: str
    broker: str
    mode: Literal["celery", "in-process"]
