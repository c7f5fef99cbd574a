"""The printed report of a batch: every part and flag, curves of the first flagged parts only, margins
as the batch page says them, in the viewer's unit (SQLite, no servers)."""

from __future__ import annotations

import re
from pathlib import Path

from sqlalchemy import select

from models.store import migrate, session_factory
from models.tables import Job
from scheduler.api import create_app, service
from scheduler.web.pages import REPORT_CHARTS
from scheduler.web.session import SESSION_COOKIE
from scheduler.web.units import UNITS_COOKIE
from tests.service.helpers import TestClient, auth, batch_doc, make_settings, make_tokens
from workers.runner import execute_job

MARGIN = re.compile(r'<span class="margin">([^<]*)</span>')


def test_the_report_lists_every_part_and_flag_and_draws_the_first_flagged(tmp_path: Path) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}", group_parts=50)
    migrate(settings)
    tokens = make_tokens(settings)
    with TestClient(create_app(settings, background=False)) as api:
        doc = batch_doc(30, soak="20 min")  # 20..80 mm plates: the thick ones stay flagged
        batch_id = api.post("/batches", json=doc, headers=auth(tokens["planner"])).json()["id"]
        with session_factory(settings)() as session:
            for job_id in session.scalars(select(Job.id).where(Job.batch_id == batch_id)).all():
                execute_job(job_id, settings, owner="test")
            states = service.part_states(session, batch_id)
            flags = service.list_flags(session, batch_id, None, 1000, 0).items
            flagged = [s.id for s in states if s.flagged]
            # results of some parts, in the order asked, only those that exist
            some = service.part_results(session, batch_id, [flagged[1], "nope", flagged[0]])
            assert [r["id"] for r in some] == [flagged[1], flagged[0]]
            assert all(dict(f).get("flag_id") for r in some for f in r["flags"])
        assert REPORT_CHARTS < len(flagged) < 30, "the test needs more flagged parts than charts"
        assert [s.id for s in states] == [p["id"] for p in doc["parts"]]  # file order

        api.cookies.set(SESSION_COOKIE, tokens["viewer"])
        report = api.get(f"/ui/batches/{batch_id}/report")
        assert report.status_code == 200, report.text[:300]
        html = report.text
        assert [m for m in re.findall(r'<tr><th scope="row">(P-\d+)</th><td>plate', html)] == [
            p["id"] for p in doc["parts"]
        ]
        assert html.count("<td>FLAG</td>") == len(flagged)
        charted = re.findall(r"<figcaption>([^<]*)</figcaption>", html)
        assert charted == flagged[:REPORT_CHARTS]  # the first flagged parts, in file order
        assert len(re.findall(r"<tr><th scope=\"row\">P-\d+</th><td>soak · core", html)) == len(flags)

        # The same margins as the batch page, which says each check's four texts.
        batch_page = api.get(f"/ui/batches/{batch_id}").text
        assert MARGIN.findall(html) == MARGIN.findall(batch_page) and len(MARGIN.findall(html)) == 30

        api.cookies.set(UNITS_COOKIE, "F-in")
        in_f = api.get(f"/ui/batches/{batch_id}/report").text
        assert MARGIN.findall(in_f) == MARGIN.findall(api.get(f"/ui/batches/{batch_id}").text)
        flag_table = in_f.split("<h2>Flags and dispositions</h2>")[1].split("</table>")[0]
        # 845 degC = 1553 degF (by definition of the scales)
        assert "&gt;= 1553 degF" in flag_table and "degC" not in flag_table
