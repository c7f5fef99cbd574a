"""The pages check roles by the API's own rule and show a domain error as a page (SQLite, no servers)."""

from __future__ import annotations

from pathlib import Path

from sqlalchemy import select

from models.store import migrate, session_factory
from models.tables import Flag, Job
from scheduler.api import create_app
from scheduler.web.session import SESSION_COOKIE
from tests.service.helpers import TestClient, auth, batch_doc, make_settings, make_tokens
from tests.web.forms import page_csrf
from workers.runner import execute_job


def test_roles_and_errors_on_pages_and_api(tmp_path: Path) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}")
    migrate(settings)
    tokens = make_tokens(settings)
    with TestClient(create_app(settings, background=False)) as api:
        batch_id = api.post(
            "/batches", json=batch_doc(3, soak="20 min"), headers=auth(tokens["planner"])
        ).json()["id"]
        with session_factory(settings)() as session:
            for job_id in session.scalars(select(Job.id).where(Job.batch_id == batch_id)).all():
                execute_job(job_id, settings, owner="test")
            flag_id = session.scalars(select(Flag.id).where(Flag.batch_id == batch_id)).first()
        assert flag_id is not None, "the 20 min soak must leave the thick plate flagged"

        api.cookies.set(SESSION_COOKIE, tokens["viewer"])
        csrf = page_csrf(api, f"/ui/batches/{batch_id}")  # the forms' token, as a page gives it
        page = api.post(
            f"/ui/flags/{flag_id}/disposition", data={"decision": "scrap", "comment": "no", "csrf": csrf}
        )
        assert page.status_code == 403 and page.headers["content-type"].startswith("text/html")
        assert "this needs a reviewer token" in page.text and "(viewer)" in page.text
        rerun = api.post(f"/ui/batches/{batch_id}/rerun", data={"duration:soak": "2 h", "csrf": csrf})
        assert rerun.status_code == 403 and "this needs a planner token" in rerun.text
        missing = api.get("/ui/batches/9999")
        assert missing.status_code == 404 and "batch 9999 not found" in missing.text

        json_403 = api.post(
            f"/flags/{flag_id}/disposition",
            json={"decision": "scrap", "comment": "no"},
            headers=auth(tokens["viewer"]),
        )
        assert json_403.status_code == 403 and json_403.json()["detail"].startswith("this needs a reviewer")

        api.cookies.set(SESSION_COOKIE, tokens["reviewer"])
        done = api.post(
            f"/ui/flags/{flag_id}/disposition",
            data={"decision": "scrap", "comment": "cracked", "csrf": csrf},
            follow_redirects=False,
        )
        assert done.status_code == 303 and done.headers["location"].endswith("#history")
        history = api.get(done.headers["location"].split("#")[0])
        assert "cracked" in history.text and "scrap" in history.text
