"""Request dependencies as ``Annotated`` aliases: settings, one session per request, the caller's token."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Annotated

from fastapi import Depends, Path, Query, Request
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer
from sqlalchemy.orm import Session

from models.settings import Settings
from models.store import session_factory
from models.tables import Role
from scheduler.api.auth import Principal, lookup_token
from scheduler.api.errors import Forbidden, Unauthorized

__all__ = [
    "MAX_ID",
    "BatchId",
    "CurrentToken",
    "FlagId",
    "Offset",
    "Planner",
    "Reviewer",
    "SessionDep",
    "SettingsDep",
    "check_role",
    "has_role",
    "require_role",
]

# Ids and offsets are PostgreSQL integers: a larger number is a 422 naming the field, not a database error.
MAX_ID = 2**31 - 1
BatchId = Annotated[int, Path(ge=1, le=MAX_ID, description="A batch id.")]
FlagId = Annotated[int, Path(ge=1, le=MAX_ID, description="A flag id.")]
Offset = Annotated[int, Query(ge=0, le=MAX_ID, description="How many items to skip.")]

_bearer = HTTPBearer(auto_error=False, description="An API token from `soakline token create`.")


def get_settings_dep(request: Request) -> Settings:
    settings: Settings = request.app.state.settings
    return settings


SettingsDep = Annotated[Settings, Depends(get_settings_dep)]


def get_session(settings: SettingsDep) -> Iterator[Session]:
    with session_factory(settings)() as session:
        yield session


SessionDep = Annotated[Session, Depends(get_session)]


def current_token(
    session: SessionDep,
    credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(_bearer)],
) -> Principal:
    if credentials is None or credentials.scheme.lower() != "bearer":
        raise Unauthorized("missing token: send 'Authorization: Bearer TOKEN'")
    principal = lookup_token(session, credentials.credentials)
    if principal is None:
        raise Unauthorized("unknown, revoked or expired token")
    return principal


CurrentToken = Annotated[Principal, Depends(current_token)]


def has_role(principal: Principal, role: Role) -> bool:
    """The one role rule: a token has exactly one role, and only that role may do its things."""
    return principal.role == role


def check_role(principal: Principal, role: Role) -> Principal:
    """``principal`` when it has ``role``; Forbidden (403) naming both otherwise. The API's role
    dependencies and the pages' role dependencies both use this one rule."""
    if not has_role(principal, role):
        raise Forbidden(f"this needs a {role.value} token; {principal.name!r} is a {principal.role.value}")
    return principal


def require_role(role: Role) -> Callable[[Principal], Principal]:
    """Dependency that lets only ``role`` through (403 otherwise)."""

    def check(principal: CurrentToken) -> Principal:
        return check_role(principal, role)

    return check


Planner = Annotated[Principal, Depends(require_role(Role.PLANNER))]
Reviewer = Annotated[Principal, Depends(require_role(Role.REVIEWER))]
