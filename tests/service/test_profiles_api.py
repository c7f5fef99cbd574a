"""Exchange profiles in the service on PostgreSQL: planners create, everyone reads, a name is taken once,
bad profiles are refused with their field and leave nothing; a batch names a profile and runs with it."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from sqlalchemy import select

from models.settings import Settings
from models.store import session_factory
from models.tables import Batch, Job
from scheduler.api import create_app
from workers.runner import execute_job

from .helpers import TestClient, auth, batch_doc, profile_doc

pytestmark = pytest.mark.service


@pytest.fixture
def client(pg_settings: Settings) -> Iterator[TestClient]:
    with TestClient(create_app(pg_settings, background=False)) as c:
        yield c


def test_create_read_and_use_a_profile(
    client: TestClient, tokens: dict[str, str], pg_settings: Settings
) -> None:
    made = client.post("/profiles", json=profile_doc(), headers=auth(tokens["planner"]))
    assert made.status_code == 201, made.text
    assert made.json()["created_by"].startswith("planner-")
    again = client.post("/profiles", json=profile_doc(htc=99.0), headers=auth(tokens["planner"]))
    assert again.status_code == 409 and "exists already" in again.json()["detail"]
    one = client.get("/profiles/furnace-2", headers=auth(tokens["viewer"])).json()
    assert one["profile"]["htc_w_m2k"] == 123.4  # the first stays as it was
    listing = client.get("/profiles", headers=auth(tokens["reviewer"])).json()
    assert [p["name"] for p in listing] == ["furnace-2"] and listing[0]["record_date"] == "2026-11-01"
    assert client.get("/profiles/nope", headers=auth(tokens["viewer"])).status_code == 404

    doc = batch_doc(2)
    doc["schedule"][0] = {"name": "heat", "duration": "40 min", "ambient": "860 degC", "profile": "furnace-2"}
    sent = client.post("/batches", json=doc, headers=auth(tokens["planner"]))
    assert sent.status_code == 202, sent.text
    batch_id = sent.json()["id"]
    with session_factory(pg_settings)() as session:
        batch = session.get(Batch, batch_id)
        assert batch is not None and batch.resolved is not None
        heat = batch.resolved["schedule"][0]
        assert heat["profile"] == "furnace-2" and heat["htc"] == "123.4 W/m^2/K" and heat["emissivity"] == 0.6
        for job_id in session.scalars(select(Job.id).where(Job.batch_id == batch_id)).all():
            execute_job(job_id, pg_settings, owner="test")
    done = client.get(f"/batches/{batch_id}", headers=auth(tokens["viewer"])).json()
    assert done["status"] == "done"
    rerun = client.post(
        f"/batches/{batch_id}/rerun", json={"durations": {"soak": "2 h"}}, headers=auth(tokens["planner"])
    )
    assert rerun.status_code == 202, rerun.text  # the stored values carry the profile into a rerun


def test_bad_profiles_and_unknown_names_are_refused(client: TestClient, tokens: dict[str, str]) -> None:
    bad = profile_doc()
    bad["emissivity"] = 1.5
    bad["name"] = "a/b"
    del bad["record_date"]
    response = client.post("/profiles", json=bad, headers=auth(tokens["planner"]))
    assert response.status_code == 422
    paths = {p["path"] for p in response.json()["problems"]}
    assert {"emissivity", "name", "record_date"} <= paths, paths
    both = profile_doc()
    both["medium"] = "oil-still"
    response = client.post("/profiles", json=both, headers=auth(tokens["planner"]))
    assert response.status_code == 422 and "either htc_w_m2k or medium" in response.text
    assert client.get("/profiles", headers=auth(tokens["viewer"])).json() == []

    doc = batch_doc(1)
    doc["schedule"][0] = {"name": "heat", "duration": "40 min", "ambient": "860 degC", "profile": "nope"}
    response = client.post("/batches", json=doc, headers=auth(tokens["planner"]))
    assert response.status_code == 422
    assert [p["path"] for p in response.json()["problems"]] == ["schedule[0].profile"]
