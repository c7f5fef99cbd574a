"""The batch page lists targets that look physically wrong, computed as written (SQLite, no servers)."""

from __future__ import annotations

from pathlib import Path

from models.store import migrate
from scheduler.api import create_app
from scheduler.web.session import SESSION_COOKIE
from tests.service.helpers import TestClient, auth, batch_doc, make_settings, make_tokens


def test_the_batch_page_warns_of_a_tempering_parameter_in_rankine(tmp_path: Path) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}")
    migrate(settings)
    tokens = make_tokens(settings)
    doc = batch_doc(2)
    doc["parts"][0]["targets"].append({"step": "quench", "temper_parameter_min": 31000})
    with TestClient(create_app(settings, background=False)) as api:
        created = api.post("/batches", json=doc, headers=auth(tokens["planner"]))
        assert created.status_code == 202, created.text  # a warning, not an error
        api.cookies.set(SESSION_COOKIE, tokens["viewer"])
        page = api.get(f"/ui/batches/{created.json()['id']}").text
        assert 'class="warnings"' in page and "parts[0].targets[1].temper_parameter_min" in page
        assert "did you mean 17222?" in page
        assert "Shortest step durations" in page and "Soak suggestion" not in page
        plain = api.post("/batches", json=batch_doc(2), headers=auth(tokens["planner"])).json()["id"]
        assert 'class="warnings"' not in api.get(f"/ui/batches/{plain}").text
