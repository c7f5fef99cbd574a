"""Job semantics on the real PostgreSQL: one result per part whatever the deliveries, failures end the
batch ``failed`` with the other results kept, the sweeper re-queues stale jobs, one flip to done."""

from __future__ import annotations

import importlib
import threading
import time
from datetime import timedelta
from typing import Any

import pytest
from sqlalchemy import select, update
from sqlalchemy.exc import OperationalError

from models import repository as jobs_repo
from models.repository import finish_batch
from models.settings import Settings
from models.store import session_factory, session_scope
from models.tables import Batch, Job, Result, Role, utcnow
from scheduler.api import service
from scheduler.api.auth import Principal
from workers.background import claim_next_job, sweep_once
from workers.runner import execute_job

from .helpers import assert_complete_exactly_once, batch_doc, store_counts

pytestmark = pytest.mark.service

PLANNER = Principal("planner-test", Role.PLANNER)


def _submit(settings: Settings, parts: int) -> tuple[int, list[int]]:
    """A submitted batch and all its job ids (the dispatcher gets only the leaders)."""
    with session_factory(settings)() as session:
        batch = service.submit(session, settings, batch_doc(parts), PLANNER, lambda ids: [])
        ids = session.scalars(select(Job.id).where(Job.batch_id == batch.id).order_by(Job.id)).all()
    return batch.id, list(ids)


def test_jobs_are_committed_before_dispatch(pg_settings: Settings) -> None:
    seen: list[int] = []
    sent: list[int] = []

    def dispatch(ids: list[int]) -> None:
        sent.extend(ids)
        with session_factory(pg_settings)() as other:  # another connection sees them: committed
            seen.extend(other.scalars(select(Job.id).where(Job.id.in_(ids))).all())

    settings = pg_settings.model_copy(update={"group_parts": 2})
    with session_factory(settings)() as session:
        service.submit(session, settings, batch_doc(5), PLANNER, dispatch)
    assert len(sent) == 3, "one message per group's worth of parts: jobs 1, 3 and 5"
    assert seen == sent


def test_a_claim_passes_the_batch_on(pg_settings: Settings) -> None:
    settings = pg_settings.model_copy(update={"group_parts": 3})
    batch_id, job_ids = _submit(settings, 8)
    relayed: list[int] = []

    def relay(ids: Any) -> list[int]:
        relayed.extend(ids)
        return []

    # 8 queued: the first claim takes 3 (the group limit) and passes on the first job still queued.
    assert execute_job(job_ids[0], settings, owner="a", relay=relay) == "done"
    assert relayed == [job_ids[3]]
    assert execute_job(job_ids[3], settings, owner="b", relay=relay) == "done"
    assert execute_job(job_ids[6], settings, owner="c", relay=relay) == "done"
    assert relayed == [job_ids[3], job_ids[6]], "nothing left to pass on after the last group"
    assert_complete_exactly_once(settings, batch_id, 8)


def test_redelivery_and_concurrent_duplicates_store_one_result(pg_settings: Settings) -> None:
    batch_id, job_ids = _submit(pg_settings, 4)
    outcomes: list[str] = []
    threads = [
        threading.Thread(
            target=lambda j=j, k=k: outcomes.append(execute_job(j, pg_settings, owner=f"t{j}.{k}"))
        )
        for j in job_ids
        for k in range(3)
    ]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert "done" in outcomes and set(outcomes) <= {"done", "skipped"}
    assert execute_job(job_ids[0], pg_settings, owner="late") == "skipped"
    assert_complete_exactly_once(pg_settings, batch_id, 4)


def test_a_failing_part_fails_its_job_and_the_batch_keeps_the_rest(
    pg_settings: Settings, monkeypatch: pytest.MonkeyPatch
) -> None:
    jobs = importlib.import_module("workers.jobs")
    real_part, real_batch = jobs.run_part, jobs.run_batch

    def run_part(batch: Any, part_id: str) -> dict[str, Any]:
        if part_id == "P-001":
            raise ArithmeticError("no convergence for P-001")
        return dict(real_part(batch, part_id))

    def run_batch(batch: Any) -> dict[str, Any]:
        if any(p.id == "P-001" for p in batch.parts):
            raise ArithmeticError("no convergence for P-001")
        return dict(real_batch(batch))

    # The one way to make a part fail on demand: the engine raising for it, alone or in a group.
    monkeypatch.setattr(jobs, "run_part", run_part)
    monkeypatch.setattr(jobs, "run_batch", run_batch)
    batch_id, job_ids = _submit(pg_settings, 3)
    for j in job_ids:
        execute_job(j, pg_settings, owner="test")
    counts = store_counts(pg_settings, batch_id)
    assert counts["status"] == "failed" and counts["results"] == 2
    with session_factory(pg_settings)() as session:
        body = service.get_batch(session, batch_id)
    failed = next(p for p in body.parts if p.id == "P-001")
    assert failed.status == "failed" and failed.error and "no convergence" in failed.error


def test_a_job_that_keeps_dying_is_given_up(pg_settings: Settings) -> None:
    batch_id, job_ids = _submit(pg_settings, 2)
    with session_scope(session_factory(pg_settings)) as session:
        session.execute(update(Job).where(Job.id == job_ids[0]).values(attempts=pg_settings.max_attempts))
    assert execute_job(job_ids[0], pg_settings, owner="late") == "skipped"
    assert execute_job(job_ids[1], pg_settings, owner="test") == "done"
    counts = store_counts(pg_settings, batch_id)
    assert counts["status"] == "failed" and counts["results"] == 1


def test_sweeper_requeues_stale_jobs_once(pg_settings: Settings) -> None:
    batch_id, job_ids = _submit(pg_settings, 3)
    assert claim_next_job(pg_settings, "runner") == job_ids[0]
    past = utcnow() - timedelta(seconds=1)
    with session_scope(session_factory(pg_settings)) as session:
        session.execute(update(Job).where(Job.id.in_(job_ids[:2])).values(deadline=past))
    # In-process mode: the row going back to "queued" is the re-queue.
    assert sweep_once(pg_settings, None) == job_ids[:2]
    assert sweep_once(pg_settings, None) == [], "a second sweeper must not queue them again"
    with session_factory(pg_settings)() as session:
        assert set(session.scalars(select(Job.status).where(Job.batch_id == batch_id))) == {"queued"}

    sent: list[int] = []
    with session_scope(session_factory(pg_settings)) as session:
        session.execute(update(Job).where(Job.id == job_ids[2]).values(status="running", deadline=past))

    def publish(ids: Any) -> list[int]:
        sent.extend(ids)
        return []

    assert sweep_once(pg_settings, publish) == [job_ids[2]]
    assert sent == [job_ids[2]]


def test_sweeper_closes_a_batch_whose_last_finish_was_lost(pg_settings: Settings) -> None:
    batch_id, job_ids = _submit(pg_settings, 2)
    for j in job_ids:
        execute_job(j, pg_settings, owner="test")
    with session_scope(session_factory(pg_settings)) as session:
        session.execute(update(Batch).where(Batch.id == batch_id).values(status="running"))
    assert store_counts(pg_settings, batch_id)["status"] == "running"
    sweep_once(pg_settings, None)
    assert store_counts(pg_settings, batch_id)["status"] == "done"
    with session_scope(session_factory(pg_settings)) as session:
        assert finish_batch(session, batch_id) is False, "done is final: a second flip must not happen"
        assert session.scalar(select(Result.id).where(Result.batch_id == batch_id).limit(1)) is not None


def test_a_group_longer_than_its_lease_is_not_sent_again(
    pg_settings: Settings, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The heartbeat renews the lease of a group that computes for several leases: no sweep re-sends it
    (it would be computed twice), and each job counts one attempt."""
    settings = pg_settings.model_copy(update={"lease_s": 3.0})
    jobs = importlib.import_module("workers.jobs")
    real_batch = jobs.run_batch

    def slow_batch(batch: Any) -> dict[str, Any]:
        time.sleep(3 * settings.lease_s)
        return dict(real_batch(batch))

    monkeypatch.setattr(jobs, "run_batch", slow_batch)
    batch_id, job_ids = _submit(settings, 4)
    worker = threading.Thread(target=execute_job, args=(job_ids[0], settings), kwargs={"owner": "slow"})
    worker.start()
    resent: list[int] = []
    while worker.is_alive():
        resent += sweep_once(settings, lambda ids: [])
        time.sleep(0.3)
    worker.join()
    held = [j for j in job_ids if j not in resent]
    # The job the group left queued is sent again each time its own lease passes (its message may be
    # lost); none of the three the group holds is.
    assert set(resent) == set(job_ids[3:]), "only the job the group did not take may be sent again"
    for j in set(resent):
        execute_job(j, settings, owner="second")
    counts = assert_complete_exactly_once(settings, batch_id, 4)
    assert counts["attempts"] == 4 and len(held) == 3


def test_a_dead_holders_lease_runs_out_and_the_job_is_sent_again(pg_settings: Settings) -> None:
    settings = pg_settings.model_copy(update={"lease_s": 3.0})
    batch_id, job_ids = _submit(settings, 1)
    with session_scope(session_factory(settings)) as session:  # taken by a worker that then died
        assert jobs_repo.claim(session, job_ids[0], settings, owner="dead")[1]
    assert sweep_once(settings, lambda ids: []) == []
    assert execute_job(job_ids[0], settings, owner="other") == "skipped", "the lease is still live"
    time.sleep(settings.lease_s + 0.2)
    sent: list[int] = []

    def send(ids: Any) -> list[int]:
        sent.extend(ids)
        return []

    assert sweep_once(settings, send) == job_ids == sent
    assert execute_job(job_ids[0], settings, owner="other") == "done"
    assert assert_complete_exactly_once(settings, batch_id, 1)["attempts"] == 2


def test_a_retry_after_a_database_error_takes_its_job_back_and_counts_every_attempt(
    pg_settings: Settings, monkeypatch: pytest.MonkeyPatch
) -> None:
    runner = importlib.import_module("workers.runner")
    real_save = runner._save
    calls = {"n": 0}

    def flaky_save(*args: Any) -> None:
        calls["n"] += 1
        if calls["n"] == 1:
            raise OperationalError("INSERT INTO results", {}, Exception("server closed the connection"))
        real_save(*args)

    monkeypatch.setattr(runner, "_save", flaky_save)
    batch_id, job_ids = _submit(pg_settings, 1)
    with pytest.raises(OperationalError):
        execute_job(job_ids[0], pg_settings, owner="celery:task-1")
    # The task's retry (same task id) does not wait for the lease: it is this task's own job.
    assert execute_job(job_ids[0], pg_settings, owner="celery:task-1") == "done"
    counts = assert_complete_exactly_once(pg_settings, batch_id, 1)
    assert counts["attempts"] == 2
