"""Every endpoint refuses a missing or unknown token (401) and the wrong role (403); bad input gets 422
with each problem's field path, never a traceback."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest

from models.settings import Settings
from scheduler.api import create_app

from .helpers import TestClient, auth, batch_doc, profile_doc

pytestmark = pytest.mark.service

# (method, path, body, roles allowed); ids 1 and 1 exist after the fixture submits one batch.
ENDPOINTS: list[tuple[str, str, Any, set[str]]] = [
    ("POST", "/batches", batch_doc(2), {"planner"}),
    ("GET", "/batches", None, {"planner", "reviewer", "viewer"}),
    ("GET", "/batches/1", None, {"planner", "reviewer", "viewer"}),
    ("GET", "/batches/1/parts/P-000", None, {"planner", "reviewer", "viewer"}),
    ("POST", "/batches/1/rerun", {"durations": {"soak": "3 h"}}, {"planner"}),
    ("GET", "/batches/1/compare/1", None, {"planner", "reviewer", "viewer"}),
    ("GET", "/batches/1/suggest?step=nosuchstep", None, {"planner", "reviewer", "viewer"}),
    ("GET", "/flags", None, {"planner", "reviewer", "viewer"}),
    ("POST", "/flags/1/disposition", {"decision": "scrap", "comment": "checked"}, {"reviewer"}),
    ("POST", "/profiles", profile_doc(), {"planner"}),
    ("GET", "/profiles", None, {"planner", "reviewer", "viewer"}),
    ("GET", "/profiles/furnace-2", None, {"planner", "reviewer", "viewer"}),
]


@pytest.fixture
def client(pg_settings: Settings) -> Iterator[TestClient]:
    with TestClient(create_app(pg_settings, background=False)) as c:
        yield c


def _call(client: TestClient, method: str, path: str, body: Any, headers: dict[str, str]) -> Any:
    return client.request(method, path, json=body, headers=headers)


def test_openapi_and_health_are_public(client: TestClient) -> None:
    spec = client.get("/openapi.json").json()
    for path in (
        "/batches",
        "/batches/{batch_id}",
        "/batches/{batch_id}/parts/{part_id}",
        "/flags",
        "/flags/{flag_id}/disposition",
        "/batches/{batch_id}/rerun",
        "/batches/{batch_id}/compare/{other_id}",
        "/batches/{batch_id}/suggest",
        "/profiles",
        "/profiles/{name}",
        "/health",
    ):
        assert path in spec["paths"], path
    assert "planning" in spec["info"]["description"]
    health = client.get("/health")
    assert health.status_code == 200
    assert health.json() == {
        "status": "ok",
        "database": "ok",
        "broker": "not configured",
        "mode": "in-process",
    }


@pytest.mark.parametrize(
    ("method", "path", "body", "allowed"), ENDPOINTS, ids=[f"{m} {p}" for m, p, *_ in ENDPOINTS]
)
def test_401_and_403(
    client: TestClient, tokens: dict[str, str], method: str, path: str, body: Any, allowed: set[str]
) -> None:
    created = client.post("/batches", json=batch_doc(2), headers=auth(tokens["planner"]))
    assert created.status_code == 202, created.text

    missing = _call(client, method, path, body, {})
    assert missing.status_code == 401
    assert missing.headers["www-authenticate"] == "Bearer"
    assert "token" in missing.json()["detail"]
    unknown = _call(client, method, path, body, auth("sl_not-a-real-token"))
    assert unknown.status_code == 401
    assert unknown.json() == {"detail": "unknown, revoked or expired token"}

    for role, token in tokens.items():
        response = _call(client, method, path, body, auth(token))
        if role in allowed:
            assert response.status_code not in (401, 403), (role, response.text)
        else:
            assert response.status_code == 403, (role, response.text)
            assert role in response.json()["detail"]


def test_invalid_batch_file_lists_every_problem(client: TestClient, tokens: dict[str, str]) -> None:
    doc = batch_doc(3)
    doc["parts"][1]["thickness"] = "50"
    doc["schedule"][1]["duration"] = 2
    response = client.post("/batches", json=doc, headers=auth(tokens["planner"]))
    assert response.status_code == 422
    body = response.json()
    paths = {p["path"] for p in body["problems"]}
    assert "parts[1].thickness" in paths
    assert "schedule[1].duration" in paths
    assert all(p["message"] for p in body["problems"])
    assert "Traceback" not in response.text
    listing = client.get("/batches", headers=auth(tokens["viewer"])).json()
    assert listing["total"] == 0, "an invalid batch must leave nothing stored"


@pytest.mark.parametrize(
    ("method", "path", "body", "raw", "where"),
    [
        ("POST", "/batches", None, b"{not json", "body"),
        ("POST", "/batches", [1, 2], None, "body"),
        ("GET", "/batches?limit=0", None, None, "query.limit"),
        ("GET", "/batches?status=baked", None, None, "query.status"),
        ("GET", "/flags?status=closed", None, None, "query.status"),
        ("POST", "/batches/1/rerun", {"durations": {}}, None, "body.durations"),
        ("POST", "/batches/1/rerun", {"durations": {"soak": "4 h"}, "extra": 1}, None, "body.extra"),
        ("POST", "/batches/1/rerun", {"durations": {"soak": "forever"}}, None, "durations"),
        ("POST", "/batches/1/rerun", {"durations": {"nosuchstep": "1 h"}}, None, "durations"),
        ("POST", "/flags/1/disposition", {"decision": "keep", "comment": "x"}, None, "body.decision"),
        ("POST", "/flags/1/disposition", {"decision": "scrap", "comment": ""}, None, "body.comment"),
        ("GET", "/batches/abc", None, None, "path.batch_id"),
    ],
)
def test_422_bodies_name_the_field(
    client: TestClient,
    tokens: dict[str, str],
    method: str,
    path: str,
    body: Any,
    raw: bytes | None,
    where: str,
) -> None:
    assert client.post("/batches", json=batch_doc(2), headers=auth(tokens["planner"])).status_code == 202
    role = "reviewer" if path.startswith("/flags/1") else "planner"
    headers = {**auth(tokens[role]), "Content-Type": "application/json"}
    if raw is not None:
        response = client.request(method, path, content=raw, headers=headers)
    else:
        response = client.request(method, path, json=body, headers=headers)
    assert response.status_code == 422, response.text
    problems = response.json()["problems"]
    assert any(p["path"].startswith(where) for p in problems), problems
    assert "Traceback" not in response.text


def test_not_found_names_the_id(client: TestClient, tokens: dict[str, str]) -> None:
    headers = auth(tokens["viewer"])
    assert client.get("/batches/999", headers=headers).json() == {"detail": "batch 999 not found"}
    assert client.get("/batches/999", headers=headers).status_code == 404
    response = client.post(
        "/flags/77/disposition", json={"decision": "scrap", "comment": "x"}, headers=auth(tokens["reviewer"])
    )
    assert response.status_code == 404
    assert response.json() == {"detail": "flag 77 not found"}
