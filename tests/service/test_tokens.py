"""Tokens through the CLI: list (name, role, created, last used, expiry), revoke (the API and page
sessions refuse it at once, the name can be reused) and an optional expiry."""

from __future__ import annotations

import time

import pytest
import typer
from typer.testing import CliRunner

from models.settings import Settings
from scheduler.api import create_app
from scheduler.service_cli import register

from .helpers import TestClient, auth

pytestmark = pytest.mark.service


def _cli(*args: str) -> tuple[int, str]:
    app = typer.Typer()
    register(app)
    result = CliRunner().invoke(app, list(args))
    return result.exit_code, result.output


@pytest.fixture
def env(pg_settings: Settings, monkeypatch: pytest.MonkeyPatch) -> Settings:
    monkeypatch.setenv("SOAKLINE_DATABASE_URL", pg_settings.database_url)
    monkeypatch.setenv("COLUMNS", "200")
    return pg_settings


def test_list_revoke_reuse_and_expiry(env: Settings) -> None:
    code, output = _cli("token", "create", "anna", "--role", "reviewer")
    assert code == 0, output
    anna = output.split()[-1]
    code, output = _cli("token", "create", "temp", "--role", "viewer", "--expires", "3 s")
    assert code == 0, output
    temp = output.split()[-1]

    code, listing = _cli("token", "list")
    assert code == 0
    rows = {line.split()[1]: line for line in listing.splitlines() if "anna" in line or "temp" in line}
    assert "reviewer" in rows["anna"] and "UTC" in rows["anna"] and "viewer" in rows["temp"]
    assert anna not in listing and temp not in listing, "a token must never be shown again"

    cookie = {"Cookie": f"soakline_session={anna}"}
    with TestClient(create_app(env, background=False), follow_redirects=False) as api:
        assert api.get("/batches", headers=auth(anna)).status_code == 200
        assert api.get("/ui/batches", headers=cookie).status_code == 200
        assert api.get("/batches", headers=auth(temp)).status_code == 200
        code, listing = _cli("token", "list")
        used = next(line for line in listing.splitlines() if "anna" in line)
        assert used.count("UTC") >= 2, f"last used not recorded: {used}"

        assert _cli("token", "revoke", "anna")[0] == 0
        refused = api.get("/batches", headers=auth(anna))
        assert refused.status_code == 401
        assert refused.json() == {"detail": "unknown, revoked or expired token"}
        page = api.get("/ui/batches", headers=cookie)
        assert page.status_code == 303 and page.headers["location"].startswith("/ui/sign-in")

        code, output = _cli("token", "create", "anna", "--role", "planner")
        assert code == 0, "a revoked name can be reused"
        assert api.get("/batches", headers=auth(output.split()[-1])).status_code == 200
        assert api.get("/batches", headers=auth(anna)).status_code == 401, "the old token stays dead"

        time.sleep(3.2)
        assert api.get("/batches", headers=auth(temp)).status_code == 401
        assert "(expired)" in _cli("token", "list")[1]

    code, output = _cli("token", "revoke", "nobody")
    assert code == 2 and "no token named 'nobody'" in output
    code, output = _cli("token", "create", "x", "--role", "viewer", "--expires", "soon")
    assert code == 2 and "--expires" in output
