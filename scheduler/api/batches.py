"""Batch endpoints: submit, list, read, part results, rerun, compare, suggest."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, BackgroundTasks, Body, Path, Query, Request

from models.tables import BatchStatus
from scheduler.api import service
from scheduler.api.deps import MAX_ID, BatchId, CurrentToken, Offset, Planner, SessionDep, SettingsDep
from scheduler.api.schemas import (
    ERROR_RESPONSES,
    BatchCreated,
    BatchPage,
    BatchPublic,
    ComparePublic,
    RerunCreate,
    SuggestPublic,
)

router = APIRouter(prefix="/batches", tags=["batches"], responses=ERROR_RESPONSES)

_EXAMPLE = {
    "batch": "LD-0417 frame plates",
    "schedule": [{"name": "heat", "duration": "3 h", "ambient": "860 degC", "htc": "150 W/m^2/K"}],
    "parts": [
        {
            "id": "P-101",
            "shape": "plate",
            "thickness": "50 mm",
            "material": "4140",
            "initial": "20 degC",
            "targets": [{"step": "heat", "at": "core", "hold_above": "845 degC", "for": "30 min"}],
        }
    ],
}


def _after_response(request: Request, background: BackgroundTasks) -> service.Dispatch:
    """Hand committed jobs on once the response is sent: the client's 202 does not wait for one broker
    message per part (about 1 ms each), and the jobs are in the database already, so a broker that
    fails meanwhile leaves them to the sweeper exactly as a failure during the request would."""
    dispatch = request.app.state.dispatch

    def later(job_ids: list[int]) -> None:
        background.add_task(service.hand_on, dispatch, job_ids)

    return later


@router.post("", status_code=202, response_model=BatchCreated)
def submit_batch(
    request: Request,
    background: BackgroundTasks,
    session: SessionDep,
    settings: SettingsDep,
    who: Planner,
    doc: Annotated[dict[str, Any], Body(description="The batch file, as JSON.", examples=[_EXAMPLE])],
) -> BatchCreated:
    """Queue a batch (planner). 422 lists every problem of the file with its field path."""
    batch = service.submit(session, settings, doc, who, _after_response(request, background))
    return BatchCreated(id=batch.id, status=BatchStatus(batch.status))


@router.get("", response_model=BatchPage)
def list_batches(
    session: SessionDep,
    _: CurrentToken,
    status: BatchStatus | None = None,
    limit: Annotated[int, Query(ge=1, le=500)] = 50,
    offset: Offset = 0,
) -> BatchPage:
    """Batches, newest first, optionally only those with one status."""
    return service.list_batches(session, status, limit, offset)


@router.get("/{batch_id}", response_model=BatchPublic)
def get_batch(batch_id: BatchId, session: SessionDep, _: CurrentToken) -> BatchPublic:
    """A batch's status and, per part, whether it is flagged and its flags."""
    return service.get_batch(session, batch_id)


@router.get("/{batch_id}/parts/{part_id}")
def get_part(batch_id: BatchId, part_id: str, session: SessionDep, _: CurrentToken) -> dict[str, Any]:
    """One part's result with its trace (time_s, core_c, surface_c, ambient_c, ...); 409 until computed."""
    return dict(service.part_result(session, batch_id, part_id))


@router.post("/{batch_id}/rerun", status_code=202, response_model=BatchCreated)
def rerun_batch(
    batch_id: BatchId,
    body: RerunCreate,
    request: Request,
    background: BackgroundTasks,
    session: SessionDep,
    settings: SettingsDep,
    who: Planner,
) -> BatchCreated:
    """Queue the batch again with new step durations (planner); the new batch links to this one."""
    batch = service.rerun(
        session, settings, batch_id, body.durations, who, _after_response(request, background)
    )
    return BatchCreated(id=batch.id, status=BatchStatus(batch.status), parent_id=batch.parent_id)


@router.get("/{batch_id}/compare/{other_id}", response_model=ComparePublic)
def compare_batches(
    batch_id: BatchId,
    other_id: Annotated[int, Path(ge=1, le=MAX_ID, description="The batch to compare with.")],
    session: SessionDep,
    _: CurrentToken,
) -> ComparePublic:
    """Per part, the flags of this batch (before) against another (after), e.g. a rerun."""
    return service.compare(session, batch_id, other_id)


@router.get("/{batch_id}/suggest", response_model=SuggestPublic)
def suggest_duration(
    batch_id: BatchId,
    session: SessionDep,
    settings: SettingsDep,
    _: CurrentToken,
    step: Annotated[str, Query(min_length=1, description="Name of the schedule step to lengthen.")],
) -> dict[str, Any]:
    """The shortest duration of one step that clears every flag, and the part that limits it."""
    return service.suggest(session, settings, batch_id, step)
