"""PostgreSQL stops answering under the API: every database-backed endpoint answers 503 with Retry-After
and a one-line body, the outage is logged once (no traceback per request), and the API answers as
before when the database is back. The outage is a cut TCP proxy between the API and the machine's
PostgreSQL (which other tests share, so it is never stopped)."""

from __future__ import annotations

import logging
from collections.abc import Iterator
from typing import Any

import pytest
from sqlalchemy.engine import make_url

from models.settings import Settings
from scheduler.api import create_app

from .helpers import TestClient, auth, batch_doc, free_port, wait_for
from .tcpproxy import TcpProxy

pytestmark = pytest.mark.service


@pytest.fixture
def proxied(pg_settings: Settings) -> Iterator[tuple[Settings, TcpProxy]]:
    proxy = TcpProxy(free_port(), 5432).start()
    url = make_url(pg_settings.database_url).set(port=proxy.port).render_as_string(hide_password=False)
    try:
        yield pg_settings.model_copy(update={"database_url": url, "db_wait_s": 1.0}), proxy
    finally:
        proxy.cut()


ENDPOINTS: list[tuple[str, str, dict[str, Any] | None, str]] = [
    ("GET", "/batches", None, "viewer"),
    ("GET", "/batches/1", None, "viewer"),
    ("GET", "/batches/1/parts/P-000", None, "viewer"),
    ("GET", "/batches/1/compare/1", None, "viewer"),
    ("GET", "/batches/1/suggest?step=soak", None, "viewer"),
    ("GET", "/flags", None, "viewer"),
    ("POST", "/batches", batch_doc(2), "planner"),
    ("POST", "/batches/1/rerun", {"durations": {"soak": "2 h"}}, "planner"),
    ("POST", "/flags/1/disposition", {"decision": "scrap", "comment": "cracked"}, "reviewer"),
]


def test_every_database_endpoint_answers_503_during_an_outage(
    proxied: tuple[Settings, TcpProxy], tokens: dict[str, str], caplog: pytest.LogCaptureFixture
) -> None:
    settings, proxy = proxied
    with TestClient(create_app(settings, background=False)) as api:
        created = api.post("/batches", json=batch_doc(2), headers=auth(tokens["planner"]))
        assert created.status_code == 202
        proxy.cut()
        caplog.clear()
        with caplog.at_level(logging.INFO):
            for _round in range(3):
                for method, url, body, role in ENDPOINTS:
                    response = api.request(method, url, json=body, headers=auth(tokens[role]))
                    assert response.status_code == 503, (method, url, response.text)
                    assert response.headers["retry-after"] == "5"
                    assert response.json() == {"detail": "the database is not answering; try again shortly"}
                page = api.get("/ui/batches", headers={"Cookie": f"soakline_session={tokens['viewer']}"})
                assert page.status_code == 503 and "not answering" in page.text
                health = api.get("/health")
                assert health.status_code == 503 and health.headers["retry-after"] == "5"
        warnings = [r for r in caplog.records if r.levelno >= logging.WARNING]
        assert [r.getMessage()[:40] for r in warnings] == ["api: the database is not answering (Oper"]
        assert not any(r.exc_info for r in caplog.records), "a traceback was logged"

        proxy.restore()
        wait_for(lambda: api.get("/health").status_code == 200, 30, "the API after the outage")
        again = api.get("/batches/1", headers=auth(tokens["viewer"]))
        assert again.status_code == 200
        assert any("answers again" in r.getMessage() for r in caplog.records)
