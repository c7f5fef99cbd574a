"""Background loops of the service: the sweeper and the in-process runner.

The sweeper finds jobs with no result past their deadline and queues them again (a worker died, Redis
lost its queue, a publish failed), and closes batches whose last job finished while its worker was
going down. Every step is a guarded UPDATE, so any number of sweepers (one per API process and per
worker) can run at once without double-queuing a job.

The in-process runner is what ``soakline serve`` uses when no broker is configured: threads that claim
queued job rows and run them with the same :func:`workers.tasks.execute_job` as the Celery task.
"""

from __future__ import annotations

import logging
import threading
from collections.abc import Callable, Iterable
from datetime import timedelta

from sqlalchemy import select, update

from models.tables import Batch, BatchStatus, Job, JobStatus, utcnow
from scheduler.settings import Settings
from scheduler.store import session_factory, session_scope

__all__ = ["InProcessRunner", "Sweeper", "claim_next_job", "sweep_once"]

log = logging.getLogger(__name__)
Publish = Callable[[Iterable[int]], list[int]]


def _queue_depth(settings: Settings) -> int | None:
    """Messages waiting in the broker queue, None when the broker cannot be asked."""
    from workers.celery_app import app

    try:
        with app.connection_for_write() as conn:
            conn.ensure_connection(max_retries=1)
            return int(conn.default_channel.queue_declare(queue=settings.queue, passive=True).message_count)
    except Exception as exc:  # a missing queue is an empty one; anything else means "don't know"
        if "NOT_FOUND" in str(exc) or "no queue" in str(exc).lower():
            return 0
        log.warning("cannot read the depth of queue %s: %s", settings.queue, exc)
        return None


def sweep_once(settings: Settings, publish: Publish | None) -> list[int]:
    """One pass: queue stale jobs again and close finished batches; returns the re-queued job ids.

    ``publish`` is None in in-process mode, where putting the row back to ``queued`` is the queuing.
    A stale *queued* job is only re-sent when the broker queue is empty: while messages are still
    waiting, its own message is most likely among them.
    """
    from workers.tasks import finish_batch

    factory = session_factory(settings)
    now = utcnow()
    with session_scope(factory) as session:
        stale = session.execute(
            select(Job.id, Job.status)
            .where(Job.status.in_([JobStatus.QUEUED, JobStatus.RUNNING]), Job.deadline < now)
            .order_by(Job.id)
            .limit(1000)
        ).all()
    ids = [row.id for row in stale]
    waiting = any(row.status == JobStatus.QUEUED for row in stale)
    if publish is not None and waiting and _queue_depth(settings) != 0:
        ids = [row.id for row in stale if row.status == JobStatus.RUNNING]
    claimed: list[int] = []
    deadline = now + timedelta(seconds=settings.job_timeout_s)
    with session_scope(factory) as session:
        for job_id in ids:
            hit = session.execute(
                update(Job)
                .where(
                    Job.id == job_id,
                    Job.status.in_([JobStatus.QUEUED, JobStatus.RUNNING]),
                    Job.deadline < now,
                )
                .values(status=JobStatus.QUEUED.value, deadline=deadline)
                .execution_options(synchronize_session=False)
            )
            if hit.rowcount:  # type: ignore[attr-defined]
                claimed.append(job_id)
    if claimed:
        log.warning("sweeper: %d job(s) had no result past their deadline; queued again", len(claimed))
    if publish is not None and claimed:
        unsent = publish(claimed)
        if unsent:
            with session_scope(factory) as session:
                session.execute(
                    update(Job)
                    .where(Job.id.in_(unsent), Job.status == JobStatus.QUEUED)
                    .values(deadline=utcnow())
                    .execution_options(synchronize_session=False)
                )
    with session_scope(factory) as session:
        open_batches = session.scalars(
            select(Batch.id).where(Batch.status.in_([BatchStatus.QUEUED, BatchStatus.RUNNING])).limit(500)
        ).all()
        for batch_id in open_batches:
            finish_batch(session, batch_id)
    return claimed


class _Loop(threading.Thread):
    def __init__(self, name: str) -> None:
        super().__init__(name=name, daemon=True)
        self._stop_event = threading.Event()

    def stop(self, timeout: float = 10.0) -> None:
        self._stop_event.set()
        if self.is_alive() and threading.current_thread() is not self:
            self.join(timeout)


class Sweeper(_Loop):
    """Runs :func:`sweep_once` every ``SOAKLINE_SWEEP_INTERVAL_S``; errors are logged, never fatal."""

    def __init__(self, settings: Settings, publish: Publish | None) -> None:
        super().__init__("soakline-sweeper")
        self.settings = settings
        self.publish = publish

    def run(self) -> None:
        while not self._stop_event.wait(self.settings.sweep_interval_s):
            try:
                sweep_once(self.settings, self.publish)
            except Exception as exc:  # the database may be down; try again next round
                log.warning("sweeper pass failed: %s", exc)


def claim_next_job(settings: Settings) -> int | None:
    """Take the oldest queued job for this process (guarded update); None when there is none."""
    factory = session_factory(settings)
    for _ in range(5):
        with session_scope(factory) as session:
            job_id = session.scalar(
                select(Job.id).where(Job.status == JobStatus.QUEUED).order_by(Job.id).limit(1)
            )
            if job_id is None:
                return None
            hit = session.execute(
                update(Job)
                .where(Job.id == job_id, Job.status == JobStatus.QUEUED)
                .values(
                    status=JobStatus.RUNNING.value,
                    deadline=utcnow() + timedelta(seconds=settings.job_timeout_s),
                )
                .execution_options(synchronize_session=False)
            )
            if hit.rowcount:  # type: ignore[attr-defined]
                return job_id
    return None


class InProcessRunner:
    """Worker threads inside the API process, for when no broker is configured."""

    def __init__(self, settings: Settings, poll_s: float = 1.0) -> None:
        self.settings = settings
        self.poll_s = poll_s
        self._wake = threading.Event()
        self._stop_event = threading.Event()
        self._threads = [
            threading.Thread(target=self._work, name=f"soakline-runner-{n}", daemon=True)
            for n in range(settings.inprocess_threads)
        ]

    def start(self) -> None:
        for thread in self._threads:
            thread.start()

    def wake(self) -> None:
        """New jobs were committed: look now rather than at the next poll."""
        self._wake.set()

    def stop(self, timeout: float = 10.0) -> None:
        self._stop_event.set()
        self._wake.set()
        for thread in self._threads:
            thread.join(timeout)

    def _release(self, job_id: int) -> None:
        """Put a job that hit a transient error back in line (else the sweeper does, at its deadline)."""
        try:
            with session_scope(session_factory(self.settings)) as session:
                session.execute(
                    update(Job)
                    .where(Job.id == job_id, Job.status == JobStatus.RUNNING)
                    .values(status=JobStatus.QUEUED.value)
                    .execution_options(synchronize_session=False)
                )
        except Exception as exc:
            log.warning("could not release job %s (%s); the sweeper will", job_id, type(exc).__name__)

    def _work(self) -> None:
        from workers.tasks import backoff_s, execute_job, is_transient

        failures = 0
        while not self._stop_event.is_set():
            job_id = None
            try:
                job_id = claim_next_job(self.settings)
                if job_id is not None:
                    execute_job(job_id, self.settings, claimed=True)
                failures = 0
            except Exception as exc:
                if not is_transient(exc):
                    log.exception("in-process runner")
                else:
                    log.warning("in-process runner: %s; retrying", type(exc).__name__)
                failures += 1
                if job_id is not None:
                    self._release(job_id)
                self._stop_event.wait(backoff_s(failures, self.settings.retry_backoff_max_s))
                continue
            if job_id is None:
                self._wake.wait(self.poll_s)
                self._wake.clear()
