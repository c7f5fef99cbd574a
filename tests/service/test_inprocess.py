"""The whole review loop with no broker: submit, jobs run in the API process, flags, disposition,
rerun with a longer soak, compare, suggest -- on PostgreSQL and on the zero-setup SQLite default."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from models.settings import Settings, default_database_url
from scheduler.api import create_app

from .helpers import TestClient, auth, batch_doc, make_settings, make_tokens, wait_for

pytestmark = pytest.mark.service


def _done(client: TestClient, batch_id: int, headers: dict[str, str]) -> dict[str, Any]:
    def finished() -> dict[str, Any] | None:
        body: dict[str, Any] = client.get(f"/batches/{batch_id}", headers=headers).json()
        return body if body["status"] in ("done", "failed") else None

    result: dict[str, Any] = wait_for(finished, 300, f"batch {batch_id} to finish")
    return result


def review_loop(settings: Settings, tokens: dict[str, str]) -> None:
    planner, reviewer, viewer = (auth(tokens[r]) for r in ("planner", "reviewer", "viewer"))
    with TestClient(create_app(settings)) as client:
        created = client.post("/batches", json=batch_doc(4, soak="20 min"), headers=planner)
        assert created.status_code == 202
        assert created.json() == {"id": 1, "status": "queued", "parent_id": None}
        body = _done(client, 1, viewer)
        assert body["status"] == "done"
        assert [p["id"] for p in body["parts"]] == [f"P-{i:03d}" for i in range(4)]
        assert body["done_count"] == 4
        assert body["flagged_count"] >= 1, "a 20 min soak must leave thick plates short"

        part = client.get("/batches/1/parts/P-000", headers=viewer).json()
        assert part["id"] == "P-000"
        trace = part["trace"]
        assert (
            len(trace["time_s"]) == len(trace["core_c"]) == len(trace["surface_c"]) == len(trace["ambient_c"])
        )

        flags = client.get("/flags", params={"batch": 1}, headers=viewer).json()
        assert flags["total"] >= 1
        first = flags["items"][0]
        assert {"id", "batch", "part", "step", "target", "margin", "status"} <= set(first)
        assert first["batch"] == 1 and first["status"] == "open"
        for decision in ("re-treat", "use-as-is"):
            made = client.post(
                f"/flags/{first['id']}/disposition",
                headers=reviewer,
                json={"decision": decision, "comment": f"{decision} after review"},
            )
            assert made.status_code == 201, made.text
            assert made.json()["by"].startswith("reviewer")
        history = client.get("/flags", params={"batch": 1, "status": "all"}, headers=viewer).json()["items"]
        kept = next(f for f in history if f["id"] == first["id"])
        assert [d["decision"] for d in kept["dispositions"]] == ["re-treat", "use-as-is"]
        assert kept["status"] == "dispositioned"
        still_open = client.get("/flags", params={"batch": 1}, headers=viewer).json()
        assert still_open["total"] == flags["total"] - 1

        suggestion = client.get("/batches/1/suggest", params={"step": "soak"}, headers=viewer)
        assert suggestion.status_code == 200, suggestion.text
        s = suggestion.json()
        assert s["step"] == "soak" and s["duration_s"] > 20 * 60 and s["limiting_part"]

        longer = f"{s['duration_s'] / 3600 + 0.5:.2f} h"
        rerun = client.post("/batches/1/rerun", json={"durations": {"soak": longer}}, headers=planner)
        assert rerun.status_code == 202, rerun.text
        assert rerun.json() == {"id": 2, "status": "queued", "parent_id": 1}
        after = _done(client, 2, viewer)
        assert after["durations"] == {"soak": longer}
        compare = client.get("/batches/1/compare/2", headers=viewer).json()
        changes = {p["id"]: p["change"] for p in compare["parts"]}
        assert set(changes) == {f"P-{i:03d}" for i in range(4)}
        assert "cleared" in changes.values()
        assert "new" not in changes.values()

        listing = client.get("/batches", params={"status": "done"}, headers=viewer).json()
        assert [b["id"] for b in listing["items"]] == [2, 1]
        assert listing["items"][0]["parent_id"] == 1


def test_review_loop_on_postgres(pg_settings: Settings, tokens: dict[str, str]) -> None:
    review_loop(pg_settings, tokens)


def test_sqlite_default_path(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """With no SOAKLINE_DATABASE_URL the store is a SQLite file in the user's data folder, and it works."""
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))
    monkeypatch.delenv("SOAKLINE_DATABASE_URL", raising=False)
    expected = tmp_path / "data" / "soakline" / "soakline.db"
    assert default_database_url() == f"sqlite:///{expected}"
    settings = make_settings(Settings().database_url)
    assert settings.sqlite_path == expected
    from models.store import migrate

    migrate(settings)
    assert expected.is_file()
    review_loop(settings, make_tokens(settings))
