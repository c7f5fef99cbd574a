"""API tokens: creation (the token is shown once; only its SHA-256 is stored) and lookup by bearer."""

from __future__ import annotations

import hashlib
import re
import secrets
from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from models.tables import ApiToken, Role

__all__ = ["Principal", "create_token", "hash_token", "lookup_token"]

_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.@-]{0,99}$")


@dataclass(frozen=True)
class Principal:
    """Who is calling: the token's name (recorded on submissions and dispositions) and role."""

    name: str
    role: Role


def hash_token(token: str) -> str:
    """Hex SHA-256 of a token: what the database keeps."""
    return hashlib.sha256(token.encode()).hexdigest()


def create_token(session: Session, name: str, role: Role) -> str:
    """Store a new token for ``name`` and return it; it cannot be recovered later."""
    if not _NAME.match(name):
        raise ValueError("token name: use letters, digits and _ . @ - (at most 100 characters)")
    if session.scalar(select(ApiToken.id).where(ApiToken.name == name)) is not None:
        raise ValueError(f"token name {name!r} is taken")
    token = "sl_" + secrets.token_urlsafe(32)
    session.add(ApiToken(name=name, role=role.value, token_sha256=hash_token(token)))
    return token


def lookup_token(session: Session, token: str) -> Principal | None:
    """The principal for a presented token, None when unknown."""
    row = session.scalar(select(ApiToken).where(ApiToken.token_sha256 == hash_token(token)))
    return None if row is None else Principal(row.name, Role(row.role))
