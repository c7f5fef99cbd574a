"""Forms of the review pages refuse forgeries, and the pages' cookies follow the deployment's scheme.

Through the app in-process (SQLite, no servers); the browser suite tries the same forgeries in Chromium
(tests/browser/test_forgery.py). The mechanism is a signed double-submit token (OWASP Cross-Site
Request Forgery Prevention Cheat Sheet, "Signed Double-Submit Cookie"; common practice).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from fastapi.routing import APIRoute
from sqlalchemy import func, select

from models.settings import Settings
from models.store import migrate, session_factory
from models.tables import Batch, Disposition, Flag, Job
from scheduler.api import create_app
from scheduler.web import pages
from scheduler.web.csrf import CSRF_COOKIE, check_form, form_token
from scheduler.web.session import SESSION_COOKIE
from tests.service.helpers import TestClient, auth, batch_doc, make_settings, make_tokens
from tests.web.forms import forms_of, page_csrf
from workers.runner import execute_job


def _flagged_batch(api: Any, settings: Settings, planner: str) -> tuple[int, int, str]:
    batch_id = int(api.post("/batches", json=batch_doc(3, soak="20 min"), headers=auth(planner)).json()["id"])
    with session_factory(settings)() as session:
        for job_id in session.scalars(select(Job.id).where(Job.batch_id == batch_id)).all():
            execute_job(job_id, settings, owner="test")
        flag = session.scalars(select(Flag).where(Flag.batch_id == batch_id)).first()
        assert flag is not None, "the 20 min soak must leave the thick plate flagged"
        return batch_id, flag.id, flag.part_id


def _counts(settings: Settings) -> tuple[int, int]:
    with session_factory(settings)() as session:
        return (
            int(session.scalar(select(func.count()).select_from(Disposition)) or 0),
            int(session.scalar(select(func.count()).select_from(Batch)) or 0),
        )


def test_every_form_post_is_checked() -> None:
    """Each POST route of the pages depends on the token check (a new form cannot forget it)."""
    posts = [r for r in pages.router.routes if isinstance(r, APIRoute) and "POST" in (r.methods or ())]
    assert {r.path for r in posts} >= {
        "/ui/sign-in",
        "/ui/sign-out",
        "/ui/units",
        "/ui/flags/{flag_id}/disposition",
        "/ui/batches/{batch_id}/rerun",
    }
    for route in posts:
        assert any(d.call is check_form for d in route.dependant.dependencies), route.path


def test_forgeries_are_refused_and_change_nothing(tmp_path: Path) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}")
    migrate(settings)
    tokens = make_tokens(settings)
    with TestClient(create_app(settings, background=False)) as api:
        batch_id, flag_id, part = _flagged_batch(api, settings, tokens["planner"])
        api.cookies.set(SESSION_COOKIE, tokens["reviewer"])
        page = api.get(f"/ui/batches/{batch_id}/parts/{part}")
        post_forms = [f for f in forms_of(page.text) if f["method"] == "post"]
        assert len(post_forms) >= 3 and all(
            f["fields"].get("csrf") for f in post_forms
        )  # units, sign-out, flag
        good = page_csrf(api, f"/ui/batches/{batch_id}")
        before = _counts(settings)
        disposition = f"/ui/flags/{flag_id}/disposition"
        body = {"decision": "scrap", "comment": "forged"}
        # No token; a token of another nonce; the right token with the nonce cookie replaced (as a page of
        # the same site can set it); an empty token; the right token without the nonce cookie.
        nonce = api.cookies[CSRF_COOKIE]
        api.cookies.clear()  # each attempt sends its own cookies below
        other = "A" * 43
        attempts: list[tuple[dict[str, str], str | None]] = [
            (body, nonce),
            ({**body, "csrf": form_token(settings, other)}, nonce),
            ({**body, "csrf": good}, other),
            ({**body, "csrf": ""}, nonce),
            ({**body, "csrf": good}, None),
        ]
        for data, sent_nonce in attempts:
            cookie = f"{SESSION_COOKIE}={tokens['reviewer']}"
            if sent_nonce is not None:
                cookie += f"; {CSRF_COOKIE}={sent_nonce}"
            refused = api.post(disposition, data=data, headers={"Cookie": cookie}, follow_redirects=False)
            assert refused.status_code == 403, (data, sent_nonce, refused.status_code)
            assert "did not come from these pages" in refused.text
        api.cookies.set(CSRF_COOKIE, nonce)
        api.cookies.set(SESSION_COOKIE, tokens["planner"])
        for path, data in [
            (f"/ui/batches/{batch_id}/rerun", {"duration:soak": "3 h"}),
            ("/ui/units", {"temp": "F", "length": "in"}),
            ("/ui/sign-out", {}),
        ]:
            assert api.post(path, data=data, follow_redirects=False).status_code == 403, path
        assert _counts(settings) == before  # no disposition, no rerun batch
        assert api.get("/ui/batches").status_code == 200  # still signed in: the sign-out was refused

        # The same posts with the page's token go through.
        done = api.post(f"/ui/batches/{batch_id}/rerun", data={"duration:soak": "3 h", "csrf": good})
        assert done.status_code == 200 and _counts(settings)[1] == before[1] + 1


def test_sign_in_needs_the_sign_in_pages_token(tmp_path: Path) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}")
    migrate(settings)
    tokens = make_tokens(settings)
    with TestClient(create_app(settings, background=False)) as api:
        # A post from elsewhere: no nonce cookie, no token. Refused, and no session cookie is set.
        forged = api.post("/ui/sign-in", data={"token": tokens["reviewer"]}, follow_redirects=False)
        assert forged.status_code == 403 and SESSION_COOKIE not in forged.cookies
        csrf = page_csrf(api, "/ui/sign-in")
        signed = api.post(
            "/ui/sign-in", data={"token": tokens["reviewer"], "csrf": csrf}, follow_redirects=False
        )
        assert signed.status_code == 303 and signed.cookies.get(SESSION_COOKIE) == tokens["reviewer"]


def _set_cookie_headers(response: Any) -> list[str]:
    return [v for k, v in response.headers.multi_items() if k.lower() == "set-cookie"]


@pytest.mark.parametrize(
    ("setting", "base", "headers", "trusted", "secure"),
    [
        ("auto", "http://soakline.plant.example", {}, "127.0.0.1", False),  # plain http on a host name
        ("auto", "https://soakline.plant.example", {}, "127.0.0.1", True),
        # Behind a TLS proxy: its X-Forwarded-Proto counts only when it is a trusted proxy.
        ("auto", "http://soakline.plant.example", {"X-Forwarded-Proto": "https"}, "testclient", True),
        ("auto", "http://soakline.plant.example", {"X-Forwarded-Proto": "https"}, "127.0.0.1", False),
        ("true", "http://soakline.plant.example", {}, "127.0.0.1", True),
        ("false", "https://soakline.plant.example", {}, "127.0.0.1", False),
    ],
)
def test_cookies_are_secure_as_the_deployment_says(
    tmp_path: Path, setting: str, base: str, headers: dict[str, str], trusted: str, secure: bool
) -> None:
    settings = make_settings(
        f"sqlite:///{tmp_path / 'store.db'}", cookie_secure=setting, trusted_proxies=trusted
    )
    migrate(settings)
    tokens = make_tokens(settings)
    with TestClient(create_app(settings, background=False), base_url=base) as api:
        form = api.get("/ui/sign-in", headers=headers)
        csrf = forms_of(form.text)[0]["fields"]["csrf"]
        # Sent by hand: behind the proxy the browser is on https, which this client does not know.
        nonce = form.cookies[CSRF_COOKIE]
        api.cookies.clear()
        signed = api.post(
            "/ui/sign-in",
            data={"token": tokens["viewer"], "csrf": csrf},
            headers={**headers, "Cookie": f"{CSRF_COOKIE}={nonce}"},
            follow_redirects=False,
        )
        assert signed.status_code == 303
        cookies = _set_cookie_headers(form) + _set_cookie_headers(signed)
        assert {c.split("=", 1)[0] for c in cookies} == {CSRF_COOKIE, SESSION_COOKIE}
        for cookie in cookies:
            attributes = {a.strip().lower() for a in cookie.split(";")[1:]}
            assert ("secure" in attributes) is secure, cookie
            assert {"httponly", "samesite=strict", "path=/ui"} <= attributes, cookie
