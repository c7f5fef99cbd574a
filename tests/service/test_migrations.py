"""Schema upgrades keep the data: a store at the first revision, with batches in it (a plain one, a
rerun, one whose file no longer validates), upgrades to the newest on SQLite and on PostgreSQL."""

from __future__ import annotations

import secrets
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import psycopg
import pytest
import sqlalchemy as sa
import sqlalchemy.dialects.postgresql
from alembic import command

from models import load_batch_file, parse_batch, with_durations
from models.resolved import dump_resolved, load_resolved
from models.store import alembic_config, engine_for

from .conftest import PG_ADMIN
from .helpers import batch_doc, need

DEMO = Path(__file__).resolve().parents[2] / "scheduler" / "demo" / "demo.yaml"


@pytest.fixture
def sqlite_url(tmp_path: Path) -> str:
    return f"sqlite:///{tmp_path / 'old.db'}"


@pytest.fixture
def fresh_pg_url() -> Iterator[str]:
    """An empty PostgreSQL database of this test's own (the session one is already at the newest)."""
    try:
        admin = psycopg.connect(PG_ADMIN, autocommit=True)
    except psycopg.OperationalError as exc:
        need(False, f"PostgreSQL at 127.0.0.1:5432 is not reachable: {exc}")
        raise
    name = f"soakline_migrate_{secrets.token_hex(4)}"
    with admin:
        admin.execute(f'CREATE DATABASE "{name}"')
    url = f"postgresql+psycopg://postgres@127.0.0.1:5432/{name}"
    try:
        yield url
    finally:
        engine_for(url).dispose()
        with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
            admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def _row(
    batch_id: int, spec: dict[str, Any], durations: dict[str, str], parent: int | None
) -> dict[str, Any]:
    return {
        "id": batch_id,
        "label": str(spec.get("batch", "")),
        "status": "done",
        "spec": spec,
        "durations": durations,
        "parent_id": parent,
        "part_count": len(spec.get("parts", [])),
        "submitted_by": "planner",
        "created_at": datetime(2026, 1, 5, 6, 0, tzinfo=UTC),
        "finished_at": None,
    }


def _upgrade_with_data(url: str) -> None:
    config = alembic_config(url)
    command.upgrade(config, "0001")
    plain = batch_doc(3)
    broken = {**batch_doc(1), "schedule": [{"name": "heat", "duration": "1 h", "ambient": "860 degC"}]}
    demo = load_batch_file(DEMO).model_dump(mode="json", by_alias=True, exclude_none=True)
    json_t = sa.JSON().with_variant(sa.dialects.postgresql.JSONB(), "postgresql")
    types: dict[str, sa.types.TypeEngine[Any]] = {
        "spec": json_t,
        "durations": json_t,
        "created_at": sa.DateTime(timezone=True),
    }
    batches = sa.table("batches", *(sa.column(c, types.get(c)) for c in _row(0, {}, {}, None)))
    engine = sa.create_engine(url)
    with engine.begin() as conn:
        conn.execute(
            sa.insert(batches),
            [
                _row(1, plain, {}, None),
                _row(2, plain, {"soak": "2 h"}, 1),
                _row(3, broken, {}, None),
                _row(4, demo, {}, None),
            ],
        )
    command.upgrade(config, "head")
    after = sa.table("batches", sa.column("id"), sa.column("spec", json_t), sa.column("resolved", json_t))
    with engine.connect() as conn:
        stored = dict(conn.execute(sa.select(after.c.id, after.c.resolved)).all())
        kept = dict(conn.execute(sa.select(after.c.id, after.c.spec)).all())
    engine.dispose()
    assert kept[1] == plain and kept[3] == broken, "the files as sent are kept"
    assert load_resolved(stored[1]) == parse_batch(plain)
    rerun = load_resolved(stored[2])
    assert rerun == with_durations(parse_batch(plain), {"soak": "2 h"})
    assert rerun.step("soak").duration_s == 7200.0
    assert stored[3] is None, "a file that no longer validates has no resolved batch"
    assert stored[4] == dump_resolved(load_batch_file(DEMO))


def test_upgrade_keeps_and_resolves_batches_on_sqlite(sqlite_url: str) -> None:
    _upgrade_with_data(sqlite_url)


@pytest.mark.service
def test_upgrade_keeps_and_resolves_batches_on_postgresql(fresh_pg_url: str) -> None:
    _upgrade_with_data(fresh_pg_url)
