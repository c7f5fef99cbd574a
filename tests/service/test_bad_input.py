"""Bad input never reaches the database as a 500: each case answers 422 (or 413) naming the field, and
a part id from outside Latin-1 is reachable through the API, its page and its CSV download."""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import Any
from urllib.parse import quote

import pytest

from models.settings import Settings
from scheduler.api import create_app

from .helpers import TestClient, auth, batch_doc, wait_for

pytestmark = pytest.mark.service


@pytest.fixture
def api(pg_settings: Settings) -> Iterator[TestClient]:
    settings = pg_settings.model_copy(update={"max_body_bytes": 64 * 1024, "max_parts": 40})
    with TestClient(create_app(settings)) as client:
        yield client


def _doc(**part: Any) -> dict[str, Any]:
    doc = batch_doc(1)
    doc["parts"][0].update(part)
    return doc


def _paths(response: Any) -> list[str]:
    assert response.status_code == 422, response.text
    assert "Traceback" not in response.text
    problems = response.json()["problems"]
    assert problems and all(p["path"] and p["message"] for p in problems), problems
    return [str(p["path"]) for p in problems]


RAW_BODIES = [
    # (raw JSON text of a field, where it goes, the path that must be named)
    ('"frame \\u0000 plates"', "batch", "batch"),
    ('"P-\\ud800"', "id", "parts[0].id"),
    ('"\\udfff"', "initial", "parts[0].initial"),
    ("NaN", "emissivity", "schedule[0].emissivity"),
    ("Infinity", "emissivity", "schedule[0].emissivity"),
    ("-Infinity", "id", "parts[0].id"),
    ("1e400", "id", "parts[0].id"),
    ("1e21", "id", "parts[0].id"),
    ("101", "id", "parts[0].id"),
    ('"P/101"', "id", "parts[0].id"),
    ('"P-101\\r\\nX-Header: 1"', "id", "parts[0].id"),
    ('"P\\u0007"', "id", "parts[0].id"),
    ('".."', "id", "parts[0].id"),
]


@pytest.mark.parametrize(("raw", "field", "named"), RAW_BODIES)
def test_unstorable_values_are_422_naming_the_field(
    api: TestClient, tokens: dict[str, str], raw: str, field: str, named: str
) -> None:
    doc = batch_doc(1)
    marker = "__VALUE__"
    if field == "batch":
        doc["batch"] = marker
    elif field == "emissivity":
        doc["schedule"][0]["emissivity"] = marker
    else:
        doc["parts"][0][field] = marker
    body = json.dumps(doc).replace(f'"{marker}"', raw)
    response = api.post(
        "/batches",
        content=body.encode(),
        headers={**auth(tokens["planner"]), "content-type": "application/json"},
    )
    assert named in _paths(response)


def test_a_key_with_nul_is_named(api: TestClient, tokens: dict[str, str]) -> None:
    body = json.dumps(batch_doc(1)).replace('"shape"', '"sha\\u0000pe"', 1)
    response = api.post(
        "/batches",
        content=body.encode(),
        headers={**auth(tokens["planner"]), "content-type": "application/json"},
    )
    assert any(p.startswith("parts[0].") for p in _paths(response))


@pytest.mark.parametrize(
    ("url", "named"),
    [
        ("/batches/99999999999", "path.batch_id"),
        ("/batches/-1", "path.batch_id"),
        ("/batches?offset=1e20", "query.offset"),
        ("/batches?offset=99999999999999999999", "query.offset"),
        ("/flags?batch=99999999999", "query.batch"),
        ("/flags?offset=4294967296", "query.offset"),
        ("/batches/1/compare/99999999999", "path.other_id"),
        ("/batches/1/parts/P%00", "path"),
        ("/batches/1/suggest?step=so%00ak", "query.step"),
    ],
)
def test_out_of_range_ids_and_control_characters_in_addresses(
    api: TestClient, tokens: dict[str, str], url: str, named: str
) -> None:
    assert named in _paths(api.get(url, headers=auth(tokens["viewer"])))


def test_rerun_and_disposition_text_is_checked(api: TestClient, tokens: dict[str, str]) -> None:
    planner = auth(tokens["planner"])
    created = api.post("/batches", json=batch_doc(1), headers=planner)
    assert created.status_code == 202
    rerun = api.post(
        f"/batches/{created.json()['id']}/rerun", json={"durations": {"so\x00ak": "4 h"}}, headers=planner
    )
    assert any(p.startswith("body.durations") for p in _paths(rerun))
    disposition = api.post(
        "/flags/1/disposition",
        json={"decision": "scrap", "comment": "bad\x00"},
        headers=auth(tokens["reviewer"]),
    )
    assert "body.comment" in _paths(disposition)


def test_size_limits_are_checked_before_validation(api: TestClient, tokens: dict[str, str]) -> None:
    planner = auth(tokens["planner"])
    too_many = batch_doc(41)
    assert _paths(api.post("/batches", json=too_many, headers=planner)) == ["parts"]
    # 300 parts of junk would take many problems to list: the count alone is reported.
    junk = {"batch": "x", "schedule": [], "parts": [{"id": i} for i in range(300)]}
    assert _paths(api.post("/batches", json=junk, headers=planner)) == ["parts"]

    big = batch_doc(1, label="x" * (70 * 1024))
    refused = api.post("/batches", json=big, headers=planner)
    assert refused.status_code == 413 and "SOAKLINE_MAX_BODY_BYTES" in refused.json()["detail"]

    def chunks() -> Iterator[bytes]:  # no Content-Length: the limit is counted as the body arrives
        for _ in range(100):
            yield b" " * 1024

    streamed = api.post("/batches", content=chunks(), headers={**planner, "content-type": "application/json"})
    assert streamed.status_code == 413


def test_a_part_id_outside_latin1_is_reachable_everywhere(api: TestClient, tokens: dict[str, str]) -> None:
    part_id = "Träger Ω-7 (Süd)"
    created = api.post("/batches", json=_doc(id=part_id), headers=auth(tokens["planner"]))
    assert created.status_code == 202, created.text
    batch_id = created.json()["id"]
    viewer = auth(tokens["viewer"])
    wait_for(
        lambda: api.get(f"/batches/{batch_id}", headers=viewer).json()["status"] == "done", 120, "the batch"
    )
    quoted = quote(part_id, safe="")
    result = api.get(f"/batches/{batch_id}/parts/{quoted}", headers=viewer)
    assert result.status_code == 200 and result.json()["id"] == part_id
    cookie = {"Cookie": f"soakline_session={tokens['viewer']}"}
    page = api.get(f"/ui/batches/{batch_id}", headers=cookie)
    assert page.status_code == 200 and f"/parts/{quoted}" in page.text
    assert api.get(f"/ui/batches/{batch_id}/parts/{quoted}", headers=cookie).status_code == 200
    csv = api.get(f"/ui/batches/{batch_id}/parts/{quoted}/trace.csv", headers=cookie)
    assert csv.status_code == 200
    assert (
        f"filename*=UTF-8''{quote(f'batch{batch_id}-{part_id}.csv', safe='')}"
        in csv.headers["content-disposition"]
    )
