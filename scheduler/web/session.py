"""Sign-in for the review pages: the API token, checked as the API checks it, kept in a session cookie.

The cookie holds the token itself and nothing else (no role, no name): every request looks the token up
again, so revoking it in the database ends the browser session too. It is http-only (no script reads
it), SameSite=strict (never sent with a request started by another site) and Secure as the deployment
says (``scheduler.web.csrf.cookie_secure``). The forms carry their own token besides
(``scheduler.web.csrf``), since SameSite does not stop a page of the same site.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Annotated
from urllib.parse import quote

from fastapi import Depends, HTTPException, Request
from fastapi.responses import Response

from models.tables import Role
from scheduler.api.auth import Principal, lookup_token
from scheduler.api.deps import SessionDep, check_role

__all__ = [
    "SESSION_COOKIE",
    "WebPlanner",
    "WebReviewer",
    "WebUser",
    "clear_session",
    "page_role",
    "page_user",
    "start_session",
]

SESSION_COOKIE = "soakline_session"
SESSION_MAX_AGE_S = 12 * 3600  # one shift; the token stays valid, only the browser forgets it


def start_session(response: Response, token: str, secure: bool) -> None:
    """Keep ``token`` in the session cookie of ``response`` (``secure``: only ever sent over https)."""
    response.set_cookie(
        SESSION_COOKIE,
        token,
        max_age=SESSION_MAX_AGE_S,
        path="/ui",
        secure=secure,
        httponly=True,
        samesite="strict",
    )


def clear_session(response: Response, secure: bool) -> None:
    response.delete_cookie(SESSION_COOKIE, path="/ui", secure=secure, httponly=True, samesite="strict")


def page_user(request: Request, session: SessionDep) -> Principal:
    """The signed-in principal; a page without a valid session redirects to the sign-in page.

    It is kept on ``request.state.user`` so that an error page can say who is signed in.
    """
    token = request.cookies.get(SESSION_COOKIE)
    principal = lookup_token(session, token) if token else None
    request.state.user = principal
    if principal is None:
        target = request.url.path + (f"?{request.url.query}" if request.url.query else "")
        raise HTTPException(
            status_code=303,
            detail="sign in first",
            headers={"Location": f"/ui/sign-in?next={quote(target, safe='')}"},
        )
    return principal


WebUser = Annotated[Principal, Depends(page_user)]


def page_role(role: Role) -> Callable[[Principal], Principal]:
    """Page dependency that lets only ``role`` through, by the API's own rule (403 otherwise)."""

    def check(principal: WebUser) -> Principal:
        return check_role(principal, role)

    return check


WebPlanner = Annotated[Principal, Depends(page_role(Role.PLANNER))]
WebReviewer = Annotated[Principal, Depends(page_role(Role.REVIEWER))]
