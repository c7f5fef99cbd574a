"""What the API does, apart from HTTP: submit, read, review, rerun and compare batches.

Writes are one transaction each: a batch, its parts and its job rows are committed together, and only
then are the jobs handed to the queue (``dispatch``), so a worker never sees an id that is not stored.
"""

from __future__ import annotations

import logging
from collections import defaultdict
from collections.abc import Callable, Mapping, Sequence
from datetime import timedelta
from typing import Any, NamedTuple, cast

from sqlalchemy import func, insert, select
from sqlalchemy.orm import Session

from models import BatchSpec, SpecError, parse_batch, with_durations
from models.limits import MAX_PARTS
from models.profiles import ProfileLookup
from models.resolved import dump_resolved, stored_spec
from models.results import CheckBody, PartResult
from models.settings import Settings
from models.tables import (
    Batch,
    BatchStatus,
    Decision,
    Disposition,
    Flag,
    FlagStatus,
    Job,
    JobStatus,
    Part,
    Result,
    utcnow,
)
from scheduler.api import profile_service
from scheduler.api.auth import Principal
from scheduler.api.errors import BatchNotFound, FlagNotFound, InvalidInput, PartNotFound, ResultNotReady
from scheduler.api.schemas import (
    BatchPage,
    BatchPublic,
    BatchSummary,
    Change,
    ComparePart,
    ComparePublic,
    DispositionPublic,
    FlagPage,
    FlagPublic,
    PartFlags,
    PartSummary,
)
from workers.runner import batch_spec, load_batch_spec
from workers.suggest import suggest as suggest_step

__all__ = [
    "add_disposition",
    "compare",
    "get_batch",
    "get_batch_record",
    "get_flag",
    "hand_on",
    "leaders",
    "list_batches",
    "list_flags",
    "open_flag_counts",
    "part_checks",
    "part_result",
    "part_results",
    "part_states",
    "rerun",
    "rerun_ids",
    "submit",
    "suggest",
]

log = logging.getLogger(__name__)

Dispatch = Callable[[list[int]], object]  # a workers.dispatch.Dispatcher, or any sink of job ids


def _spec_problems(exc: SpecError) -> list[tuple[str, str]]:
    return [(p.path, p.message) for p in exc.problems]


def validate(
    doc: Any,
    durations: Mapping[str, str] | None = None,
    *,
    max_parts: int = MAX_PARTS,
    profiles: ProfileLookup | None = None,
) -> BatchSpec:
    """Parse a batch file (and apply rerun durations); InvalidInput naming every bad field. Steps that
    name an exchange profile get its values from ``profiles``."""
    try:
        spec = parse_batch(doc, max_parts=max_parts, profiles=profiles)
        if durations:
            spec = with_durations(spec, dict(durations))
    except SpecError as exc:
        raise InvalidInput("the batch file is invalid", _spec_problems(exc)) from None
    return spec


def _create(
    session: Session,
    settings: Settings,
    doc: Mapping[str, Any],
    spec: BatchSpec,
    who: Principal,
    durations: Mapping[str, str] | None = None,
    parent_id: int | None = None,
) -> tuple[Batch, list[int]]:
    part_ids = [str(part.id) for part in spec.parts]
    label = str(doc.get("batch") or getattr(spec, "batch", "") or "unnamed batch")[:200]
    batch = Batch(
        label=label,
        status=BatchStatus.QUEUED.value,
        spec=dict(doc),
        resolved=dump_resolved(spec),
        durations=dict(durations or {}),
        parent_id=parent_id,
        part_count=len(part_ids),
        submitted_by=who.name,
        created_at=utcnow(),
    )
    session.add(batch)
    session.flush()
    now = utcnow()
    deadline = now + timedelta(seconds=settings.lease_s)
    # Plain multi-row inserts (no ORM objects): a 100-part submit is two statements, not 200 objects.
    session.execute(
        insert(Part),
        [{"batch_id": batch.id, "part_id": pid, "position": n} for n, pid in enumerate(part_ids)],
    )
    job_ids = session.scalars(
        insert(Job).returning(Job.id, sort_by_parameter_order=True),
        [
            {
                "batch_id": batch.id,
                "part_id": pid,
                "status": JobStatus.QUEUED.value,
                "attempts": 0,
                "deadline": deadline,
                "created_at": now,
                "updated_at": now,
            }
            for pid in part_ids
        ],
    ).all()
    return batch, list(job_ids)


def hand_on(dispatch: Dispatch, job_ids: list[int]) -> None:
    """Queue committed jobs. A failure here never fails the request: the batch is stored, its jobs stay
    queued in the database and the sweeper sends them once the broker answers (``/health`` says it is
    down meanwhile), so the client gets its 202 and never a reason to submit a duplicate."""
    try:
        dispatch(job_ids)
    except Exception as exc:
        log.warning("could not queue %d job(s) (%s); the sweeper will", len(job_ids), type(exc).__name__)


def leaders(job_ids: list[int], settings: Settings) -> list[int]:
    """The jobs of a new batch that get a message: one per ``SOAKLINE_GROUP_PARTS`` parts. A worker
    that claims one takes its group and passes the batch on to the next free worker (the runner's
    relay), so one message per part is not needed; the sweeper re-sends any that get lost."""
    return job_ids[:: max(1, settings.group_parts)]


def submit(
    session: Session, settings: Settings, doc: Mapping[str, Any], who: Principal, dispatch: Dispatch
) -> Batch:
    """Validate, store (one transaction), then queue one job per part."""
    spec = validate(doc, max_parts=settings.max_parts, profiles=profile_service.lookup(session))
    batch, job_ids = _create(session, settings, doc, spec, who)
    session.commit()
    hand_on(dispatch, leaders(job_ids, settings))
    return batch


def rerun(
    session: Session,
    settings: Settings,
    batch_id: int,
    durations: Mapping[str, str],
    who: Principal,
    dispatch: Dispatch,
) -> Batch:
    """A new batch with the original's file and changed step durations, linked to the original.

    The new durations are applied once, to the original's resolved spec (which already has any earlier
    rerun's); every problem is reported under ``durations``.
    """
    parent = _batch(session, batch_id)
    merged = {**(parent.durations or {}), **durations}
    try:
        spec = with_durations(stored_spec(parent), durations)
    except SpecError as exc:
        problems = [
            (p if p.startswith("durations") else f"durations.{p}" if p else "durations", m)
            for p, m in _spec_problems(exc)
        ]
        raise InvalidInput("the new step durations are invalid", problems) from None
    batch, job_ids = _create(session, settings, parent.spec, spec, who, merged, parent.id)
    session.commit()
    hand_on(dispatch, leaders(job_ids, settings))
    return batch


def _batch(session: Session, batch_id: int) -> Batch:
    batch = session.get(Batch, batch_id)
    if batch is None:
        raise BatchNotFound(batch_id)
    return batch


def get_batch_record(session: Session, batch_id: int) -> tuple[Batch, BatchSpec]:
    """A stored batch and its resolved spec, read as validated at submit (the pages' way to load one)."""
    batch = _batch(session, batch_id)
    try:
        return batch, batch_spec(batch, session.get_bind().engine.url.render_as_string())
    except SpecError as exc:
        raise InvalidInput(f"batch {batch_id} cannot be shown", _spec_problems(exc)) from None


def list_batches(session: Session, status: BatchStatus | None, limit: int, offset: int) -> BatchPage:
    query = select(Batch)
    if status is not None:
        query = query.where(Batch.status == status)
    total = session.scalar(select(func.count()).select_from(query.subquery())) or 0
    rows = session.scalars(query.order_by(Batch.id.desc()).limit(limit).offset(offset)).all()
    return BatchPage(items=[_summary(b) for b in rows], total=total, limit=limit, offset=offset)


def _summary(batch: Batch) -> BatchSummary:
    return BatchSummary(
        id=batch.id,
        batch=batch.label,
        status=BatchStatus(batch.status),
        parent_id=batch.parent_id,
        durations=batch.durations or {},
        part_count=batch.part_count,
        submitted_by=batch.submitted_by,
        created_at=batch.created_at,
        finished_at=batch.finished_at,
    )


def _flag_views(
    session: Session, batch_id: int, part_ids: Sequence[str] | None = None
) -> dict[str, list[dict[str, Any]]]:
    """The flags of a batch (or of some of its parts) by part, each with its id and review status: one
    query of plain columns, no ORM objects."""
    query = select(Flag.part_id, Flag.id, Flag.status, Flag.body).where(Flag.batch_id == batch_id)
    if part_ids is not None:
        query = query.where(Flag.part_id.in_(list(part_ids)))
    flags: dict[str, list[dict[str, Any]]] = defaultdict(list)
    for part_id, flag_id, status, body in session.execute(query.order_by(Flag.part_id, Flag.seq)):
        flags[part_id].append({**body, "flag_id": flag_id, "status": status})
    return flags


def _part_flags(session: Session, batch_id: int) -> tuple[dict[str, bool], dict[str, list[dict[str, Any]]]]:
    rows = session.execute(select(Result.part_id, Result.flagged).where(Result.batch_id == batch_id))
    flagged = {part_id: bool(is_flagged) for part_id, is_flagged in rows}
    return flagged, _flag_views(session, batch_id)


class PartState(NamedTuple):
    """One part of a batch as the API's batch lists it (the pages read thousands of these: no model)."""

    id: str
    status: JobStatus
    flagged: bool | None  # None until the part has a result
    flags: list[dict[str, Any]]
    error: str | None


def part_states(session: Session, batch_id: int) -> list[PartState]:
    """Per part of a stored batch, in file order: its job's status and error, and once computed whether
    it is flagged and its flags (each with its id and review status)."""
    # Three single-table reads joined here: a join in the database may be planned as nested loops
    # (quadratic) while a new batch's rows are not yet in the table statistics.
    order = session.scalars(
        select(Part.part_id).where(Part.batch_id == batch_id).order_by(Part.position)
    ).all()
    jobs = {
        part_id: (status, error)
        for part_id, status, error in session.execute(
            select(Job.part_id, Job.status, Job.error).where(Job.batch_id == batch_id)
        )
    }
    found = session.execute(select(Result.part_id, Result.flagged).where(Result.batch_id == batch_id))
    flagged = {part_id: bool(is_flagged) for part_id, is_flagged in found}
    flags = _flag_views(session, batch_id)
    return [
        PartState(pid, JobStatus(jobs[pid][0]), flagged.get(pid), flags.get(pid, []), jobs[pid][1])
        for pid in order
    ]


def get_batch(session: Session, batch_id: int) -> BatchPublic:
    """Status of a batch and, per part in file order, its job status and flags."""
    batch = _batch(session, batch_id)
    states = part_states(session, batch_id)
    return BatchPublic(
        **_summary(batch).model_dump(),
        done_count=sum(1 for s in states if s.flagged is not None),
        flagged_count=sum(1 for s in states if s.flagged),
        parts=[PartSummary(**s._asdict()) for s in states],
    )


def part_result(session: Session, batch_id: int, part_id: str) -> PartResult:
    """The stored result of one part, trace included; its flags carry their id and review status."""
    _batch(session, batch_id)
    found = part_results(session, batch_id, [part_id])
    if found:
        return found[0]
    job = session.scalar(select(Job).where(Job.batch_id == batch_id, Job.part_id == part_id))
    if job is None:
        raise PartNotFound(batch_id, part_id)
    raise ResultNotReady(batch_id, part_id, job.status)


def _disposition(d: Disposition) -> DispositionPublic:
    return DispositionPublic(
        id=d.id,
        flag_id=d.flag_id,
        decision=Decision(d.decision),
        comment=d.comment,
        by=d.decided_by,
        at=d.decided_at,
    )


_FLAG_COLUMNS = (
    Flag.id,
    Flag.batch_id,
    Flag.part_id,
    Flag.step,
    Flag.at,
    Flag.target,
    Flag.status,
    Flag.body,
)
_CHUNK = 5000  # ids per IN list


def list_flags(
    session: Session,
    batch_id: int | None,
    status: FlagStatus | None,
    limit: int,
    offset: int,
    part_id: str | None = None,
) -> FlagPage:
    """Flags across batches, newest batch first, each with its dispositions; ``status`` None means
    every status, ``part_id`` (with ``batch_id``) one part's. Plain columns, no ORM objects: a report
    lists thousands."""
    query = select(*_FLAG_COLUMNS)
    if batch_id is not None:
        query = query.where(Flag.batch_id == batch_id)
    if part_id is not None:
        query = query.where(Flag.part_id == part_id)
    if status is not None:
        query = query.where(Flag.status == status)
    total = session.scalar(select(func.count()).select_from(query.subquery())) or 0
    rows = session.execute(
        query.order_by(Flag.batch_id.desc(), Flag.part_id, Flag.seq).limit(limit).offset(offset)
    ).all()
    return FlagPage(items=_flags_public(session, rows), total=total, limit=limit, offset=offset)


def _flags_public(session: Session, rows: Sequence[Any]) -> list[FlagPublic]:
    """Flags (rows of ``_FLAG_COLUMNS``) with their batch's label and their dispositions, oldest first."""
    found = session.execute(select(Batch.id, Batch.label).where(Batch.id.in_({r.batch_id for r in rows})))
    labels = {batch_id: label for batch_id, label in found}
    decided: dict[int, list[DispositionPublic]] = defaultdict(list)
    ids = [r.id for r in rows]
    for start in range(0, len(ids), _CHUNK):
        for d in session.scalars(
            select(Disposition)
            .where(Disposition.flag_id.in_(ids[start : start + _CHUNK]))
            .order_by(Disposition.id)
        ):
            decided[d.flag_id].append(_disposition(d))
    return [
        FlagPublic(
            id=r.id,
            batch=r.batch_id,
            batch_label=labels.get(r.batch_id, ""),
            part=r.part_id,
            step=r.step,
            at=r.at,
            target=r.target,
            required=r.body.get("required"),
            achieved=r.body.get("achieved"),
            margin=r.body.get("margin"),
            margin_value=r.body.get("margin_value"),
            margin_unit=r.body.get("margin_unit"),
            message=r.body.get("message"),
            facts=r.body.get("facts"),
            status=FlagStatus(r.status),
            dispositions=decided.get(r.id, []),
        )
        for r in rows
    ]


def get_flag(session: Session, flag_id: int) -> FlagPublic:
    """One flag with its batch, part and dispositions."""
    row = session.execute(select(*_FLAG_COLUMNS).where(Flag.id == flag_id)).first()
    if row is None:
        raise FlagNotFound(flag_id)
    return _flags_public(session, [row])[0]


def open_flag_counts(session: Session, batch_ids: Sequence[int]) -> dict[int, int]:
    """Open (not yet dispositioned) flags per batch, for those of ``batch_ids`` that have any."""
    rows = session.execute(
        select(Flag.batch_id, func.count())
        .where(Flag.batch_id.in_(list(batch_ids)), Flag.status == FlagStatus.OPEN.value)
        .group_by(Flag.batch_id)
    )
    return {batch_id: count for batch_id, count in rows}


def rerun_ids(session: Session, batch_id: int) -> list[int]:
    """The batches that are reruns of this one, oldest first."""
    return list(session.scalars(select(Batch.id).where(Batch.parent_id == batch_id).order_by(Batch.id)))


def part_results(session: Session, batch_id: int, part_ids: Sequence[str]) -> list[PartResult]:
    """The stored results of some parts of a batch (those computed, in the order asked), traces
    included, each flag with its id and review status: two queries however many parts."""
    found = session.execute(
        select(Result.part_id, Result.body).where(
            Result.batch_id == batch_id, Result.part_id.in_(list(part_ids))
        )
    )
    bodies = {part_id: body for part_id, body in found}
    flags = _flag_views(session, batch_id, list(bodies)) if bodies else {}
    return [cast(PartResult, {**bodies[p], "flags": flags.get(p, [])}) for p in part_ids if p in bodies]


def part_checks(session: Session, batch_id: int) -> dict[str, list[CheckBody]]:
    """Every computed part's checks (each target, pass or fail), by part id. Only the checks are read
    from the stored results (a JSON path in the query), never their traces."""
    rows = session.execute(select(Result.part_id, Result.body["checks"]).where(Result.batch_id == batch_id))
    return {part_id: list(checks or []) for part_id, checks in rows}


def add_disposition(
    session: Session, flag_id: int, decision: Decision, comment: str, who: Principal
) -> DispositionPublic:
    """Record a reviewer's decision; earlier ones stay on record."""
    flag = session.get(Flag, flag_id, with_for_update=True)
    if flag is None:
        raise FlagNotFound(flag_id)
    row = Disposition(
        flag_id=flag.id, decision=decision.value, comment=comment, decided_by=who.name, decided_at=utcnow()
    )
    session.add(row)
    flag.status = FlagStatus.DISPOSITIONED.value
    session.commit()
    return _disposition(row)


def _change(before: bool | None, after: bool | None) -> Change:
    if before is None or after is None:
        return "pending"
    if before and after:
        return "still-flagged"
    if before:
        return "cleared"
    return "new" if after else "pass"


def compare(session: Session, batch_id: int, other_id: int) -> ComparePublic:
    """Per part (matched by id), the flags of one batch against another's."""
    _batch(session, batch_id)
    _batch(session, other_id)
    order = session.scalars(
        select(Part.part_id).where(Part.batch_id == batch_id).order_by(Part.position)
    ).all()
    other = session.scalars(
        select(Part.part_id).where(Part.batch_id == other_id).order_by(Part.position)
    ).all()
    seen = set(order)
    f1, g1 = _part_flags(session, batch_id)
    f2, g2 = _part_flags(session, other_id)
    parts = [
        ComparePart(
            id=pid,
            before=PartFlags(flagged=f1.get(pid), flags=g1.get(pid, [])),
            after=PartFlags(flagged=f2.get(pid), flags=g2.get(pid, [])),
            change=_change(f1.get(pid), f2.get(pid)),
        )
        for pid in [*order, *(p for p in other if p not in seen)]
    ]
    return ComparePublic(before=batch_id, after=other_id, parts=parts)


def suggest(session: Session, settings: Settings, batch_id: int, step: str) -> dict[str, Any]:
    """Shortest duration of ``step`` that clears every flag of the batch (computed now, not queued)."""
    _batch(session, batch_id)
    try:
        spec = load_batch_spec(session, batch_id, settings.database_url)
        out: dict[str, Any] = dict(suggest_step(spec, step))
    except SpecError as exc:
        raise InvalidInput(f"cannot suggest a duration for step {step!r}", _spec_problems(exc)) from None
    except (KeyError, ValueError) as exc:
        raise InvalidInput(
            f"cannot suggest a duration for step {step!r}", [("query.step", str(exc))]
        ) from None
    return out
