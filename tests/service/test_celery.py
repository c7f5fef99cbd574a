"""Real Celery workers over the machine's Redis: a full batch, and a worker SIGKILLed mid-batch."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest

from models.settings import Settings
from scheduler.api import create_app

from .conftest import REDIS_URL
from .helpers import TestClient, assert_complete_exactly_once, auth, batch_doc, store_counts, wait_for

pytestmark = pytest.mark.service


@pytest.fixture
def celery_settings(pg_settings: Settings, queue_name: str, redis_ok: None) -> Settings:
    return pg_settings.model_copy(update={"broker_url": REDIS_URL, "queue": queue_name})


@pytest.fixture
def api(celery_settings: Settings) -> Iterator[TestClient]:
    # No background loops here: the sweeping the tests rely on is the workers' own.
    with TestClient(create_app(celery_settings, background=False)) as client:
        yield client


def test_full_batch_through_api_and_worker(
    celery_settings: Settings, api: TestClient, tokens: dict[str, str], start_worker: Any
) -> None:
    start_worker(celery_settings)
    health = api.get("/health").json()
    assert health == {"status": "ok", "database": "ok", "broker": "ok", "mode": "celery"}
    created = api.post("/batches", json=batch_doc(6), headers=auth(tokens["planner"]))
    assert created.status_code == 202
    batch_id = created.json()["id"]
    wait_for(lambda: store_counts(celery_settings, batch_id)["status"] == "done", 300, "the batch")
    assert_complete_exactly_once(celery_settings, batch_id, 6)
    body = api.get(f"/batches/{batch_id}", headers=auth(tokens["viewer"])).json()
    assert body["done_count"] == 6 and all(p["status"] == "done" for p in body["parts"])


def test_sigkill_worker_mid_batch(
    celery_settings: Settings, api: TestClient, tokens: dict[str, str], start_worker: Any
) -> None:
    parts = 12
    worker = start_worker(celery_settings, delay_s=0.4)
    batch_id = api.post("/batches", json=batch_doc(parts), headers=auth(tokens["planner"])).json()["id"]
    wait_for(lambda: store_counts(celery_settings, batch_id)["results"] >= 2, 180, "first results")
    worker.kill()
    before = store_counts(celery_settings, batch_id)
    assert before["results"] < parts, "the batch finished before the kill; the test proves nothing"
    start_worker(celery_settings, delay_s=0.05)
    wait_for(
        lambda: store_counts(celery_settings, batch_id)["status"] == "done", 300, "the batch after the kill"
    )
    counts = assert_complete_exactly_once(celery_settings, batch_id, parts)
    assert counts["attempts"] > parts, "the parts in flight at the kill must have been run again"
