"""The API's outer guard (an ASGI middleware): size limit, unusable text in the address, last-resort 500.

It runs before routing and validation, so that:

- a request body larger than ``SOAKLINE_MAX_BODY_BYTES`` is refused with 413 as soon as that many
  bytes have arrived (by its Content-Length at once), never parsed or validated;
- a path or query with NUL or other control characters is refused with 422 naming ``path`` or
  ``query.NAME`` (such text cannot be stored or compared in PostgreSQL);
- an error that nothing else handled still gets a one-line JSON body, with no traceback in it, and
  the connection stays open for the client's next request (the traceback goes to the log once).
"""

from __future__ import annotations

import json
import logging
from typing import Any
from urllib.parse import parse_qsl

from starlette.types import ASGIApp, Message, Receive, Scope, Send

from models.text import text_problem

__all__ = ["RequestGuard"]

log = logging.getLogger(__name__)


async def _send_json(send: Send, status: int, body: dict[str, Any]) -> None:
    data = json.dumps(body).encode()
    headers = [(b"content-type", b"application/json"), (b"content-length", str(len(data)).encode())]
    await send({"type": "http.response.start", "status": status, "headers": headers})
    await send({"type": "http.response.body", "body": data})


def _address_problems(scope: Scope) -> list[dict[str, str]]:
    problems = []
    if (problem := text_problem(scope.get("path", ""), single_line=True)) is not None:
        problems.append({"path": "path", "message": problem})
    query = scope.get("query_string", b"").decode("latin-1")
    for name, value in parse_qsl(query, keep_blank_values=True, encoding="utf-8", errors="replace"):
        for text in (name, value):
            if (problem := text_problem(text, single_line=True)) is not None:
                problems.append(
                    {"path": f"query.{name.encode('ascii', 'replace').decode()}", "message": problem}
                )
    return problems


def _declared_length(scope: Scope) -> int | None:
    for key, value in scope.get("headers", []):
        if key == b"content-length":
            try:
                return int(value)
            except ValueError:
                return None
    return None


class _TooLarge(Exception):
    pass


class RequestGuard:
    """ASGI middleware; ``max_body_bytes`` is the largest request body accepted."""

    def __init__(self, app: ASGIApp, max_body_bytes: int) -> None:
        self.app = app
        self.max_body_bytes = max_body_bytes

    def _too_large(self) -> dict[str, Any]:
        return {
            "detail": f"the request body is larger than {self.max_body_bytes} bytes "
            "(SOAKLINE_MAX_BODY_BYTES); split the batch or raise the limit"
        }

    async def _read_body(self, receive: Receive) -> list[Message]:
        """The whole body, buffered (at most the limit), to be replayed to the application."""
        messages: list[Message] = []
        size = 0
        while True:
            message = await receive()
            messages.append(message)
            if message["type"] != "http.request":
                return messages
            size += len(message.get("body", b""))
            if size > self.max_body_bytes:
                raise _TooLarge
            if not message.get("more_body", False):
                return messages

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        if problems := _address_problems(scope):
            await _send_json(send, 422, {"detail": "the request is invalid", "problems": problems})
            return
        declared = _declared_length(scope)
        if declared is not None and declared > self.max_body_bytes:
            await _send_json(send, 413, self._too_large())
            return
        try:
            buffered = await self._read_body(receive)
        except _TooLarge:
            await _send_json(send, 413, self._too_large())
            return

        async def replay() -> Message:
            return buffered.pop(0) if buffered else await receive()

        started = False

        async def tracking_send(message: Message) -> None:
            nonlocal started
            if message["type"] == "http.response.start":
                started = True
            await send(message)

        try:
            await self.app(scope, replay, tracking_send)
        except Exception:
            log.exception("%s %s failed", scope.get("method"), scope.get("path"))
            if not started:
                await _send_json(send, 500, {"detail": "internal error; it has been logged on the server"})
