"""Reading the review pages' forms in the tests: each form's token and fields, as a browser would."""

from __future__ import annotations

from html.parser import HTMLParser
from typing import Any


class Forms(HTMLParser):
    """Every ``<form>`` of a page: its method, action and the names and values of its inputs."""

    def __init__(self) -> None:
        super().__init__()
        self.forms: list[dict[str, Any]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        if tag == "form":
            self.forms.append(
                {"method": (a.get("method") or "get").lower(), "action": a.get("action"), "fields": {}}
            )
        elif tag in ("input", "textarea", "select") and self.forms and a.get("name"):
            self.forms[-1]["fields"][a["name"]] = a.get("value") or ""


def forms_of(html: str) -> list[dict[str, Any]]:
    parser = Forms()
    parser.feed(html)
    return parser.forms


def page_csrf(client: Any, path: str) -> str:
    """The token of the post forms of the page at ``path`` (the client keeps the nonce cookie)."""
    page = client.get(path)
    assert page.status_code == 200, page.text
    tokens = {f["fields"].get("csrf") for f in forms_of(page.text) if f["method"] == "post"}
    assert len(tokens) == 1 and None not in tokens, f"{path}: post forms carry one token, got {tokens}"
    token = tokens.pop()
    assert isinstance(token, str) and token
    return token
