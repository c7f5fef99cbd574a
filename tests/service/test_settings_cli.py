"""Configuration fails fast with the variable named; the CLI verbs work against a real API process."""

from __future__ import annotations

import os
import re
import subprocess
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest
import typer
import yaml
from typer.testing import CliRunner

from models.settings import Settings, SettingsError, load_settings
from scheduler.service_cli import register

from .helpers import LAUNCH, ROOT, batch_doc, free_port, make_settings, wait_for

pytestmark = pytest.mark.service


@pytest.mark.parametrize(
    ("env", "named"),
    [
        ({"SOAKLINE_DATABASE_URL": "mysql://x@127.0.0.1/db"}, "SOAKLINE_DATABASE_URL"),
        ({"SOAKLINE_DATABASE_URL": "not a url"}, "SOAKLINE_DATABASE_URL"),
        ({"SOAKLINE_BROKER_URL": "127.0.0.1:6379"}, "SOAKLINE_BROKER_URL"),
        ({"SOAKLINE_LEASE_S": "-3"}, "SOAKLINE_LEASE_S"),
        ({"SOAKLINE_MAX_ATTEMPTS": "many"}, "SOAKLINE_MAX_ATTEMPTS"),
        (
            {"SOAKLINE_LEASE_S": "100", "SOAKLINE_VISIBILITY_TIMEOUT_S": "50"},
            "SOAKLINE_VISIBILITY_TIMEOUT_S",
        ),
        ({"SOAKLINE_API_URL": "127.0.0.1:8000"}, "SOAKLINE_API_URL"),
    ],
)
def test_bad_settings_fail_fast_naming_the_variable(
    monkeypatch: pytest.MonkeyPatch, env: dict[str, str], named: str
) -> None:
    for key, value in env.items():
        monkeypatch.setenv(key, value)
    with pytest.raises(SettingsError, match=named):
        load_settings()


def test_defaults(monkeypatch: pytest.MonkeyPatch) -> None:
    for key in list(os.environ):
        if key.startswith("SOAKLINE_"):
            monkeypatch.delenv(key)
    settings = Settings()
    assert settings.broker_url is None
    assert settings.database_url.startswith("sqlite:///") and settings.database_url.endswith("soakline.db")


def test_empty_broker_means_none(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOAKLINE_BROKER_URL", "")
    assert load_settings().broker_url is None


def _cli() -> typer.Typer:
    app = typer.Typer()
    register(app)
    return app


def test_token_create_prints_token_last_and_stores_only_its_hash(
    pg_settings: Settings, monkeypatch: pytest.MonkeyPatch
) -> None:
    from sqlalchemy import select

    from models.store import session_factory
    from models.tables import ApiToken

    monkeypatch.setenv("SOAKLINE_DATABASE_URL", pg_settings.database_url)
    result = CliRunner().invoke(_cli(), ["token", "create", "anna", "--role", "reviewer"])
    assert result.exit_code == 0, result.output
    token = result.output.split()[-1]
    assert token.startswith("sl_")
    with session_factory(pg_settings)() as session:
        row = session.scalars(select(ApiToken)).one()
    assert row.name == "anna" and row.role == "reviewer"
    assert token not in row.token_sha256 and len(row.token_sha256) == 64
    again = CliRunner().invoke(_cli(), ["token", "create", "anna", "--role", "viewer"])
    assert again.exit_code == 2 and "taken" in again.output
    bad_role = CliRunner().invoke(_cli(), ["token", "create", "bob", "--role", "admin"])
    assert bad_role.exit_code == 2 and "role" in bad_role.output


@pytest.fixture
def served(pg_settings: Settings, tmp_path: Path) -> Iterator[tuple[str, dict[str, str]]]:
    """`serve` as a real process (no broker: jobs run in it), and the environment a CLI user has."""
    port = free_port()
    env = {k: v for k, v in os.environ.items() if not k.startswith("SOAKLINE_")}
    env.update(
        SOAKLINE_DATABASE_URL=pg_settings.database_url,
        PYTHONPATH=str(ROOT),
        SOAKLINE_API_URL=f"http://127.0.0.1:{port}",
    )
    log = (tmp_path / "serve.log").open("wb")
    proc = subprocess.Popen(
        [*LAUNCH, "serve", "--port", str(port)],
        env=env,
        stdout=log,
        stderr=subprocess.STDOUT,
        cwd=tmp_path,
    )
    try:
        wait_for(lambda: _up(port) or proc.poll() is not None, 60, "the API to start")
        assert proc.poll() is None, (tmp_path / "serve.log").read_text()
        yield f"http://127.0.0.1:{port}", env
    finally:
        proc.terminate()
        proc.wait(20)
        log.close()


def _up(port: int) -> bool:
    try:
        return httpx.get(f"http://127.0.0.1:{port}/health", timeout=1).status_code == 200
    except httpx.HTTPError:
        return False


def _run(env: dict[str, str], *args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [*LAUNCH, *args],
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
        cwd=ROOT,
    )


def test_cli_client_verbs_against_a_real_server(served: tuple[str, dict[str, str]], tmp_path: Path) -> None:
    """As a new user: tokens, submit, status, flags, review, rerun with a longer soak, compare."""
    _url, env = served
    made = _run(env, "token", "create", "pat", "--role", "planner")
    assert made.returncode == 0, made.stderr
    planner = {**env, "SOAKLINE_TOKEN": made.stdout.split()[-1]}
    reviewer = {
        **env,
        "SOAKLINE_TOKEN": _run(env, "token", "create", "rev", "--role", "reviewer").stdout.split()[-1],
    }

    file = tmp_path / "batch.yaml"
    file.write_text(yaml.safe_dump(batch_doc(4, soak="20 min", label="cli batch")))
    sub = _run(planner, "submit", str(file), "--wait", "--timeout", "240")
    assert sub.returncode == 1, sub.stdout + sub.stderr  # some part flagged
    assert "batch 1 queued" in sub.stdout and "planning estimates" in sub.stdout

    status = _run(planner, "status", "1")
    assert status.returncode == 0 and "P-003" in status.stdout
    flags = _run(planner, "flags", "--batch", "1")
    assert flags.returncode == 0 and "soak" in flags.stdout
    assert max(len(line) for line in flags.stdout.splitlines()) <= 80  # a terminal's 80 columns
    assert "core held at or above" in " ".join(flags.stdout.replace("│", " ").split())
    flag_id = re.search(r"│\s*#(\d+)\s*│\s*batch 1\s*│", flags.stdout)
    assert flag_id, flags.stdout
    in_f = _run(planner, "flags", "--batch", "1", "--units", "degF")
    assert "degF" in in_f.stdout and "degC" not in in_f.stdout
    review = _run(reviewer, "review", flag_id.group(1), "--decision", "re-treat", "--comment", "soak again")
    assert review.returncode == 0, review.stderr
    denied = _run(planner, "review", flag_id.group(1), "--decision", "scrap", "--comment", "no")
    assert denied.returncode == 3 and "403" in denied.stderr

    rerun = _run(planner, "rerun", "1", "--set", "soak=5 h 60 min", "--wait", "--timeout", "240")
    assert rerun.returncode == 0, rerun.stdout + rerun.stderr
    assert "batch 2 queued (rerun of 1)" in rerun.stdout and "cleared" in rerun.stdout
    compare = _run(planner, "compare", "1", "2", "--json")
    assert compare.returncode == 0 and '"change": "cleared"' in compare.stdout
    still = _run(planner, "rerun", "1", "--set", "soak=21 min", "--wait", "--timeout", "240")
    assert still.returncode == 1, still.stdout + still.stderr  # as submit --wait: some part flagged
    bad_value = _run(planner, "rerun", "1", "--set", "soak=2 h 30")
    assert bad_value.returncode == 2 and "--set soak='2 h 30': expected a time" in bad_value.stderr
    assert "batch file" not in bad_value.stderr

    bad = tmp_path / "bad.yaml"
    doc = batch_doc(2)
    doc["parts"][0]["thickness"] = "50"
    bad.write_text(yaml.safe_dump(doc))
    invalid = _run(planner, "submit", str(bad))
    assert invalid.returncode == 2 and "parts[0].thickness" in invalid.stderr
    assert "Traceback" not in invalid.stderr
    bad_set = _run(planner, "rerun", "1", "--set", "soak")
    assert bad_set.returncode == 2 and "STEP=DURATION" in bad_set.stderr
    no_token = _run(env, "status", "1")
    assert no_token.returncode == 2 and "SOAKLINE_TOKEN" in no_token.stderr


def test_cli_reports_an_unreachable_api(pg_settings: Settings) -> None:
    env = {k: v for k, v in os.environ.items() if not k.startswith("SOAKLINE_")}
    env.update(SOAKLINE_TOKEN="sl_x", PYTHONPATH=str(ROOT), SOAKLINE_DATABASE_URL=pg_settings.database_url)
    out = _run(env, "status", "1", "--api", f"http://127.0.0.1:{free_port()}")
    assert out.returncode == 3 and "cannot reach the API" in out.stderr and "Traceback" not in out.stderr
    bad_env = {**env, "SOAKLINE_LEASE_S": "soon"}
    out = _run(bad_env, "status", "1")
    assert out.returncode == 2 and "SOAKLINE_LEASE_S" in out.stderr and "Traceback" not in out.stderr
    assert make_settings(pg_settings.database_url).broker_url is None
