"""Domain errors of the service and the one place where they become HTTP responses.

Every error carries the ids it is about and a message a user can act on. Bodies are
``{"detail": message}``, plus ``"problems": [{"path", "message"}]`` for 422 (invalid input), where
``path`` names the field as in the batch file (``parts[2].thickness``) or the request (``query.limit``).
"""

from __future__ import annotations

from collections.abc import Awaitable, Callable
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, Response
from sqlalchemy.exc import DBAPIError
from sqlalchemy.exc import TimeoutError as PoolTimeout

from models import format_path
from models.store import DatabaseUnavailable, is_outage

__all__ = [
    "BatchNotFound",
    "DomainError",
    "FlagNotFound",
    "Forbidden",
    "InvalidInput",
    "PartNotFound",
    "ProfileExists",
    "ProfileNotFound",
    "ResultNotReady",
    "ServiceUnavailable",
    "Unauthorized",
    "install_error_handlers",
]


RETRY_AFTER_S = 5


class DomainError(Exception):
    """Base of the errors a request can end with; ``status_code`` is its HTTP status."""

    status_code = 400

    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message

    def body(self) -> dict[str, Any]:
        return {"detail": self.message}


class Unauthorized(DomainError):
    status_code = 401


class Forbidden(DomainError):
    status_code = 403


class BatchNotFound(DomainError):
    status_code = 404

    def __init__(self, batch_id: int) -> None:
        super().__init__(f"batch {batch_id} not found")
        self.batch_id = batch_id


class PartNotFound(DomainError):
    status_code = 404

    def __init__(self, batch_id: int, part_id: str) -> None:
        super().__init__(f"batch {batch_id} has no part {part_id!r}")
        self.batch_id, self.part_id = batch_id, part_id


class FlagNotFound(DomainError):
    status_code = 404

    def __init__(self, flag_id: int) -> None:
        super().__init__(f"flag {flag_id} not found")
        self.flag_id = flag_id


class ProfileNotFound(DomainError):
    status_code = 404

    def __init__(self, name: str) -> None:
        super().__init__(f"no exchange profile named {name!r}")
        self.name = name


class ProfileExists(DomainError):
    status_code = 409

    def __init__(self, name: str) -> None:
        super().__init__(
            f"an exchange profile named {name!r} exists already; profiles never change: save a new fit "
            "under a new name"
        )
        self.name = name


class ResultNotReady(DomainError):
    status_code = 409

    def __init__(self, batch_id: int, part_id: str, status: str) -> None:
        super().__init__(f"part {part_id!r} of batch {batch_id} has no result yet (job {status})")
        self.batch_id, self.part_id, self.status = batch_id, part_id, status


class ServiceUnavailable(DomainError):
    """The database is not answering: try again after ``retry_after_s`` (sent as Retry-After)."""

    status_code = 503

    def __init__(self, message: str, retry_after_s: int = RETRY_AFTER_S) -> None:
        super().__init__(message)
        self.retry_after_s = retry_after_s


class InvalidInput(DomainError):
    """The request or batch file is invalid; ``problems`` lists every (path, message)."""

    status_code = 422

    def __init__(self, message: str, problems: list[tuple[str, str]]) -> None:
        super().__init__(message)
        self.problems = problems

    def body(self) -> dict[str, Any]:
        return {
            "detail": self.message,
            "problems": [{"path": path, "message": msg} for path, msg in self.problems],
        }


def _request_path(loc: tuple[Any, ...]) -> str:
    """``("body", "durations", "soak")`` -> ``"body.durations.soak"``, written as batch-file paths are."""
    return format_path(tuple(item if isinstance(item, int) else str(item) for item in loc)) or "body"


PageRenderer = Callable[[Request, DomainError], Response]
DATABASE_DOWN = "the database is not answering; try again shortly"


def _domain(pages: tuple[str, PageRenderer] | None) -> Callable[[Request, Exception], Awaitable[Response]]:
    async def handle(request: Request, exc: Exception) -> Response:
        assert isinstance(exc, DomainError)
        headers = _headers(exc)
        if pages is not None and request.url.path.startswith(pages[0]):
            page = pages[1](request, exc)
            page.headers.update(headers)
            return page
        return JSONResponse(exc.body(), status_code=exc.status_code, headers=headers)

    return handle


def _headers(exc: DomainError) -> dict[str, str]:
    if isinstance(exc, Unauthorized):
        return {"WWW-Authenticate": "Bearer"}
    if isinstance(exc, ServiceUnavailable):
        return {"Retry-After": str(exc.retry_after_s)}
    return {}


def _database(
    domain: Callable[[Request, Exception], Awaitable[Response]],
) -> Callable[[Request, Exception], Awaitable[Response]]:
    """A database that is not answering becomes a 503 with Retry-After and a one-line body; the outage is
    logged once (``app.state.outage``), not as a traceback per request. Other database errors are bugs
    and go on to the last-resort handler (scheduler.api.guard)."""

    async def handle(request: Request, exc: Exception) -> Response:
        if not is_outage(exc):
            raise exc
        outage = getattr(request.app.state, "outage", None)
        if outage is not None:
            outage.failed(exc)
        return await domain(request, ServiceUnavailable(DATABASE_DOWN))

    return handle


async def _validation(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, RequestValidationError)
    problems = [(_request_path(tuple(err.get("loc", ()))), str(err.get("msg", ""))) for err in exc.errors()]
    return JSONResponse(InvalidInput("the request is invalid", problems).body(), status_code=422)


def install_error_handlers(app: FastAPI, pages: tuple[str, PageRenderer] | None = None) -> None:
    """Map every domain error, and FastAPI's own request validation, to its HTTP response.

    ``pages`` is (path prefix, renderer): a domain error on those paths becomes a page instead of JSON.
    """
    domain = _domain(pages)
    app.add_exception_handler(DomainError, domain)
    app.add_exception_handler(RequestValidationError, _validation)
    for kind in (DBAPIError, PoolTimeout, DatabaseUnavailable):
        app.add_exception_handler(kind, _database(domain))
