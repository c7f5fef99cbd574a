"""Sign-in for the review pages: the API token, checked as the API checks it, kept in a session cookie.

The cookie holds the token itself and nothing else (no role, no name): every request looks the token up
again, so revoking it in the database ends the browser session too. It is http-only (no script reads
it), Secure and SameSite=strict (never sent with a request started by another site, which is also what
keeps the pages' forms safe from cross-site posts).
"""

from __future__ import annotations

from typing import Annotated
from urllib.parse import quote

from fastapi import Depends, HTTPException, Request
from fastapi.responses import Response

from models.tables import Role
from scheduler.api.auth import Principal, lookup_token
from scheduler.api.deps import SessionDep

__all__ = [
    "SESSION_COOKIE",
    "WebUser",
    "clear_session",
    "has_role",
    "page_user",
    "start_session",
]

SESSION_COOKIE = "soakline_session"
SESSION_MAX_AGE_S = 12 * 3600  # one shift; the token stays valid, only the browser forgets it


def start_session(response: Response, token: str) -> None:
    """Keep ``token`` in the session cookie of ``response``."""
    response.set_cookie(
        SESSION_COOKIE,
        token,
        max_age=SESSION_MAX_AGE_S,
        path="/ui",
        secure=True,
        httponly=True,
        samesite="strict",
    )


def clear_session(response: Response) -> None:
    response.delete_cookie(SESSION_COOKIE, path="/ui", secure=True, httponly=True, samesite="strict")


def page_user(request: Request, session: SessionDep) -> Principal:
    """The signed-in principal; a page without a valid session redirects to the sign-in page."""
    token = request.cookies.get(SESSION_COOKIE)
    principal = lookup_token(session, token) if token else None
    if principal is None:
        target = request.url.path + (f"?{request.url.query}" if request.url.query else "")
        raise HTTPException(
            status_code=303,
            detail="sign in first",
            headers={"Location": f"/ui/sign-in?next={quote(target, safe='')}"},
        )
    return principal


WebUser = Annotated[Principal, Depends(page_user)]


def has_role(user: Principal, role: Role) -> bool:
    return user.role == role
