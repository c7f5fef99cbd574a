"""Helpers of the service tests: settings, tokens, batch files, waiting, and a real worker subprocess."""

from __future__ import annotations

import os
import secrets
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import pytest

from models.settings import Settings
from models.store import session_factory, session_scope
from models.tables import Role

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]


def need(ok: bool, why: str) -> None:
    """Skip when a service is missing, except in CI where that is a failure."""
    if not ok:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"{why} (CI=true: service tests must run, not skip)")
        pytest.skip(why)


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def make_settings(database_url: str, **kw: Any) -> Settings:
    base: dict[str, Any] = {
        "database_url": database_url,
        "broker_url": None,
        # Short, so that a killed worker's jobs come back quickly; the heartbeat (every 2 s) keeps the
        # jobs of a live worker however long they take.
        "lease_s": 6.0,
        "visibility_timeout_s": 30.0,
        "sweep_interval_s": 0.5,
        "retry_backoff_max_s": 2,
        "max_attempts": 8,
        "db_wait_s": 10.0,
    }
    base.update(kw)
    return Settings(**base)


def make_tokens(settings: Settings) -> dict[str, str]:
    from scheduler.api.auth import create_token

    out = {}
    with session_scope(session_factory(settings)) as session:
        for role in Role:
            out[role.value] = create_token(session, f"{role.value}-{secrets.token_hex(2)}", role)
    return out


def auth(token: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {token}"}


def batch_doc(n: int, soak: str = "1 h", label: str = "test batch") -> dict[str, Any]:
    """A batch file in the README's format: n plates of 20..80 mm, heat, soak, quench.

    Constant heat transfer coefficients keep the engine on its fast linear path: these tests are
    about the service, and a short soak (``soak="20 min"``) leaves the thick plates flagged.
    """
    return {
        "batch": label,
        "schedule": [
            {"name": "heat", "duration": "40 min", "ambient": "860 degC", "htc": "150 W/m^2/K"},
            {"name": "soak", "duration": soak, "ambient": "860 degC", "htc": "150 W/m^2/K"},
            {"name": "quench", "duration": "10 min", "ambient": "60 degC", "htc": "800 W/m^2/K"},
        ],
        "parts": [
            {
                "id": f"P-{i:03d}",
                "shape": "plate",
                "thickness": f"{20 + (i * 7) % 61} mm",
                "material": "4140",
                "initial": "20 degC",
                "targets": [{"step": "soak", "at": "core", "hold_above": "845 degC", "for": "10 min"}],
            }
            for i in range(n)
        ],
    }


def wait_for(predicate: Any, timeout: float, what: str, every: float = 0.2) -> Any:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        value = predicate()
        if value:
            return value
        time.sleep(every)
    raise AssertionError(f"timed out after {timeout:g} s waiting for {what}")


class WorkerProcess:
    """A real Celery worker subprocess in its own process group (so SIGKILL takes all its children)."""

    def __init__(
        self, settings: Settings, log_path: Path, concurrency: int = 2, delay_s: float = 0.0
    ) -> None:
        self.settings = settings
        self.log_path = log_path
        self.concurrency = concurrency
        self.delay_s = delay_s
        self.proc: subprocess.Popen[bytes] | None = None

    def env(self) -> dict[str, str]:
        env = {k: v for k, v in os.environ.items() if not k.startswith("SOAKLINE_")}
        s = self.settings
        env.update(
            SOAKLINE_DATABASE_URL=s.database_url,
            SOAKLINE_BROKER_URL=str(s.broker_url),
            SOAKLINE_QUEUE=s.queue,
            SOAKLINE_LEASE_S=str(s.lease_s),
            SOAKLINE_VISIBILITY_TIMEOUT_S=str(s.visibility_timeout_s),
            SOAKLINE_SWEEP_INTERVAL_S=str(s.sweep_interval_s),
            SOAKLINE_RETRY_BACKOFF_MAX_S=str(s.retry_backoff_max_s),
            SOAKLINE_MAX_ATTEMPTS=str(s.max_attempts),
            SOAKLINE_DB_WAIT_S=str(s.db_wait_s),
            SOAKLINE_TEST_PART_DELAY_S=str(self.delay_s),
            PYTHONPATH=str(ROOT),
        )
        return env

    def start(self) -> WorkerProcess:
        log = self.log_path.open("ab")
        self.proc = subprocess.Popen(
            [
                sys.executable,
                str(HERE / "launch.py"),
                "worker",
                f"--concurrency={self.concurrency}",
                "--loglevel=INFO",
                "-Q",
                self.settings.queue,
                "--without-gossip",
                "--without-mingle",
                f"--hostname=test-{secrets.token_hex(3)}@%h",
            ],
            env=self.env(),
            stdout=log,
            stderr=subprocess.STDOUT,
            start_new_session=True,
            cwd=ROOT,
        )
        log.close()
        wait_for(
            lambda: b"ready." in self.log_path.read_bytes() or self.proc.poll() is not None, 60, "worker"
        )
        assert self.proc.poll() is None, self.log_path.read_text(errors="replace")[-3000:]
        return self

    def kill(self) -> None:
        """SIGKILL the worker and its pool processes at once, as a crash or OOM kill would."""
        if self.proc is not None and self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGKILL)
            self.proc.wait(10)

    def stop(self) -> None:
        if self.proc is not None and self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGTERM)
            try:
                self.proc.wait(20)
            except subprocess.TimeoutExpired:
                self.kill()


def _test_client_class() -> Any:
    # This Starlette warns that its TestClient will move from httpx to a renamed fork; the project pins
    # httpx, and the warning (an error under the test settings) says nothing about our code.
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        from fastapi.testclient import TestClient

    return TestClient


TestClient = _test_client_class()


def store_counts(settings: Settings, batch_id: int) -> dict[str, Any]:
    """What the database holds for a batch, read directly (not through the API)."""
    from sqlalchemy import func, select

    from models.tables import Batch, Flag, Job, Result

    with session_factory(settings)() as session:
        per_part = session.execute(
            select(Result.part_id, func.count()).where(Result.batch_id == batch_id).group_by(Result.part_id)
        ).all()
        bodies = session.scalars(select(Result.body).where(Result.batch_id == batch_id)).all()
        return {
            "status": session.scalar(select(Batch.status).where(Batch.id == batch_id)),
            "part_count": session.scalar(select(Batch.part_count).where(Batch.id == batch_id)),
            "results": sum(n for _, n in per_part),
            "max_per_part": max((n for _, n in per_part), default=0),
            "flags": session.scalar(select(func.count()).select_from(Flag).where(Flag.batch_id == batch_id)),
            "flags_in_results": sum(len(b.get("flags") or []) for b in bodies),
            "jobs_not_done": session.scalar(
                select(func.count()).select_from(Job).where(Job.batch_id == batch_id, Job.status != "done")
            ),
            "attempts": session.scalar(select(func.sum(Job.attempts)).where(Job.batch_id == batch_id)),
        }


def assert_complete_exactly_once(settings: Settings, batch_id: int, parts: int) -> dict[str, Any]:
    counts = store_counts(settings, batch_id)
    assert counts["status"] == "done", counts
    assert counts["results"] == parts == counts["part_count"], counts
    assert counts["max_per_part"] == 1, counts
    assert counts["flags"] == counts["flags_in_results"], counts
    assert counts["jobs_not_done"] == 0, counts
    return counts


LAUNCH = [sys.executable, str(HERE / "launch.py"), "cli"]


def profile_doc(name: str = "furnace-2", htc: float = 123.4) -> dict[str, Any]:
    """An exchange profile as `soakline fit --save` writes it (values invented, for the service tests)."""
    return {
        "name": name,
        "htc_w_m2k": htc,
        "emissivity": 0.6,
        "step": "heat",
        "ambient": "860 degC",
        "record": "survey load",
        "record_date": "2026-11-01",
        "fitted_at": "2026-11-02T10:00:00+00:00",
        "level": 0.95,
        "params": [{"name": "h", "value": htc, "low": htc - 3, "high": htc + 3, "unit": "W/m^2/K"}],
        "rms_k": 1.2,
        "max_k": 3.0,
        "readings": 40,
        "series": [
            {
                "part": "PL-1",
                "thermocouple": "TC1",
                "position": "core",
                "time_s": [0.0, 600.0, 1200.0],
                "reading_c": [20.0, 400.0, 700.0],
                "residual_k": [None, 1.0, -0.5],
                "model_time_s": [0.0, 600.0, 1200.0],
                "model_c": [20.0, 401.0, 699.5],
            }
        ],
    }
