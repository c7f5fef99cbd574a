"""The job rows' repository: every statement that moves a job or closes a batch, each written once.

A job row is the unit of queued work (one part of one batch). Its life: ``queued`` -> claimed
(``running``, with a deadline) -> ``done`` with its result, or ``failed`` with its error; a job past its
deadline is queued again by the sweeper. Every move is a guarded UPDATE (or a row lock), so that any
number of workers, runners and sweepers can act at once without a job being taken twice or a batch
closed twice. The functions take a session and never commit: the caller owns the transaction.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from datetime import datetime, timedelta
from typing import Any, NamedTuple, cast

from sqlalchemy import CursorResult, case, func, select, update
from sqlalchemy.dialects import postgresql, sqlite
from sqlalchemy.orm import Session

from models.results import PartResult, json_safe
from models.settings import Settings
from models.tables import Batch, BatchStatus, Flag, Job, JobStatus, Result, utcnow

__all__ = [
    "StaleJob",
    "claim",
    "claim_next",
    "claim_siblings",
    "fail_job",
    "find_stale",
    "finish_batch",
    "mark_unsent",
    "next_queued",
    "open_batch_ids",
    "release",
    "renew",
    "requeue_stale",
    "save_results",
]

_UNFINISHED = (JobStatus.QUEUED, JobStatus.RUNNING)
_FINISHED = (JobStatus.DONE, JobStatus.FAILED)


def _guarded(stmt: Any) -> Any:
    return stmt.execution_options(synchronize_session=False)


def _hit(session: Session, stmt: Any) -> bool:
    """Run a guarded UPDATE; True when it changed a row (the guard held)."""
    result = cast(CursorResult[Any], session.execute(_guarded(stmt)))
    return bool(result.rowcount)


# -- taking jobs --------------------------------------------------------------------------------------


def _lease_end(settings: Settings) -> datetime:
    return utcnow() + timedelta(seconds=settings.lease_s)


def claim(session: Session, job_id: int, settings: Settings, *, owner: str) -> tuple[Job | None, bool]:
    """Lock the job row and take it for ``owner`` (or fail it past its attempts); True when ``owner``
    runs it.

    A job whose result is stored is already ``done``: result and status are written together. A job
    held by another owner whose lease has not run out (a live worker, or a sibling it took, see
    :func:`claim_siblings`) is left to it; once the lease runs out the sweeper queues it again. The
    same owner takes its own job back (a retry of the same task, or a runner that marked it running
    with :func:`claim_next`). Every take counts an attempt; a take whose transaction rolled back did not
    happen. The batch goes from queued to running with its first job.
    """

    def held_elsewhere(row: Job) -> bool:
        return row.status == JobStatus.RUNNING and row.owner != owner and row.deadline > utcnow()

    # Most messages of a grouped batch find their job done or held: say so without taking a lock.
    job = session.get(Job, job_id)
    if job is None or job.status in _FINISHED or held_elsewhere(job):
        return job, False
    job = session.get(Job, job_id, with_for_update=True, populate_existing=True)
    if job is None or job.status in _FINISHED or held_elsewhere(job):
        return job, False
    job.attempts += 1
    if job.attempts > settings.max_attempts:
        job.status = JobStatus.FAILED
        job.error = (
            f"gave up after {settings.max_attempts} attempts (each ended without a result: the worker "
            "was lost or the database failed)"
        )
        return job, False
    job.status = JobStatus.RUNNING
    job.owner = owner
    job.deadline = _lease_end(settings)
    _hit(
        session,
        update(Batch)
        .where(Batch.id == job.batch_id, Batch.status == BatchStatus.QUEUED)
        .values(status=BatchStatus.RUNNING.value),
    )
    return job, True


def claim_siblings(
    session: Session, job: Job, settings: Settings, cost_s: Mapping[str, float] | None = None
) -> list[Job]:
    """Take more queued parts of the same batch, to compute them in one vectorised engine call.

    The engine is much faster per part on a group than part by part, so a worker takes up to
    ``SOAKLINE_GROUP_PARTS`` jobs at once, and no more than ``SOAKLINE_GROUP_SECONDS`` of estimated
    computing (``cost_s`` per part id; the first job counts too), and never more than half of what is
    still queued, so that the other workers get a share of a small batch. Their own messages, when they
    arrive, find them held or done and are skipped. Rows are locked with SKIP LOCKED: two workers never
    take the same sibling.
    """
    if settings.group_parts <= 1:
        return []
    costs = cost_s or {}
    budget = settings.group_seconds - costs.get(job.part_id, 0.0)
    if budget <= 0:
        return []
    queued = session.scalar(
        select(func.count())
        .select_from(Job)
        .where(Job.batch_id == job.batch_id, Job.status == JobStatus.QUEUED)
    )
    take = min(settings.group_parts - 1, math.ceil((queued or 0) / 2))
    if take <= 0:
        return []
    rows = list(
        session.scalars(
            select(Job)
            .where(Job.batch_id == job.batch_id, Job.status == JobStatus.QUEUED, Job.id != job.id)
            .order_by(Job.id)
            .limit(take)
            .with_for_update(skip_locked=True)
        )
    )
    taken = []
    for row in rows:
        budget -= costs.get(row.part_id, 0.0)
        if budget < 0:
            break
        taken.append(row)
    if taken:  # one statement for the group, not one per row
        _hit(
            session,
            update(Job)
            .where(Job.id.in_([row.id for row in taken]))
            .values(
                status=JobStatus.RUNNING.value,
                attempts=Job.attempts + 1,
                owner=job.owner,
                deadline=job.deadline,
                updated_at=utcnow(),
            ),
        )
    return taken


def next_queued(session: Session, batch_id: int, settings: Settings) -> int | None:
    """The first job of a batch still queued after a claim, for the next message (see workers.runner);
    the batch's queued jobs get a fresh deadline, since a worker is evidently on the batch (rows another
    claim holds are skipped, not waited for)."""
    waiting = (
        select(Job.id)
        .where(Job.batch_id == batch_id, Job.status == JobStatus.QUEUED)
        .with_for_update(skip_locked=True)
        .scalar_subquery()
    )
    _hit(session, update(Job).where(Job.id.in_(waiting)).values(deadline=_lease_end(settings)))
    return session.scalar(
        select(Job.id)
        .where(Job.batch_id == batch_id, Job.status == JobStatus.QUEUED)
        .order_by(Job.id)
        .limit(1)
    )


def claim_next(session: Session, settings: Settings, owner: str, tries: int = 5) -> int | None:
    """Take the oldest queued job (guarded update) for an in-process runner; None when there is none."""
    for _ in range(tries):
        job_id = session.scalar(
            select(Job.id).where(Job.status == JobStatus.QUEUED).order_by(Job.id).limit(1)
        )
        if job_id is None:
            return None
        if _hit(
            session,
            update(Job)
            .where(Job.id == job_id, Job.status == JobStatus.QUEUED)
            .values(status=JobStatus.RUNNING.value, owner=owner, deadline=_lease_end(settings)),
        ):
            return job_id
    return None


def renew(session: Session, job_ids: Sequence[int], owner: str, settings: Settings) -> int:
    """Push out the lease of the running jobs ``owner`` holds (its heartbeat); how many it still holds."""
    result = cast(
        CursorResult[Any],
        session.execute(
            _guarded(
                update(Job)
                .where(Job.id.in_(list(job_ids)), Job.status == JobStatus.RUNNING, Job.owner == owner)
                .values(deadline=_lease_end(settings))
            )
        ),
    )
    return int(result.rowcount)


def release(session: Session, job_ids: Sequence[int], owner: str) -> None:
    """Put running jobs that ``owner`` holds back in line at once (a transient error), instead of at the
    end of their lease."""
    _hit(
        session,
        update(Job)
        .where(Job.id.in_(list(job_ids)), Job.status == JobStatus.RUNNING, Job.owner == owner)
        .values(status=JobStatus.QUEUED.value, owner=None, deadline=utcnow()),
    )


# -- results ------------------------------------------------------------------------------------------


def _insert_ignore(session: Session, table: Any) -> Any:
    dialect = session.get_bind().dialect.name
    return (postgresql.insert if dialect == "postgresql" else sqlite.insert)(table)


def save_results(session: Session, done: Sequence[tuple[Job, PartResult]]) -> set[str]:
    """Store parts' results and flags once and mark their jobs done; the part ids this call wrote.

    One statement each for the results, their flags and the jobs, whatever the size of the group. The
    result insert is ``ON CONFLICT DO NOTHING`` on (batch, part) and flags go in only for the results
    that took, all in the caller's transaction: a duplicate delivery changes nothing.
    """
    if not done:
        return set()
    now = utcnow()
    bodies = {job.part_id: json_safe(result) for job, result in done}
    batch_id = done[0][0].batch_id
    inserted = set(
        session.scalars(
            _insert_ignore(session, Result)
            .values(
                [
                    {
                        "batch_id": job.batch_id,
                        "part_id": job.part_id,
                        "flagged": bool(result["flagged"]),
                        "body": bodies[job.part_id],
                        "created_at": now,
                    }
                    for job, result in done
                ]
            )
            .on_conflict_do_nothing(index_elements=["batch_id", "part_id"])
            .returning(Result.part_id)
        )
    )
    flags = [
        {
            "batch_id": batch_id,
            "part_id": part_id,
            "seq": seq,
            "step": flag["step"],
            "at": flag["at"],
            "target": flag["target"],
            "status": "open",
            "body": flag,
            "created_at": now,
        }
        for part_id in sorted(inserted)
        for seq, flag in enumerate(cast(dict[str, Any], bodies[part_id])["flags"])
    ]
    if flags:
        session.execute(
            _insert_ignore(session, Flag)
            .values(flags)
            .on_conflict_do_nothing(index_elements=["batch_id", "part_id", "seq"])
        )
    _hit(
        session,
        update(Job)
        .where(Job.id.in_([job.id for job, _ in done]))
        .values(status=JobStatus.DONE.value, error=None, owner=None, updated_at=now),
    )
    return inserted


def fail_job(job: Job, error: str) -> None:
    """The part cannot be computed: the job ends ``failed`` with what went wrong."""
    job.status = JobStatus.FAILED
    job.error = error[:2000]


def finish_batch(session: Session, batch_id: int) -> bool:
    """Mark the batch done or failed when every job row is finished; True when this call did it.

    The UPDATE is guarded by the batch's current status and by a count of finished job rows, so that of
    several workers finishing the last parts at once exactly one flips it, and only once all are in.
    A cheap look for any unfinished job comes first: while one exists, that job's own finish (which
    commits later and so sees this one) is the one that can close the batch.
    """
    unfinished = session.scalar(
        select(Job.id).where(Job.batch_id == batch_id, Job.status.in_(_UNFINISHED)).limit(1)
    )
    if unfinished is not None:
        return False
    finished = (
        select(func.count())
        .select_from(Job)
        .where(Job.batch_id == batch_id, Job.status.in_(_FINISHED))
        .scalar_subquery()
    )
    failed = (
        select(func.count())
        .select_from(Job)
        .where(Job.batch_id == batch_id, Job.status == JobStatus.FAILED)
        .scalar_subquery()
    )
    return _hit(
        session,
        update(Batch)
        .where(
            Batch.id == batch_id,
            Batch.status.in_([BatchStatus.QUEUED, BatchStatus.RUNNING]),
            finished >= Batch.part_count,
        )
        .values(
            status=case((failed > 0, BatchStatus.FAILED.value), else_=BatchStatus.DONE.value),
            finished_at=utcnow(),
        ),
    )


def open_batch_ids(session: Session, limit: int = 500) -> Sequence[int]:
    """Batches still queued or running whose jobs are all finished: the sweeper closes them (their last
    finish was lost). One query, however many batches are open."""
    unfinished = select(Job.id).where(Job.batch_id == Batch.id, Job.status.in_(_UNFINISHED)).exists()
    return session.scalars(
        select(Batch.id)
        .where(Batch.status.in_([BatchStatus.QUEUED, BatchStatus.RUNNING]), ~unfinished)
        .limit(limit)
    ).all()


# -- stale and unsent jobs ----------------------------------------------------------------------------


class StaleJob(NamedTuple):
    id: int
    status: str


def find_stale(session: Session, now: datetime, limit: int = 1000) -> list[StaleJob]:
    """Queued or running jobs past their deadline, oldest first."""
    rows = session.execute(
        select(Job.id, Job.status)
        .where(Job.status.in_(_UNFINISHED), Job.deadline < now)
        .order_by(Job.id)
        .limit(limit)
    )
    return [StaleJob(job_id, status) for job_id, status in rows]


def requeue_stale(session: Session, job_ids: Sequence[int], now: datetime, deadline: datetime) -> list[int]:
    """Queue these jobs again if they are still stale at ``now``; the ids this call re-queued.

    Guarded by the deadline: of several sweepers looking at once, one re-queues each job.
    """
    return [
        job_id
        for job_id in job_ids
        if _hit(
            session,
            update(Job)
            .where(Job.id == job_id, Job.status.in_(_UNFINISHED), Job.deadline < now)
            .values(status=JobStatus.QUEUED.value, owner=None, deadline=deadline),
        )
    ]


def mark_unsent(session: Session, job_ids: Sequence[int]) -> None:
    """Queued jobs whose message could not be sent become stale now, so the sweeper sends them later."""
    _hit(
        session,
        update(Job)
        .where(Job.id.in_(list(job_ids)), Job.status == JobStatus.QUEUED)
        .values(deadline=utcnow()),
    )
