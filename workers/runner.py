"""Running one job to its end, with no queue in sight: the Celery task and the in-process runner both
call :func:`execute_job` with a job id.

A job is:

1. claimed: attempts counted, a lease taken for this execution (its owner), the batch marked running,
   and queued sibling jobs of the same batch taken along (SKIP LOCKED), up to ``SOAKLINE_GROUP_PARTS``
   and about ``SOAKLINE_GROUP_SECONDS`` of estimated computing (``workers.cost``); then the batch is
   passed on (``relay``: a message for its next queued job), so that other free workers join in;
2. computed: the engine on the stored batch, one vectorised call for the group (``run_batch`` on the
   group's parts; part by part with ``run_part`` if that fails), pure: no database inside, while a
   heartbeat thread renews the group's lease;
3. saved: each result inserted once with its flags and its job marked done, in one transaction, so a
   duplicate delivery changes nothing;
4. finished: the batch becomes done (or failed) by counting finished job rows in a guarded update.

Database errors that pass (:func:`is_transient`) propagate for the caller to retry; any other error of
the computation fails the part's job with its message (a bad part must not block the batch forever).
"""

from __future__ import annotations

import logging
import random
import threading
from collections.abc import Sequence
from enum import StrEnum

from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from models import BatchSpec
from models import repository as jobs_repo
from models.resolved import stored_spec
from models.results import PartResult
from models.settings import Settings, get_settings
from models.store import OutageLog, is_outage, session_factory, session_scope
from models.tables import Batch, Job, JobStatus
from workers import jobs
from workers.cost import part_costs
from workers.dispatch import Dispatcher

__all__ = ["Heartbeat", "Outcome", "backoff_s", "compute", "execute_job", "is_transient", "load_batch_spec"]

log = logging.getLogger(__name__)


class Outcome(StrEnum):
    """What :func:`execute_job` did with the job it was given."""

    DONE = "done"
    FAILED = "failed"
    SKIPPED = "skipped"  # finished already, run by another worker, or given up


def backoff_s(retries: int, cap_s: float) -> float:
    """Exponential backoff with jitter: about 1, 2, 4 ... seconds, never above ``cap_s``."""
    return min(cap_s, 2.0**retries) * (0.5 + random.random() / 2)


def is_transient(exc: BaseException) -> bool:
    """A database error that a later try can get past (the server restarting, a dropped connection)."""
    return is_outage(exc)


# -- the stored batch ---------------------------------------------------------------------------------


_SpecKey = tuple[str, int, str]
_specs: dict[_SpecKey, BatchSpec] = {}
_specs_lock = threading.Lock()  # the in-process runner and the API's threads call this at once
_SPEC_CACHE_SIZE = 32
_SPEC_CACHE_PARTS = 50_000  # and at most this many parts in all (a spec is a few kB per part)


def batch_spec(batch: Batch, database_url: str) -> BatchSpec:
    """The resolved spec of a stored batch row, as validated at submit (no validation here).

    A stored batch never changes, so its spec is kept per process, keyed by database, id and creation
    time (ids restart in a recreated database): a 500-part batch is read once per worker process, not
    once per part, and the pages of a 5,000-part batch rebuild it once, not at every view. The stored
    JSON (a deferred column) is only read on a miss.
    """
    key = (database_url, batch.id, str(batch.created_at))
    with _specs_lock:
        if key in _specs:
            return _specs[key]
    spec = stored_spec(batch)
    with _specs_lock:
        _specs[key] = spec
        while len(_specs) > _SPEC_CACHE_SIZE or (
            len(_specs) > 1 and sum(len(s.parts) for s in _specs.values()) > _SPEC_CACHE_PARTS
        ):
            _specs.pop(next(iter(_specs)))
    return spec


def load_batch_spec(session: Session, batch_id: int, database_url: str) -> BatchSpec:
    """The resolved spec of the stored batch ``batch_id`` (see :func:`batch_spec`)."""
    return batch_spec(session.get_one(Batch, batch_id), database_url)


# -- computing ----------------------------------------------------------------------------------------


def _error_text(exc: BaseException) -> str:
    return f"{type(exc).__name__}: {exc}"[:2000]


def compute(spec: BatchSpec, part_ids: Sequence[str]) -> dict[str, PartResult | Exception]:
    """Result or exception per part: one engine call for the group, part by part if that fails.

    ``jobs.run_batch`` and ``jobs.run_part`` are looked up on the module at each call, so that a test
    can make a part fail on demand by replacing them.
    """
    if len(part_ids) > 1:
        try:
            wanted = set(part_ids)
            sub = spec.model_copy(update={"parts": [p for p in spec.parts if p.id in wanted]})
            return {entry["id"]: entry for entry in jobs.run_batch(sub)["parts"]}
        except Exception as exc:
            if is_transient(exc):
                raise
            log.warning("group of %d parts failed (%s); computing them one by one", len(part_ids), exc)
    out: dict[str, PartResult | Exception] = {}
    for part_id in part_ids:
        try:
            out[part_id] = jobs.run_part(spec, part_id)
        except Exception as exc:
            if is_transient(exc):
                raise
            log.exception("part %s failed", part_id)
            out[part_id] = exc
    return out


# -- the job ------------------------------------------------------------------------------------------


def _save(
    session: Session, group: dict[int, str], results: dict[str, PartResult | Exception], error: str | None
) -> None:
    """Store the group's results (one statement each for results, flags and jobs) and fail the parts
    that have none; rows locked together, in id order, so that two savers never deadlock."""
    rows = session.scalars(select(Job).where(Job.id.in_(list(group))).order_by(Job.id).with_for_update())
    done: list[tuple[Job, PartResult]] = []
    for row in rows:
        if row.status == JobStatus.DONE:
            continue
        outcome = results.get(row.part_id)
        if isinstance(outcome, dict):
            done.append((row, outcome))
        elif isinstance(outcome, Exception):
            jobs_repo.fail_job(row, _error_text(outcome))
        else:
            jobs_repo.fail_job(row, error or "the engine returned no result for this part")
    jobs_repo.save_results(session, done)


def _relay(factory: sessionmaker[Session], relay: Dispatcher, batch_id: int, settings: Settings) -> None:
    """Send a message for the batch's next queued job (a failure is left to the sweeper)."""
    try:
        with session_scope(factory) as session:
            next_id = jobs_repo.next_queued(session, batch_id, settings)
        if next_id is not None:
            relay([next_id])
    except Exception as exc:
        log.warning("batch %s: could not pass the batch on (%s); the sweeper will", batch_id, exc)


class Heartbeat(threading.Thread):
    """Renews the lease of the jobs an execution holds, every ``SOAKLINE_LEASE_S / 3``, until stopped:
    however long a group computes, the sweeper sees its jobs held and sends none of them again. When
    the process dies the renewals stop and the lease runs out."""

    _outage = OutageLog(log, "heartbeat")

    def __init__(self, settings: Settings, job_ids: Sequence[int], owner: str) -> None:
        super().__init__(name=f"soakline-heartbeat-{owner}", daemon=True)
        self.settings, self.job_ids, self.owner = settings, list(job_ids), owner
        self._stopped = threading.Event()

    def run(self) -> None:
        factory = session_factory(self.settings)
        while not self._stopped.wait(self.settings.heartbeat_s):
            try:
                with session_scope(factory) as session:
                    jobs_repo.renew(session, self.job_ids, self.owner, self.settings)
            except Exception as exc:  # the next beat tries again; the lease may run out meanwhile
                if is_transient(exc):
                    self._outage.failed(exc)
                else:
                    log.warning("heartbeat of %s failed: %s: %s", self.owner, type(exc).__name__, exc)
            else:
                self._outage.recovered()

    def __enter__(self) -> Heartbeat:
        self.start()
        return self

    def __exit__(self, *_: object) -> None:
        self._stopped.set()
        self.join(5.0)


_costs: dict[int, tuple[BatchSpec, dict[str, float]]] = {}


def _part_costs(spec: BatchSpec) -> dict[str, float]:
    """Estimated engine seconds per part (``workers.cost``), kept per cached spec."""
    with _specs_lock:
        found = _costs.get(id(spec))
        if found is not None and found[0] is spec:
            return found[1]
    costs = part_costs(spec)
    with _specs_lock:
        if len(_costs) >= _SPEC_CACHE_SIZE:
            _costs.pop(next(iter(_costs)))
        _costs[id(spec)] = (spec, costs)
    return costs


def execute_job(
    job_id: int, settings: Settings | None = None, *, owner: str, relay: Dispatcher | None = None
) -> Outcome:
    """Run one job (and the sibling jobs it takes) to the end, as ``owner``.

    ``owner`` names this execution: a Celery task id (the same on the task's own retries, so a retry
    takes its job back at once), or an in-process runner's claim (:func:`models.repository.claim_next`).
    ``relay`` (the queue's dispatcher) gets the batch's next queued job, if any, as soon as this group
    is claimed: a submit sends one message per group's worth of parts rather than one per part, and
    each claim passes the batch on, so that every free worker joins in within milliseconds.
    """
    settings = settings or get_settings()
    factory = session_factory(settings)
    spec: BatchSpec | None = None
    error: str | None = None
    group: dict[int, str] = {}
    with session_scope(factory) as session:
        job, mine = jobs_repo.claim(session, job_id, settings, owner=owner)
        if job is None:
            return Outcome.SKIPPED
        batch_id = job.batch_id
        if mine:
            group = {job.id: job.part_id}
            try:
                spec = load_batch_spec(session, batch_id, settings.database_url)
                costs = _part_costs(spec)
                group |= {s.id: s.part_id for s in jobs_repo.claim_siblings(session, job, settings, costs)}
            except Exception as exc:
                if is_transient(exc):
                    raise
                log.exception("batch %s: its stored spec cannot be used", batch_id)
                error = _error_text(exc)
    if group and relay is not None:
        _relay(factory, relay, batch_id, settings)
    if not group:
        if job.status == JobStatus.FAILED:  # given up just now: its batch may be complete
            with session_scope(factory) as session:
                jobs_repo.finish_batch(session, batch_id)
        return Outcome.SKIPPED

    with Heartbeat(settings, list(group), owner):
        results = compute(spec, list(group.values())) if spec is not None and error is None else {}
    with session_scope(factory) as session:
        _save(session, group, results, error)
    # Separate transaction: the count must see this job's committed row (see finish_batch).
    with session_scope(factory) as session:
        jobs_repo.finish_batch(session, batch_id)
    return Outcome.DONE if isinstance(results.get(group[job_id]), dict) else Outcome.FAILED
