"""API tokens: creation (the token is shown once; only its SHA-256 is stored), lookup by bearer, listing
and revocation.

A token may carry an expiry; an expired token is refused like an unknown one. Revoking deletes the row,
so the name can be given to a new token, and every page session holding the old token ends at once
(pages look the token up on every request). The time of last use is written at most once a minute per
token, in its own short transaction, so that reads stay reads.
"""

from __future__ import annotations

import hashlib
import re
import secrets
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any, cast

from sqlalchemy import CursorResult, Engine, delete, select, update
from sqlalchemy.orm import Session

from models.tables import ApiToken, Role, utcnow

__all__ = [
    "Principal",
    "TokenInfo",
    "create_token",
    "hash_token",
    "list_tokens",
    "lookup_token",
    "revoke_token",
]

LAST_USED_EVERY = timedelta(seconds=60)
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.@-]{0,99}$")


@dataclass(frozen=True)
class Principal:
    """Who is calling: the token's name (recorded on submissions and dispositions) and role."""

    name: str
    role: Role


def hash_token(token: str) -> str:
    """Hex SHA-256 of a token: what the database keeps."""
    return hashlib.sha256(token.encode()).hexdigest()


def create_token(session: Session, name: str, role: Role, expires_at: datetime | None = None) -> str:
    """Store a new token for ``name`` and return it; it cannot be recovered later."""
    if not _NAME.match(name):
        raise ValueError("token name: use letters, digits and _ . @ - (at most 100 characters)")
    if session.scalar(select(ApiToken.id).where(ApiToken.name == name)) is not None:
        raise ValueError(f"token name {name!r} is taken (revoke it first: soakline token revoke {name})")
    if expires_at is not None and expires_at <= utcnow():
        raise ValueError("the expiry must be in the future")
    token = "sl_" + secrets.token_urlsafe(32)
    session.add(
        ApiToken(
            name=name,
            role=role.value,
            token_sha256=hash_token(token),
            created_at=utcnow(),
            expires_at=expires_at,
        )
    )
    return token


def lookup_token(session: Session, token: str) -> Principal | None:
    """The principal for a presented token, None when unknown, revoked or expired."""
    row = session.scalar(select(ApiToken).where(ApiToken.token_sha256 == hash_token(token)))
    if row is None:
        return None
    now = utcnow()
    if row.expires_at is not None and row.expires_at <= now:
        return None
    if row.last_used_at is None or now - row.last_used_at > LAST_USED_EVERY:
        bind = session.get_bind()
        engine = bind if isinstance(bind, Engine) else bind.engine
        with engine.connect() as conn:  # its own transaction: a read stays a read
            conn.execute(update(ApiToken).where(ApiToken.id == row.id).values(last_used_at=now))
            conn.commit()
    return Principal(row.name, Role(row.role))


@dataclass(frozen=True)
class TokenInfo:
    """What ``soakline token list`` shows of a token (never the token itself)."""

    name: str
    role: Role
    created_at: datetime
    last_used_at: datetime | None
    expires_at: datetime | None


def list_tokens(session: Session) -> list[TokenInfo]:
    rows = session.scalars(select(ApiToken).order_by(ApiToken.name))
    return [TokenInfo(r.name, Role(r.role), r.created_at, r.last_used_at, r.expires_at) for r in rows]


def revoke_token(session: Session, name: str) -> bool:
    """Delete the token called ``name``; True when there was one. Its page sessions end at once."""
    return bool(
        cast(CursorResult[Any], session.execute(delete(ApiToken).where(ApiToken.name == name))).rowcount
    )
