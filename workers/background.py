"""Background loops of the service: the sweeper and the in-process runner.

The sweeper finds jobs with no result past their deadline and queues them again (a worker died, Redis
lost its queue, a publish failed), and closes batches whose last job finished while its worker was
going down. Every step is a guarded UPDATE (:mod:`models.repository`), so any number of sweepers (one
per API process and per worker) can run at once without double-queuing a job.

The in-process runner is what ``soakline serve`` uses when no broker is configured: threads that claim
queued job rows and run them with the same :func:`workers.runner.execute_job` as the Celery task. It is
a :class:`~workers.dispatch.Dispatcher` too: handing it job ids wakes its threads.
"""

from __future__ import annotations

import logging
import threading
import uuid
from collections.abc import Sequence
from datetime import timedelta

from models import repository as jobs_repo
from models.settings import Settings
from models.store import OutageLog, session_factory, session_scope
from models.tables import JobStatus, utcnow
from workers.dispatch import Dispatcher, QueueDispatcher
from workers.runner import backoff_s, execute_job, is_transient

__all__ = ["InProcessRunner", "Sweeper", "claim_next_job", "sweep_once"]

log = logging.getLogger(__name__)


def sweep_once(settings: Settings, dispatch: Dispatcher | None) -> list[int]:
    """One pass: queue stale jobs again and close finished batches; returns the re-queued job ids.

    ``dispatch`` None means the job table is the queue (putting the row back to ``queued`` is the
    queuing). With a broker, a stale *queued* job is only re-sent when the broker queue is empty:
    while messages are still waiting, its own message is most likely among them.
    """
    factory = session_factory(settings)
    now = utcnow()
    with session_scope(factory) as session:
        stale = jobs_repo.find_stale(session, now)
    ids = [row.id for row in stale]
    waiting = any(row.status == JobStatus.QUEUED for row in stale)
    if waiting and isinstance(dispatch, QueueDispatcher) and dispatch.backlog() != 0:
        ids = [row.id for row in stale if row.status == JobStatus.RUNNING]
    with session_scope(factory) as session:
        requeued = jobs_repo.requeue_stale(session, ids, now, now + timedelta(seconds=settings.lease_s))
    if requeued:
        log.warning("sweeper: %d job(s) had no result past their deadline; queued again", len(requeued))
        if dispatch is not None:
            dispatch(requeued)
    with session_scope(factory) as session:
        for batch_id in jobs_repo.open_batch_ids(session):
            jobs_repo.finish_batch(session, batch_id)
    return requeued


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

    def __init__(self, settings: Settings, dispatch: Dispatcher | None) -> None:
        super().__init__("soakline-sweeper")
        self.settings = settings
        self.dispatch = dispatch
        self.outage = OutageLog(log, "sweeper")

    def run(self) -> None:
        while not self._stop_event.wait(self.settings.sweep_interval_s):
            try:
                sweep_once(self.settings, self.dispatch)
            except Exception as exc:  # the database may be down; try again next round
                if is_transient(exc):
                    self.outage.failed(exc)
                else:
                    log.warning("sweeper pass failed: %s: %s", type(exc).__name__, exc)
            else:
                self.outage.recovered()


def claim_next_job(settings: Settings, owner: str) -> int | None:
    """Take the oldest queued job for ``owner`` in this process; None when there is none."""
    with session_scope(session_factory(settings)) as session:
        return jobs_repo.claim_next(session, settings, owner)


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

    def __call__(self, job_ids: Sequence[int], /) -> list[int]:
        """New jobs were committed: look now rather than at the next poll (the rows are the queue)."""
        self._wake.set()
        return []

    def stop(self, timeout: float = 10.0) -> None:
        self._stop_event.set()
        self._wake.set()
        for thread in self._threads:
            thread.join(timeout)

    def _release(self, job_id: int, owner: str) -> None:
        """Put a job that hit a transient error back in line (else the sweeper does, when its lease
        runs out). Its siblings, if it took any, come back with their lease."""
        try:
            with session_scope(session_factory(self.settings)) as session:
                jobs_repo.release(session, [job_id], owner)
        except Exception as exc:
            log.warning("could not release job %s (%s); the sweeper will", job_id, type(exc).__name__)

    def _work(self) -> None:
        failures = 0
        while not self._stop_event.is_set():
            job_id = None
            owner = f"inprocess:{uuid.uuid4().hex}"
            try:
                job_id = claim_next_job(self.settings, owner)
                if job_id is not None:
                    execute_job(job_id, self.settings, owner=owner)
                failures = 0
            except Exception as exc:
                if not is_transient(exc):
                    log.exception("in-process runner")
                else:
                    log.warning("in-process runner: %s; retrying", type(exc).__name__)
                failures += 1
                if job_id is not None:
                    self._release(job_id, owner)
                self._stop_event.wait(backoff_s(failures, self.settings.retry_backoff_max_s))
                continue
            if job_id is None:
                self._wake.wait(self.poll_s)
                self._wake.clear()
