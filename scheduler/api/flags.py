"""Flag review endpoints: open flags across batches, and reviewers' dispositions."""

from __future__ import annotations

from typing import Annotated, Literal

from fastapi import APIRouter, Query

from models.tables import FlagStatus
from scheduler.api import service
from scheduler.api.deps import MAX_ID, CurrentToken, FlagId, Offset, Reviewer, SessionDep
from scheduler.api.schemas import ERROR_RESPONSES, DispositionCreate, DispositionPublic, FlagPage

router = APIRouter(prefix="/flags", tags=["flags"], responses=ERROR_RESPONSES)


@router.get("", response_model=FlagPage)
def list_flags(
    session: SessionDep,
    _: CurrentToken,
    batch: Annotated[int | None, Query(ge=1, le=MAX_ID, description="Only this batch.")] = None,
    status: Annotated[FlagStatus | Literal["all"], Query()] = FlagStatus.OPEN,
    limit: Annotated[int, Query(ge=1, le=1000)] = 100,
    offset: Offset = 0,
) -> FlagPage:
    """Flags (open ones unless ``status`` says otherwise), each naming its batch, part, step and margin."""
    return service.list_flags(session, batch, None if status == "all" else FlagStatus(status), limit, offset)


@router.post("/{flag_id}/disposition", status_code=201, response_model=DispositionPublic)
def add_disposition(
    flag_id: FlagId, body: DispositionCreate, session: SessionDep, who: Reviewer
) -> DispositionPublic:
    """Record use-as-is, re-treat or scrap with a comment (reviewer); every disposition is kept."""
    return service.add_disposition(session, flag_id, body.decision, body.comment, who)
