"""Exchange profiles in the service: create (planners), read and list (everyone), and the lookup that a
submitted batch's ``profile: NAME`` steps are resolved with. All their SQL is here."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from models.errors import SpecError
from models.profiles import ProfileLookup, ProfileSpec, parse_profile
from models.tables import ExchangeProfile, utcnow
from models.text import value_problems
from scheduler.api.auth import Principal
from scheduler.api.errors import InvalidInput, ProfileExists, ProfileNotFound
from scheduler.api.schemas import ProfilePublic, ProfileSummary

__all__ = ["create_profile", "get_profile", "list_profiles", "lookup"]


def _public(row: ExchangeProfile) -> ProfilePublic:
    return ProfilePublic(
        profile=ProfileSpec.model_validate(row.data), created_by=row.created_by, created_at=row.created_at
    )


def create_profile(session: Session, doc: Mapping[str, Any], who: Principal) -> ProfilePublic:
    """Validate and store a new profile; a name already taken is refused (profiles never change)."""
    if raw := value_problems(doc):
        raise InvalidInput("the profile is invalid", [(".".join(map(str, loc)), m) for loc, m in raw])
    try:
        spec = parse_profile(doc)
    except SpecError as exc:
        raise InvalidInput("the profile is invalid", [(p.path, p.message) for p in exc.problems]) from None
    if session.scalar(select(ExchangeProfile.id).where(ExchangeProfile.name == spec.name)) is not None:
        raise ProfileExists(spec.name)
    row = ExchangeProfile(
        name=spec.name, data=spec.model_dump(mode="json"), created_by=who.name, created_at=utcnow()
    )
    session.add(row)
    try:
        session.commit()
    except IntegrityError:  # the same name stored by another request meanwhile
        session.rollback()
        raise ProfileExists(spec.name) from None
    return _public(row)


def get_profile(session: Session, name: str) -> ProfilePublic:
    row = session.scalar(select(ExchangeProfile).where(ExchangeProfile.name == name))
    if row is None:
        raise ProfileNotFound(name)
    return _public(row)


def list_profiles(session: Session) -> list[ProfileSummary]:
    rows = session.scalars(select(ExchangeProfile).order_by(ExchangeProfile.name)).all()
    out = []
    for row in rows:
        spec = ProfileSpec.model_validate(row.data)
        out.append(
            ProfileSummary(
                name=spec.name,
                exchange=spec.exchange_text,
                step=spec.step,
                record=spec.record,
                record_date=spec.record_date,
                rms_k=spec.rms_k,
                warnings=len(spec.warnings),
                created_by=row.created_by,
                created_at=row.created_at,
            )
        )
    return out


def lookup(session: Session) -> ProfileLookup:
    """Profiles by name from the database, for ``parse_batch(profiles=...)``."""

    def find(name: str) -> ProfileSpec | None:
        data = session.scalar(select(ExchangeProfile.data).where(ExchangeProfile.name == name))
        return None if data is None else ProfileSpec.model_validate(data)

    return find
