"""A batch survives a Redis restart (its queue lost) and a database outage of a few seconds, with
exactly one result per part in the end."""

from __future__ import annotations

import shutil
import subprocess
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import redis

from models.settings import Settings
from scheduler.api import create_app

from .helpers import (
    TestClient,
    assert_complete_exactly_once,
    auth,
    batch_doc,
    free_port,
    need,
    store_counts,
    wait_for,
)
from .tcpproxy import TcpProxy

pytestmark = pytest.mark.service


class RedisServer:
    """Our own redis-server on a spare loopback port, with no persistence: a restart loses the queue."""

    def __init__(self, port: int, log: Path) -> None:
        self.port, self.log = port, log
        self.proc: subprocess.Popen[bytes] | None = None

    def start(self) -> RedisServer:
        exe = shutil.which("redis-server")
        need(exe is not None, "redis-server is not installed")
        assert exe is not None
        with self.log.open("ab") as log:
            self.proc = subprocess.Popen(
                [
                    exe,
                    "--port",
                    str(self.port),
                    "--bind",
                    "127.0.0.1",
                    "--save",
                    "",
                    "--appendonly",
                    "no",
                    "--daemonize",
                    "no",
                ],
                stdout=log,
                stderr=subprocess.STDOUT,
            )
        client = redis.Redis(port=self.port, socket_connect_timeout=1)
        wait_for(lambda: _pings(client), 20, f"redis-server on port {self.port}")
        client.close()
        return self

    def stop(self) -> None:
        if self.proc is not None and self.proc.poll() is None:
            self.proc.terminate()
            self.proc.wait(10)


def _pings(client: redis.Redis) -> bool:
    try:
        return bool(client.ping())
    except redis.RedisError:
        return False


@pytest.fixture
def own_redis(tmp_path: Path) -> Iterator[RedisServer]:
    port = 6390
    try:
        redis.Redis(port=port, socket_connect_timeout=0.5).ping()
        port = free_port()  # 6390 is taken by someone else: use any spare port
    except redis.RedisError:
        pass
    server = RedisServer(port, tmp_path / "redis.log").start()
    yield server
    server.stop()


def test_redis_restart_mid_batch(
    pg_settings: Settings, own_redis: RedisServer, queue_name: str, tokens: dict[str, str], start_worker: Any
) -> None:
    settings = pg_settings.model_copy(
        update={"broker_url": f"redis://127.0.0.1:{own_redis.port}/0", "queue": queue_name}
    )
    parts = 12
    start_worker(settings, delay_s=0.3)
    with TestClient(create_app(settings, background=False)) as api:
        batch_id = api.post("/batches", json=batch_doc(parts), headers=auth(tokens["planner"])).json()["id"]
    wait_for(lambda: store_counts(settings, batch_id)["results"] >= 2, 180, "first results")
    own_redis.stop()
    before = store_counts(settings, batch_id)
    assert before["results"] < parts
    time.sleep(2)
    own_redis.start()
    wait_for(lambda: store_counts(settings, batch_id)["status"] == "done", 300, "the batch after the restart")
    assert_complete_exactly_once(settings, batch_id, parts)


def test_submit_while_the_broker_is_down_answers_202_and_the_sweeper_sends_it(
    pg_settings: Settings, own_redis: RedisServer, queue_name: str, tokens: dict[str, str], start_worker: Any
) -> None:
    """The documented choice: the batch is committed, the client gets 202 (never a 500 that invites a
    duplicate), /health says the broker is down, and the API's sweeper sends the jobs once it is back."""
    settings = pg_settings.model_copy(
        update={"broker_url": f"redis://127.0.0.1:{own_redis.port}/0", "queue": queue_name}
    )
    own_redis.stop()
    with TestClient(create_app(settings)) as api:
        started = time.monotonic()
        created = api.post("/batches", json=batch_doc(4), headers=auth(tokens["planner"]))
        took = time.monotonic() - started
        assert created.status_code == 202, created.text
        assert took < 15, f"a submit with the broker down took {took:.1f} s"
        batch_id = created.json()["id"]
        health = api.get("/health")
        assert health.status_code == 503
        assert health.json()["broker"].startswith("unreachable") and health.json()["database"] == "ok"
        counts = store_counts(settings, batch_id)
        assert counts["status"] == "queued" and counts["jobs_not_done"] == 4
        own_redis.start()
        start_worker(settings)
        wait_for(lambda: store_counts(settings, batch_id)["status"] == "done", 120, "the batch after Redis")
        assert api.get("/health").status_code == 200
    assert_complete_exactly_once(settings, batch_id, 4)


def test_database_outage_mid_batch(
    pg_settings: Settings, queue_name: str, redis_ok: None, tokens: dict[str, str], start_worker: Any
) -> None:
    from sqlalchemy.engine import make_url

    from .conftest import REDIS_URL

    proxy = TcpProxy(free_port(), 5432).start()
    try:
        via_proxy = make_url(pg_settings.database_url).set(port=proxy.port)
        settings = pg_settings.model_copy(
            update={
                "database_url": via_proxy.render_as_string(hide_password=False),
                "broker_url": REDIS_URL,
                "queue": queue_name,
            }
        )
        parts = 12
        start_worker(settings, delay_s=0.3)
        with TestClient(create_app(settings, background=False)) as api:
            batch_id = api.post("/batches", json=batch_doc(parts), headers=auth(tokens["planner"])).json()[
                "id"
            ]
        # Watch through the direct URL: the proxy is what goes down.
        wait_for(lambda: store_counts(pg_settings, batch_id)["results"] >= 2, 180, "first results")
        proxy.cut()
        time.sleep(4)
        assert store_counts(pg_settings, batch_id)["results"] < parts
        proxy.restore()
        wait_for(
            lambda: store_counts(pg_settings, batch_id)["status"] == "done", 300, "the batch after the outage"
        )
        assert_complete_exactly_once(pg_settings, batch_id, parts)
    finally:
        proxy.cut()
