"""Fuzzing the API over one kept-alive HTTP connection to a real server (uvicorn, PostgreSQL).

A few hundred bodies, each a valid batch with one part of it changed by hypothesis (a string with
NUL, control characters, lone surrogates or slashes; NaN, infinities, huge numbers; nested values;
removed and added fields), plus reruns and addresses with such values. Every answer must be below 500
with no traceback, every 422 must name a field for each problem, every accepted batch must end
``done`` with each part reachable, and every request must go over the same connection: an error must
not make the server drop it.
"""

from __future__ import annotations

import json
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any
from urllib.parse import quote

import httpx
import pytest
import uvicorn
from fastapi import FastAPI
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from models.settings import Settings
from scheduler.api import create_app

from .helpers import auth, batch_doc, free_port, wait_for

pytestmark = pytest.mark.service

EXAMPLES = 250

_nasty_chars = st.sampled_from(["\x00", "\x07", "\x1b", "\ud800", "\udfff", "/", "\r\n", "%", "#", "?", "Ω"])
_texts = st.one_of(
    st.text(max_size=12),
    st.lists(st.one_of(st.text(max_size=4), _nasty_chars), max_size=5).map("".join),
    st.sampled_from(["860 degC", "50 mm", "3 h", "4140", "plate", "core", "soak", "-1 mm", "1e308 mm"]),
)
_safe_ids = st.text(
    alphabet=st.one_of(st.characters(categories=["L", "N"]), st.sampled_from(" -_.+(),:")),
    min_size=1,
    max_size=20,
)
_numbers = st.one_of(
    st.integers(min_value=-(2**70), max_value=2**70),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, 2**31, 2**63, 1e21, 1e308]),
)
_leaves = st.one_of(_texts, _numbers, st.booleans(), st.none())
_values = st.recursive(
    _leaves,
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(_texts, inner, max_size=3)),
    max_leaves=6,
)


def _locations(doc: Any, path: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    out = [path]
    if isinstance(doc, dict):
        for key, value in doc.items():
            out += _locations(value, (*path, key))
    elif isinstance(doc, list):
        for i, value in enumerate(doc):
            out += _locations(value, (*path, i))
    return out


@st.composite
def _bodies(draw: st.DrawFn) -> str:
    doc: Any = batch_doc(2, label="fuzz")
    if draw(st.booleans()):
        # Only the texts that are free (label, part ids, a step name): many of these are accepted.
        doc["batch"] = draw(_texts)
        doc["parts"][0]["id"] = draw(st.one_of(_texts, _safe_ids))
        doc["parts"][1]["id"] = draw(_safe_ids)
        name = draw(st.one_of(_texts, _safe_ids))
        doc["schedule"][1]["name"] = name
        for part in doc["parts"]:
            part["targets"][0]["step"] = name
        return json.dumps(doc, allow_nan=True)
    for _ in range(draw(st.integers(min_value=1, max_value=3))):
        places = _locations(doc)
        path = draw(st.sampled_from(places[1:]))
        parent = doc
        for key in path[:-1]:
            parent = parent[key]
        action = draw(st.sampled_from(["replace", "replace", "replace", "delete", "add"]))
        if action == "replace":
            parent[path[-1]] = draw(_values)
        elif action == "delete":
            del parent[path[-1]]
        elif isinstance(parent, dict):
            parent[draw(_texts)] = draw(_values)
        else:
            parent.append(draw(_values))
    return json.dumps(doc, allow_nan=True)  # lone surrogates become \\ud800 escapes, as a client sends


class _Server(uvicorn.Server):
    def install_signal_handlers(self) -> None:  # running in a thread of the test process
        pass


@contextmanager
def _serving(app: FastAPI) -> Iterator[str]:
    port = free_port()
    server = _Server(uvicorn.Config(app, host="127.0.0.1", port=port, log_level="critical"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    try:
        wait_for(lambda: server.started, 30, "the API server")
        yield f"http://127.0.0.1:{port}"
    finally:
        server.should_exit = True
        thread.join(30)


@pytest.fixture
def live(pg_settings: Settings) -> Iterator[str]:
    with _serving(create_app(pg_settings)) as url:
        yield url


def test_an_unexpected_error_is_one_line_and_keeps_the_connection(pg_settings: Settings) -> None:
    app = create_app(pg_settings, background=False)

    def boom() -> None:
        raise RuntimeError("a bug in a route")

    app.add_api_route("/boom", boom)
    with _serving(app) as url, httpx.Client(base_url=url, limits=httpx.Limits(max_connections=1)) as client:
        seen = set()
        for path in ("/boom", "/health", "/boom", "/batches/1"):
            response = client.get(path)
            seen.add(response.extensions["network_stream"].get_extra_info("client_addr"))
            if path == "/boom":
                assert response.status_code == 500
                assert response.json() == {"detail": "internal error; it has been logged on the server"}
        assert len(seen) == 1, "the connection was dropped after the 500"


class _Checker:
    """Sends every request over one client and checks each answer; remembers accepted batches."""

    def __init__(self, base: str, tokens: dict[str, str]) -> None:
        self.client = httpx.Client(base_url=base, timeout=60, limits=httpx.Limits(max_connections=1))
        self.tokens = tokens
        self.accepted: list[int] = []
        self.statuses: dict[int, int] = {}
        self.local: set[Any] = set()

    def send(self, method: str, url: str, role: str = "planner", **kw: Any) -> httpx.Response:
        response = self.client.request(
            method, url, headers={**auth(self.tokens[role]), **kw.pop("headers", {})}, **kw
        )
        self.local.add(response.extensions["network_stream"].get_extra_info("client_addr"))
        self.statuses[response.status_code] = self.statuses.get(response.status_code, 0) + 1
        assert response.status_code < 500, f"{method} {url}: {response.status_code} {response.text[:500]}"
        assert "Traceback" not in response.text and 'File "' not in response.text, response.text[:500]
        if response.status_code == 422:
            problems = response.json().get("problems") or []
            assert problems and all(p.get("path") for p in problems), response.text[:500]
        return response


@pytest.fixture
def check(live: str, tokens: dict[str, str]) -> Iterator[_Checker]:
    checker = _Checker(live, tokens)
    yield checker
    checker.client.close()


def test_fuzzed_requests_never_5xx_and_keep_the_connection(check: _Checker, tokens: dict[str, str]) -> None:
    first = check.send("POST", "/batches", json=batch_doc(2, label="fuzz"))
    assert first.status_code == 202
    base_id = first.json()["id"]
    check.accepted.append(base_id)

    @settings(
        max_examples=EXAMPLES,
        deadline=None,
        derandomize=True,
        database=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
    )
    @given(
        body=_bodies(), durations=st.dictionaries(_texts, _leaves, max_size=2), number=_numbers, text=_texts
    )
    def one(body: str, durations: dict[str, Any], number: Any, text: str) -> None:
        sent = check.send(
            "POST", "/batches", content=body.encode(), headers={"content-type": "application/json"}
        )
        assert sent.status_code in (202, 400, 413, 422), sent.text[:300]
        if sent.status_code == 202:
            check.accepted.append(sent.json()["id"])
        rerun = json.dumps({"durations": durations}, allow_nan=True).encode()
        check.send(
            "POST", f"/batches/{base_id}/rerun", content=rerun, headers={"content-type": "application/json"}
        )
        number_text = quote(str(number), safe="")
        check.send("GET", f"/batches/{number_text}", role="viewer")
        check.send("GET", f"/flags?batch={number_text}&offset={number_text}", role="viewer")
        check.send(
            "GET", f"/batches/{base_id}/parts/{quote(text, safe='', errors='surrogatepass')}", role="viewer"
        )
        check.send(
            "GET",
            f"/batches?offset={number_text}&status={quote(text, safe='', errors='surrogatepass')}",
            role="viewer",
        )

    started = time.monotonic()
    one()
    fuzz_s = time.monotonic() - started

    viewer = {"Authorization": f"Bearer {tokens['viewer']}"}

    def all_finished() -> bool:
        states = [check.client.get(f"/batches/{b}", headers=viewer).json()["status"] for b in check.accepted]
        return all(s in ("done", "failed") for s in states)

    wait_for(all_finished, 300, "every accepted batch to finish", every=1.0)
    for batch_id in check.accepted:
        body = check.send("GET", f"/batches/{batch_id}", role="viewer").json()
        assert body["status"] == "done", body
        for part in body["parts"]:
            got = check.send("GET", f"/batches/{batch_id}/parts/{quote(part['id'], safe='')}", role="viewer")
            assert got.status_code == 200 and got.json()["id"] == part["id"]
    assert len(check.local) == 1, f"the server dropped the connection: {len(check.local)} connections used"
    print(
        f"fuzz: {sum(check.statuses.values())} requests in {fuzz_s:.1f} s, "
        f"statuses {sorted(check.statuses.items())}, {len(check.accepted)} batches accepted and done"
    )
