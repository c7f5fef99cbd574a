"""A batch is validated once per submit: the workers, the API's reads and the review pages use the
resolved batch stored at submit, and a rerun validates its new durations once (SQLite, no servers)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import select

from models import BatchSpec
from models.store import migrate, session_factory
from models.tables import Job
from scheduler.api import create_app
from scheduler.web.session import SESSION_COOKIE
from tests.service.helpers import TestClient, auth, batch_doc, make_settings, make_tokens
from workers.runner import execute_job


def test_one_validation_per_submit(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}")
    migrate(settings)
    tokens = make_tokens(settings)
    validations: list[int] = []
    real = BatchSpec._rules.__func__  # type: ignore[attr-defined]

    def counted(cls: type[BatchSpec], raw: Any) -> Any:
        validations.append(1)
        return real(cls, raw)

    monkeypatch.setattr(BatchSpec, "_rules", classmethod(counted))

    def run_jobs(batch_id: int) -> None:
        with session_factory(settings)() as session:
            ids = session.scalars(select(Job.id).where(Job.batch_id == batch_id)).all()
        for job_id in ids:
            execute_job(job_id, settings, owner="test")

    with TestClient(create_app(settings, background=False)) as api:
        planner = auth(tokens["planner"])
        first = api.post("/batches", json=batch_doc(3, soak="20 min"), headers=planner).json()["id"]
        assert len(validations) == 1
        run_jobs(first)
        api.cookies.set(SESSION_COOKIE, tokens["viewer"])
        for url in (
            f"/batches/{first}",
            f"/batches/{first}/parts/P-001",
            f"/ui/batches/{first}",
            f"/ui/batches/{first}/parts/P-001",
            f"/ui/batches/{first}/report",
            f"/ui/batches/{first}/rerun",
        ):
            response = api.get(url, headers=auth(tokens["viewer"]))
            assert response.status_code == 200, (url, response.text[:300])
        assert len(validations) == 1, "reading a stored batch must not validate it again"

        second = api.post(f"/batches/{first}/rerun", json={"durations": {"soak": "2 h"}}, headers=planner)
        assert second.status_code == 202, second.text
        assert len(validations) == 2
        run_jobs(second.json()["id"])
        compare = api.get(f"/ui/batches/{first}/compare/{second.json()['id']}")
        assert compare.status_code == 200 and len(validations) == 2
