"""Forged forms in headless Chromium: a page of the same site and a page of another site try the review
pages' forms with a signed-in browser, and are refused with nothing done.

The forging pages are served by a small HTTP server of the test on loopback: a page of the same site
is at ``http://127.0.0.1:OTHER`` (the port is not part of a site, so SameSite=strict cookies go along),
a page of another site at ``http://localhost:OTHER``. Each page posts its form as soon as it loads.
The refusals come from the forms' signed tokens (OWASP Cross-Site Request Forgery Prevention Cheat
Sheet, "Signed Double-Submit Cookie"; common practice), tried in-process in tests/web/test_web_forms.py.
"""

from __future__ import annotations

import html
import threading
from collections.abc import Iterator
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

import httpx
import pytest

from .conftest import Site, artifacts, sign_in

pytestmark = pytest.mark.browser

FORGED = "did not come from these pages"


PAGES: dict[str, str] = {}  # path -> HTML of the forging pages


class _Pages(BaseHTTPRequestHandler):
    def do_GET(self) -> None:
        body = PAGES.get(self.path, "not here").encode()
        self.send_response(200 if self.path in PAGES else 404)
        self.send_header("Content-Type", "text/html; charset=utf-8")
        self.send_header("Content-Length", str(len(body)))
        self.end_headers()
        self.wfile.write(body)

    def log_message(self, *_: Any) -> None:
        pass


@pytest.fixture(scope="module")
def forger() -> Iterator[tuple[int, dict[str, str]]]:
    """(port, pages): a loopback server whose pages the test fills in."""
    server = ThreadingHTTPServer(("127.0.0.1", 0), _Pages)
    thread = threading.Thread(target=server.serve_forever, name="forger", daemon=True)
    thread.start()
    yield int(server.server_address[1]), PAGES
    server.shutdown()
    thread.join(5)
    server.server_close()


def _auto_post(action: str, fields: dict[str, str]) -> str:
    inputs = "".join(
        f'<input type="hidden" name="{html.escape(k)}" value="{html.escape(v)}">' for k, v in fields.items()
    )
    return (
        f'<!doctype html><title>Win a prize</title><form id="f" method="post" action="{html.escape(action)}">'
        f"{inputs}</form><script>document.getElementById('f').submit()</script>"
    )


def _api(site: Site, path: str) -> Any:
    headers = {"Authorization": f"Bearer {site.tokens['viewer']}"}
    response = httpx.get(f"{site.url}{path}", headers=headers, timeout=10)
    assert response.status_code == 200, response.text
    return response.json()


def test_a_page_of_the_same_site_cannot_use_the_forms(
    page: Any, site: Site, forger: tuple[int, dict[str, str]]
) -> None:
    port, pages = forger
    flag = _api(site, f"/flags?batch={site.hearth_id}&status=all")["items"][0]
    assert flag["status"] == "open"
    batches_before = _api(site, "/batches?limit=1")["total"]
    pages["/disposition"] = _auto_post(
        f"{site.url}/ui/flags/{flag['id']}/disposition", {"decision": "use-as-is", "comment": "fine"}
    )
    pages["/rerun"] = _auto_post(f"{site.url}/ui/batches/{site.hearth_id}/rerun", {"duration:soak": "9 h"})
    # Even with a nonce cookie of its own making (cookies are not kept apart by port), it has no token.
    pages["/planted"] = (
        "<!doctype html><script>document.cookie = 'soakline_csrf="
        + "B" * 43
        + "; path=/ui';</script>"
        + _auto_post(
            f"{site.url}/ui/flags/{flag['id']}/disposition",
            {"decision": "scrap", "comment": "x", "csrf": "0" * 64},
        )
    )

    sign_in(page, site, "reviewer")
    for name in ("disposition", "planted"):
        with page.expect_response(lambda r: "/disposition" in r.url and r.request.method == "POST") as sent:
            page.goto(f"http://127.0.0.1:{port}/{name}")
        assert sent.value.status == 403, name
        page.wait_for_load_state()
        assert FORGED in page.locator("main").inner_text()
    page.screenshot(path=str(artifacts() / "forged-form.png"), full_page=True)
    assert _api(site, f"/flags?batch={site.hearth_id}&status=all")["items"][0]["status"] == "open"

    page.goto(f"{site.url}/ui/batches")
    page.get_by_role("button", name="Sign out").click()
    page.wait_for_url("**/ui/sign-in")
    sign_in(page, site, "planner")
    with page.expect_response(lambda r: "/rerun" in r.url and r.request.method == "POST") as sent:
        page.goto(f"http://127.0.0.1:{port}/rerun")
    assert sent.value.status == 403
    assert _api(site, "/batches?limit=1")["total"] == batches_before


def test_a_page_of_another_site_cannot_sign_a_browser_in(
    page: Any, site: Site, forger: tuple[int, dict[str, str]]
) -> None:
    port, pages = forger
    pages["/sign-in"] = _auto_post(
        f"{site.url}/ui/sign-in", {"token": site.tokens["planner"], "next": "/ui/batches"}
    )
    # The victim has been on the pages before (a nonce cookie of the site), then visits the other site.
    page.goto(f"{site.url}/ui/sign-in")
    with page.expect_response(lambda r: r.url.endswith("/ui/sign-in") and r.request.method == "POST") as sent:
        page.goto(f"http://localhost:{port}/sign-in")
    assert sent.value.status == 403
    assert not [c for c in page.context.cookies() if c["name"] == "soakline_session"]
    page.goto(f"{site.url}/ui/batches")
    assert "/ui/sign-in" in page.url  # still signed out
