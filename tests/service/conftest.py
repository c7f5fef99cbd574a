"""Fixtures of the service tests: a fresh PostgreSQL database per session, Redis, tokens, workers.

These tests need the machine's real PostgreSQL (127.0.0.1:5432) and Redis (127.0.0.1:6379). Outside
CI a missing service skips them; with ``CI=true`` it fails them, so that CI can never pass by skipping.
"""

from __future__ import annotations

import sys
from pathlib import Path

# pytest puts tests/ first on sys.path, where a tests/models folder would shadow the models package.
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import secrets
from collections.abc import Iterator
from typing import Any

import psycopg
import pytest
import redis
from sqlalchemy import text

from models.settings import Settings
from models.store import engine_for, migrate

from .helpers import WorkerProcess, make_settings, make_tokens, need

PG_ADMIN = "host=127.0.0.1 port=5432 user=postgres dbname=postgres connect_timeout=3"
REDIS_URL = "redis://127.0.0.1:6379/0"


@pytest.fixture(scope="session")
def pg_url() -> Iterator[str]:
    """URL of a database created for this test session and dropped after it."""
    try:
        admin = psycopg.connect(PG_ADMIN, autocommit=True)
    except psycopg.OperationalError as exc:
        need(False, f"PostgreSQL at 127.0.0.1:5432 is not reachable: {exc}")
        raise
    name = f"soakline_test_{secrets.token_hex(4)}"
    with admin:
        admin.execute(f'CREATE DATABASE "{name}"')
    url = f"postgresql+psycopg://postgres@127.0.0.1:5432/{name}"
    try:
        yield url
    finally:
        engine_for(url).dispose()
        with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
            admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


@pytest.fixture(scope="session")
def queue_name() -> Iterator[str]:
    """A queue of our own on the shared Redis, so parallel runs never take each other's messages."""
    name = f"soakline-test-{secrets.token_hex(4)}"
    yield name
    try:  # leave nothing behind on the shared Redis: the queue and kombu's binding entry
        client = redis.Redis.from_url(REDIS_URL, socket_connect_timeout=2)
        for key in client.scan_iter(match=f"*{name}*"):
            client.delete(key)
        client.close()
    except redis.RedisError:
        pass


@pytest.fixture(scope="session")
def redis_ok() -> None:
    try:
        redis.Redis.from_url(REDIS_URL, socket_connect_timeout=2).ping()
    except redis.RedisError as exc:
        need(False, f"Redis at 127.0.0.1:6379 is not reachable: {exc}")


TABLES = "dispositions, flags, results, jobs, parts, batches, api_tokens, exchange_profiles"


@pytest.fixture
def pg_settings(pg_url: str) -> Settings:
    """Settings on the session database, migrated and emptied before each test."""
    settings = make_settings(pg_url)
    migrate(settings)
    with engine_for(pg_url).begin() as conn:
        conn.execute(text(f"TRUNCATE {TABLES} RESTART IDENTITY CASCADE"))
    return settings


@pytest.fixture
def tokens(pg_settings: Settings) -> dict[str, str]:
    return make_tokens(pg_settings)


@pytest.fixture
def start_worker(tmp_path: Path) -> Iterator[Any]:
    """Factory for worker subprocesses; every one started is stopped at the end of the test."""
    started: list[WorkerProcess] = []

    def start(settings: Settings, concurrency: int = 2, delay_s: float = 0.0) -> WorkerProcess:
        w = WorkerProcess(settings, tmp_path / f"worker{len(started)}.log", concurrency, delay_s)
        started.append(w)
        return w.start()

    yield start
    for w in started:
        w.stop()
