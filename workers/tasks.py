"""Job execution: load a part's job by id, compute it with the engine, store the result exactly once.

The same :func:`execute_job` runs inside the Celery task :func:`run_job` and inside the in-process
runner that ``soakline serve`` uses when no broker is configured. A job is:

1. started: attempts counted, deadline pushed out, the batch marked running (guarded update);
2. computed: ``workers.jobs.run_part`` on the batch spec (pure: no database inside);
3. saved: the result inserted with ``ON CONFLICT DO NOTHING`` keyed by (batch, part), its flags only
   when that insert took, the job marked done -- one transaction, so a duplicate delivery changes nothing;
4. finished: the batch becomes done (or failed) by counting finished job rows in a guarded update.

Only named transient errors (:data:`TRANSIENT_ERRORS`) are retried, with capped exponential backoff.
"""

from __future__ import annotations

import json
import logging
import math
import random
from collections.abc import Iterable, Mapping
from datetime import timedelta
from functools import lru_cache
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


@lru_cache(maxsize=64)
def _cached_spec(database_url: str, batch_id: int, doc_json: str, durations_json: str) -> Any:
    from models.loading import parse_batch

    from workers.jobs import with_durations

    spec = parse_batch(json.loads(doc_json))
    durations = json.loads(durations_json)
    return with_durations(spec, durations) if durations else spec


def load_batch_spec(batch: Batch, database_url: str) -> Any:
    """The validated ``BatchSpec`` of a stored batch, with a rerun's durations applied (cached)."""
    return _cached_spec(
        database_url,
        batch.id,
        json.dumps(batch.spec, sort_keys=True),
        json.dumps(batch.durations or {}, sort_keys=True),
    )


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
    """
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


def _start(session: Session, job_id: int, settings: Settings, count_attempt: bool) -> Job | None:
    job = session.get(Job, job_id)
    if job is None or job.status in (JobStatus.DONE, JobStatus.FAILED):
        return None
    has_result = session.scalar(
        select(Result.id).where(Result.batch_id == job.batch_id, Result.part_id == job.part_id)
    )
    if has_result is not None:
        job.status = JobStatus.DONE
        return None
    if count_attempt:
        job.attempts += 1
    if job.attempts > settings.max_attempts:
        job.status = JobStatus.FAILED
        job.error = f"gave up after {settings.max_attempts} attempts (worker lost or timed out each time)"
        return None
    job.status = JobStatus.RUNNING
    job.deadline = utcnow() + timedelta(seconds=settings.job_timeout_s)
    session.execute(
        update(Batch)
        .where(Batch.id == job.batch_id, Batch.status == BatchStatus.QUEUED)
        .values(status=BatchStatus.RUNNING.value)
        .execution_options(synchronize_session=False)
    )
    return job


def execute_job(job_id: int, settings: Settings | None = None, *, count_attempt: bool = True) -> str:
    """Run one job to the end; returns what happened ("done", "failed", "skipped").

    Transient database errors propagate for the caller to retry; any other error of the computation
    marks the job failed with its message (a bad part must not block the batch forever).
    """
    from workers.jobs import run_part

    settings = settings or get_settings()
    factory = session_factory(settings)
    with session_scope(factory) as session:
        job = _start(session, job_id, settings, count_attempt)
        if job is None:
            batch_id = session.scalar(select(Job.batch_id).where(Job.id == job_id))
            outcome = "skipped"
        else:
            batch = session.get_one(Batch, job.batch_id)
            batch_id, part_id = job.batch_id, job.part_id
    if job is None or batch_id is None:
        if batch_id is not None:
            with session_scope(factory) as session:
                finish_batch(session, batch_id)
        return outcome

    error: str | None = None
    result: Any = None
    try:
        spec = load_batch_spec(batch, settings.database_url)
        result = run_part(spec, part_id)
    except Exception as exc:
        if is_transient(exc):
            raise
        log.exception("job %s (batch %s, part %s) failed", job_id, batch_id, part_id)
        error = f"{type(exc).__name__}: {exc}"

    with session_scope(factory) as session:
        row = session.get_one(Job, job_id, with_for_update=True)
        if error is None:
            save_result(session, row, result)
            row.status = JobStatus.DONE
            row.error = None
        elif row.status != JobStatus.DONE:
            row.status = JobStatus.FAILED
            row.error = error[:2000]
    # Separate transaction: the count must see this job's committed row (see finish_batch).
    with session_scope(factory) as session:
        finish_batch(session, batch_id)
    return "done" if error is None else "failed"


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


def publish(job_ids: Iterable[int]) -> list[int]:
    """Send one message per job id; returns the ids that could not be sent (broker unreachable)."""
    ids = list(job_ids)
    settings = get_settings()
    for n, job_id in enumerate(ids):
        try:
            run_job.apply_async((job_id,), queue=settings.queue)
        except (kombu.exceptions.OperationalError, redis.exceptions.RedisError, OSError) as exc:
            log.warning("broker unreachable (%s): %d job(s) left for the sweeper", exc, len(ids) - n)
            return ids[n:]
    return []
