"""Job execution: load a part's job by id, compute it with the engine, store the result exactly once.

The same :func:`execute_job` runs inside the Celery task :func:`run_job` and inside the in-process
runner that ``soakline serve`` uses when no broker is configured. A job is:

1. started: attempts counted, deadline pushed out, the batch marked running (guarded update), and
   up to ``SOAKLINE_GROUP_PARTS`` queued sibling jobs of the same batch taken along (SKIP LOCKED);
2. computed: the engine on the batch spec, one vectorised call for the group (``run_batch`` on the
   group's parts; part by part with ``run_part`` if that fails), pure: no database inside;
3. saved: the result inserted with ``ON CONFLICT DO NOTHING`` keyed by (batch, part), its flags only
   when that insert took, the job marked done -- one transaction, so a duplicate delivery changes nothing;
4. finished: the batch becomes done (or failed) by counting finished job rows in a guarded update.

Only named transient errors (:data:`TRANSIENT_ERRORS`) are retried, with capped exponential backoff.
"""

from __future__ import annotations

import logging
import math
import random
import threading
from collections.abc import Iterable, Mapping
from datetime import timedelta
from typing import Any

import kombu.exceptions
import redis.exceptions
from celery import Task
from sqlalchemy import case, func, select, update
from sqlalchemy.dialects import postgresql, sqlite
from sqlalchemy.exc import DBAPIError, InterfaceError, OperationalError
from sqlalchemy.orm import Session

from models.tables import Batch, BatchStatus, Flag, Job, JobStatus, Result, utcnow
from scheduler.settings import Settings, get_settings
from scheduler.store import session_factory, session_scope
from workers.celery_app import TASK_NAME, app

__all__ = [
    "TRANSIENT_ERRORS",
    "backoff_s",
    "execute_job",
    "finish_batch",
    "is_transient",
    "load_batch_spec",
    "publish",
    "run_job",
]

log = logging.getLogger(__name__)

TRANSIENT_ERRORS: tuple[type[BaseException], ...] = (
    OperationalError,  # database went away, connection refused, server restarting
    InterfaceError,  # connection closed under us
    kombu.exceptions.OperationalError,  # broker unreachable while publishing a retry
    redis.exceptions.ConnectionError,
    redis.exceptions.TimeoutError,
)
MAX_TASK_RETRIES = 12


def backoff_s(retries: int, cap_s: float) -> float:
    """Exponential backoff with jitter: about 1, 2, 4 ... seconds, never above ``cap_s``."""
    return min(cap_s, 2.0**retries) * (0.5 + random.random() / 2)


def is_transient(exc: BaseException) -> bool:
    if isinstance(exc, DBAPIError) and exc.connection_invalidated:
        return True
    return isinstance(exc, TRANSIENT_ERRORS)


# -- loading the spec ---------------------------------------------------------------------------------


_SpecKey = tuple[str, int, str]
_specs: dict[_SpecKey, Any] = {}
_specs_lock = threading.Lock()  # the in-process runner calls this from several threads
_SPEC_CACHE_SIZE = 32


def load_batch_spec(session: Session, batch_id: int, database_url: str) -> Any:
    """The validated ``BatchSpec`` of a stored batch, with a rerun's durations applied.

    A stored batch never changes, so its parsed spec is kept per process, keyed by database, id and
    creation time (ids restart in a recreated database): a 500-part file is read and validated once
    per worker process, not once per part.
    """
    from models.loading import parse_batch
    from workers.jobs import with_durations

    created = session.scalar(select(Batch.created_at).where(Batch.id == batch_id))
    key = (database_url, batch_id, str(created))
    with _specs_lock:
        if key in _specs:
            return _specs[key]
    batch = session.get_one(Batch, batch_id)
    spec = parse_batch(batch.spec)
    if batch.durations:
        spec = with_durations(spec, dict(batch.durations))
    with _specs_lock:
        if len(_specs) >= _SPEC_CACHE_SIZE:
            _specs.pop(next(iter(_specs)))
        _specs[key] = spec
    return spec


# -- storing ------------------------------------------------------------------------------------------


def _clean(value: Any) -> Any:
    """JSON-safe copy: numpy scalars and arrays become numbers and lists, non-finite floats None."""
    if isinstance(value, Mapping):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if hasattr(value, "tolist"):
        return _clean(value.tolist())
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, (str, int, bool)) or value is None:
        return value
    return str(value)


def _insert_ignore(session: Session, table: Any) -> Any:
    dialect = session.get_bind().dialect.name
    return (postgresql.insert if dialect == "postgresql" else sqlite.insert)(table)


def save_result(session: Session, job: Job, result: Mapping[str, Any]) -> bool:
    """Store a part's result and flags once; True when this call wrote them."""
    body = _clean(result)
    flags = body.get("flags") or []
    stmt = (
        _insert_ignore(session, Result)
        .values(
            batch_id=job.batch_id,
            part_id=job.part_id,
            flagged=bool(body.get("flagged", bool(flags))),
            body=body,
            created_at=utcnow(),
        )
        .on_conflict_do_nothing(index_elements=["batch_id", "part_id"])
        .returning(Result.id)
    )
    inserted = session.execute(stmt).scalar_one_or_none() is not None
    if inserted and flags:
        session.execute(
            _insert_ignore(session, Flag)
            .values(
                [
                    {
                        "batch_id": job.batch_id,
                        "part_id": job.part_id,
                        "seq": seq,
                        "step": str(flag.get("step", "")),
                        "at": str(flag.get("at", "")),
                        "target": str(flag.get("target", "")),
                        "status": "open",
                        "body": flag,
                        "created_at": utcnow(),
                    }
                    for seq, flag in enumerate(flags)
                ]
            )
            .on_conflict_do_nothing(index_elements=["batch_id", "part_id", "seq"])
        )
    return inserted


def finish_batch(session: Session, batch_id: int) -> bool:
    """Mark the batch done or failed when every job row is finished; True when this call did it.

    The UPDATE is guarded by the batch's current status and by a count of finished job rows, so that of
    several workers finishing the last parts at once exactly one flips it, and only once all are in.
    A cheap look for any unfinished job comes first: while one exists, that job's own finish (which
    commits later and so sees this one) is the one that can close the batch.
    """
    unfinished = session.scalar(
        select(Job.id)
        .where(Job.batch_id == batch_id, Job.status.in_([JobStatus.QUEUED, JobStatus.RUNNING]))
        .limit(1)
    )
    if unfinished is not None:
        return False
    finished = (
        select(func.count())
        .select_from(Job)
        .where(Job.batch_id == batch_id, Job.status.in_([JobStatus.DONE, JobStatus.FAILED]))
        .scalar_subquery()
    )
    failed = (
        select(func.count())
        .select_from(Job)
        .where(Job.batch_id == batch_id, Job.status == JobStatus.FAILED)
        .scalar_subquery()
    )
    stmt = (
        update(Batch)
        .where(
            Batch.id == batch_id,
            Batch.status.in_([BatchStatus.QUEUED, BatchStatus.RUNNING]),
            finished >= Batch.part_count,
        )
        .values(
            status=case((failed > 0, BatchStatus.FAILED.value), else_=BatchStatus.DONE.value),
            finished_at=utcnow(),
        )
        .execution_options(synchronize_session=False)
    )
    return bool(session.execute(stmt).rowcount)  # type: ignore[attr-defined]


# -- the job ------------------------------------------------------------------------------------------


def _start(
    session: Session, job_id: int, settings: Settings, count_attempt: bool, claimed: bool
) -> tuple[Job | None, bool]:
    """Mark the job running (or failed past its attempts); True with it when this call is to run it.

    A job whose result is stored is already ``done``: result and status are written together. A job
    another worker is running (a sibling it took, see :func:`_claim_siblings`) is left to it until its
    deadline; after that the sweeper queues it again.
    """
    job = session.get(Job, job_id, with_for_update=True)
    if job is None or job.status in (JobStatus.DONE, JobStatus.FAILED):
        return job, False
    if job.status == JobStatus.RUNNING and not claimed and job.deadline > utcnow():
        return job, False
    if count_attempt:
        job.attempts += 1
    if job.attempts > settings.max_attempts:
        job.status = JobStatus.FAILED
        job.error = f"gave up after {settings.max_attempts} attempts (worker lost or timed out each time)"
        return job, False
    job.status = JobStatus.RUNNING
    job.deadline = utcnow() + timedelta(seconds=settings.job_timeout_s)
    session.execute(
        update(Batch)
        .where(Batch.id == job.batch_id, Batch.status == BatchStatus.QUEUED)
        .values(status=BatchStatus.RUNNING.value)
        .execution_options(synchronize_session=False)
    )
    return job, True


def _claim_siblings(session: Session, job: Job, settings: Settings) -> list[Job]:
    """Take more queued parts of the same batch, to compute them in one vectorised engine call.

    The engine is much faster per part on a group than part by part, so a worker takes up to
    ``SOAKLINE_GROUP_PARTS`` jobs at once -- but never more than half of what is still queued, so
    that the other workers get a share of a small batch. Their own messages, when they arrive, find
    them running or done and are skipped. Rows are locked with SKIP LOCKED: two workers never take
    the same sibling.
    """
    if settings.group_parts <= 1:
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
    for row in rows:
        row.status = JobStatus.RUNNING
        row.attempts += 1
        row.deadline = job.deadline
    return rows


def _error_text(exc: Exception) -> str:
    return f"{type(exc).__name__}: {exc}"[:2000]


def _compute(spec: Any, part_ids: list[str]) -> dict[str, Any]:
    """Result or exception per part: one engine call for the group, part by part if that fails."""
    from workers import jobs

    if len(part_ids) > 1:
        try:
            wanted = set(part_ids)
            sub = spec.model_copy(update={"parts": [p for p in spec.parts if p.id in wanted]})
            return {entry["id"]: entry for entry in jobs.run_batch(sub)["parts"]}
        except Exception as exc:
            if is_transient(exc):
                raise
            log.warning("group of %d parts failed (%s); computing them one by one", len(part_ids), exc)
    out: dict[str, Any] = {}
    for part_id in part_ids:
        try:
            out[part_id] = jobs.run_part(spec, part_id)
        except Exception as exc:
            if is_transient(exc):
                raise
            log.exception("part %s failed", part_id)
            out[part_id] = exc
    return out


def execute_job(
    job_id: int, settings: Settings | None = None, *, count_attempt: bool = True, claimed: bool = False
) -> str:
    """Run one job (and the sibling jobs it takes) to the end: "done", "failed" or "skipped".

    ``claimed`` says the caller already marked the job running (the in-process runner). Transient
    database errors propagate for the caller to retry; any other error of the computation marks the
    part's job failed with its message (a bad part must not block the batch forever).
    """
    settings = settings or get_settings()
    factory = session_factory(settings)
    spec: Any = None
    error: str | None = None
    with session_scope(factory) as session:
        job, mine = _start(session, job_id, settings, count_attempt, claimed)
        if job is None:
            return "skipped"
        batch_id = job.batch_id
        group: dict[int, str] = {}
        if mine:
            group = {job.id: job.part_id}
            try:
                spec = load_batch_spec(session, batch_id, settings.database_url)
                group |= {s.id: s.part_id for s in _claim_siblings(session, job, settings)}
            except Exception as exc:
                if is_transient(exc):
                    raise
                log.exception("batch %s: its stored file no longer validates", batch_id)
                error = _error_text(exc)
    if not group:
        with session_scope(factory) as session:
            finish_batch(session, batch_id)
        return "skipped"

    results: dict[str, Any] = {}
    if error is None:
        results = _compute(spec, list(group.values()))

    with session_scope(factory) as session:
        for one_id, part_id in sorted(group.items()):
            row = session.get_one(Job, one_id, with_for_update=True)
            outcome = results.get(part_id)
            if row.status == JobStatus.DONE:
                continue
            if isinstance(outcome, dict):
                save_result(session, row, outcome)
                row.status = JobStatus.DONE
                row.error = None
            else:
                row.status = JobStatus.FAILED
                if isinstance(outcome, Exception):
                    row.error = _error_text(outcome)
                else:
                    row.error = error or "the engine returned no result for this part"
    # Separate transaction: the count must see this job's committed row (see finish_batch).
    with session_scope(factory) as session:
        finish_batch(session, batch_id)
    return "done" if isinstance(results.get(group[job_id]), dict) else "failed"


# Celery's decorator is untyped; the function below is fully annotated.
@app.task(  # type: ignore[untyped-decorator]
    name=TASK_NAME, bind=True, acks_late=True, reject_on_worker_lost=True, ignore_result=True
)
def run_job(self: Task[Any, Any], job_id: int) -> str:
    """Celery entry point: the job id is the whole message; everything else is read from the database."""
    settings = get_settings()
    try:
        return execute_job(job_id, settings, count_attempt=self.request.retries == 0)
    except Exception as exc:
        if not is_transient(exc) or self.request.retries >= MAX_TASK_RETRIES:
            # Not retryable here: the job row keeps its deadline and the sweeper queues it again.
            raise
        delay = backoff_s(self.request.retries, settings.retry_backoff_max_s)
        log.warning("job %s: transient %s, retry in %.1f s", job_id, type(exc).__name__, delay)
        raise self.retry(exc=exc, countdown=delay, max_retries=MAX_TASK_RETRIES) from None


def publish(job_ids: Iterable[int], settings: Settings | None = None) -> list[int]:
    """Send one message per job id; returns the ids that could not be sent (broker unreachable)."""
    ids = list(job_ids)
    settings = settings or get_settings()
    sent = 0
    try:
        # One pooled producer (one connection) for the whole list, not one per message.
        with app.producer_or_acquire() as producer:
            for job_id in ids:
                run_job.apply_async((job_id,), queue=settings.queue, producer=producer)
                sent += 1
    except (kombu.exceptions.OperationalError, redis.exceptions.RedisError, OSError) as exc:
        log.warning("broker unreachable (%s): %d job(s) left for the sweeper", exc, len(ids) - sent)
        return ids[sent:]
    return []
