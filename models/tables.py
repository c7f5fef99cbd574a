"""Database tables of the service (SQLAlchemy 2 ORM): batches, their parts, jobs, results, flags, reviews.

The database is the source of truth. A batch, its parts and one job per part are committed together
before anything is queued; a worker writes a part's result once (unique on batch and part) and the flags
that come with it in the same transaction; reviewers' dispositions are only ever added, never changed.
Statuses are ``StrEnum`` values stored as plain strings, so that migrations need no enum types.
"""

from __future__ import annotations

from datetime import UTC, datetime
from enum import StrEnum
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    DateTime,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
    TypeDecorator,
    UniqueConstraint,
)
from sqlalchemy.dialects.postgresql import JSONB
from sqlalchemy.engine import Dialect
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

__all__ = [
    "ApiToken",
    "Base",
    "Batch",
    "BatchStatus",
    "Decision",
    "Disposition",
    "ExchangeProfile",
    "Flag",
    "FlagStatus",
    "Job",
    "JobStatus",
    "Part",
    "Result",
    "Role",
    "UtcDateTime",
    "utcnow",
]

JsonType = JSON().with_variant(JSONB(), "postgresql")


def utcnow() -> datetime:
    """Timezone-aware current time; every stored timestamp is UTC."""
    return datetime.now(UTC)


class BatchStatus(StrEnum):
    """Where a batch is: ``done`` when every part has a result, ``failed`` when some part gave up."""

    QUEUED = "queued"
    RUNNING = "running"
    DONE = "done"
    FAILED = "failed"


class JobStatus(StrEnum):
    """State of the job that computes one part."""

    QUEUED = "queued"
    RUNNING = "running"
    DONE = "done"
    FAILED = "failed"


class FlagStatus(StrEnum):
    """A flag is open until a reviewer records a disposition."""

    OPEN = "open"
    DISPOSITIONED = "dispositioned"


class Decision(StrEnum):
    """What a reviewer decided for a flagged part."""

    USE_AS_IS = "use-as-is"
    RE_TREAT = "re-treat"
    SCRAP = "scrap"


class Role(StrEnum):
    """What an API token may do: planners submit and rerun, reviewers disposition, everyone reads."""

    PLANNER = "planner"
    REVIEWER = "reviewer"
    VIEWER = "viewer"


class UtcDateTime(TypeDecorator[datetime]):
    """Timestamp stored in UTC and read back timezone-aware, also from SQLite (which drops the zone)."""

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is not None and value.tzinfo is not None:
            value = value.astimezone(UTC)
            if dialect.name == "sqlite":
                value = value.replace(tzinfo=None)
        return value

    def process_result_value(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is not None and value.tzinfo is None:
            value = value.replace(tzinfo=UTC)
        return value


def _tz() -> UtcDateTime:
    return UtcDateTime()


class Base(DeclarativeBase):
    """Declarative base; ``Base.metadata`` is what Alembic compares against."""


class Batch(Base):
    """A submitted batch: the file as sent (kept verbatim, for the record), the resolved batch that every
    later reader uses (validated once at submit, a rerun's durations applied; see ``models.resolved``)
    and, for a rerun, its parent and the step durations changed from the original file."""

    __tablename__ = "batches"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(200))
    status: Mapped[str] = mapped_column(String(16), default=BatchStatus.QUEUED, index=True)
    # Both documents are read only when used (deferred): a 5,000-part batch's are megabytes.
    spec: Mapped[dict[str, Any]] = mapped_column(JsonType, deferred=True)
    # None only for a batch stored before this column whose file no longer validated at the upgrade.
    resolved: Mapped[dict[str, Any] | None] = mapped_column(JsonType, deferred=True)
    durations: Mapped[dict[str, str]] = mapped_column(JsonType, default=dict)
    parent_id: Mapped[int | None] = mapped_column(ForeignKey("batches.id"), index=True)
    part_count: Mapped[int] = mapped_column(Integer)
    submitted_by: Mapped[str] = mapped_column(String(100))
    created_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)
    finished_at: Mapped[datetime | None] = mapped_column(_tz())

    parts: Mapped[list[Part]] = relationship(
        back_populates="batch", order_by="Part.position", lazy="raise", cascade="all, delete-orphan"
    )


class Part(Base):
    """One part of a batch, in file order."""

    __tablename__ = "parts"
    __table_args__ = (UniqueConstraint("batch_id", "part_id", name="uq_parts_batch_part"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id", ondelete="CASCADE"))
    part_id: Mapped[str] = mapped_column(String(200))
    position: Mapped[int] = mapped_column(Integer)

    batch: Mapped[Batch] = relationship(back_populates="parts", lazy="raise")


class Job(Base):
    """The unit of queued work: compute one part. ``deadline`` is when the sweeper queues it again,
    ``owner`` the execution that holds it while it runs."""

    __tablename__ = "jobs"
    __table_args__ = (
        UniqueConstraint("batch_id", "part_id", name="uq_jobs_batch_part"),
        Index("ix_jobs_status_deadline", "status", "deadline"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id", ondelete="CASCADE"), index=True)
    part_id: Mapped[str] = mapped_column(String(200))
    status: Mapped[str] = mapped_column(String(16), default=JobStatus.QUEUED)
    attempts: Mapped[int] = mapped_column(Integer, default=0)
    # Queued: when the sweeper sends it again if no worker took it. Running: the end of its holder's
    # lease, pushed out by the holder's heartbeat (see models.repository).
    deadline: Mapped[datetime] = mapped_column(_tz())
    owner: Mapped[str | None] = mapped_column(String(120))
    error: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)
    updated_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow, onupdate=utcnow)


class Result(Base):
    """A part's computed result (the run contract's part object, trace included); written once."""

    __tablename__ = "results"
    __table_args__ = (UniqueConstraint("batch_id", "part_id", name="uq_results_batch_part"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id", ondelete="CASCADE"), index=True)
    part_id: Mapped[str] = mapped_column(String(200))
    flagged: Mapped[bool] = mapped_column(Boolean)
    body: Mapped[dict[str, Any]] = mapped_column(JsonType)
    created_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)


class Flag(Base):
    """One missed target of one part, as reported by the engine, open until dispositioned."""

    __tablename__ = "flags"
    __table_args__ = (
        UniqueConstraint("batch_id", "part_id", "seq", name="uq_flags_batch_part_seq"),
        Index("ix_flags_status_batch", "status", "batch_id"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id", ondelete="CASCADE"))
    part_id: Mapped[str] = mapped_column(String(200))
    seq: Mapped[int] = mapped_column(Integer)
    step: Mapped[str] = mapped_column(String(200))
    at: Mapped[str] = mapped_column(String(50))
    target: Mapped[str] = mapped_column(String(50))
    status: Mapped[str] = mapped_column(String(16), default=FlagStatus.OPEN)
    body: Mapped[dict[str, Any]] = mapped_column(JsonType)
    created_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)

    dispositions: Mapped[list[Disposition]] = relationship(
        back_populates="flag", order_by="Disposition.id", lazy="raise"
    )


class Disposition(Base):
    """A reviewer's decision on a flag, with who and when; a later one supersedes, none is erased."""

    __tablename__ = "dispositions"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    flag_id: Mapped[int] = mapped_column(ForeignKey("flags.id", ondelete="CASCADE"), index=True)
    decision: Mapped[str] = mapped_column(String(16))
    comment: Mapped[str] = mapped_column(Text)
    decided_by: Mapped[str] = mapped_column(String(100))
    decided_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)

    flag: Mapped[Flag] = relationship(back_populates="dispositions", lazy="raise")


class ApiToken(Base):
    """An API credential: only the SHA-256 of the token is kept, never the token itself."""

    __tablename__ = "api_tokens"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(100), unique=True)
    role: Mapped[str] = mapped_column(String(16))
    token_sha256: Mapped[str] = mapped_column(String(64), unique=True)
    created_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)
    expires_at: Mapped[datetime | None] = mapped_column(_tz())
    last_used_at: Mapped[datetime | None] = mapped_column(_tz())


class ExchangeProfile(Base):
    """A fitted exchange profile (``models.profiles.ProfileSpec`` as JSON): created once by a planner,
    never changed; a new fit of the same furnace or tank takes a new name."""

    __tablename__ = "exchange_profiles"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200), unique=True)
    data: Mapped[dict[str, Any]] = mapped_column(JsonType)
    created_by: Mapped[str] = mapped_column(String(100))
    created_at: Mapped[datetime] = mapped_column(_tz(), default=utcnow)
