"""Runtime configuration of the service: one pydantic-settings object read from ``SOAKLINE_*`` variables.

Read it with :func:`get_settings` (cached). A bad value stops the process at start-up with a message
naming the variable (:class:`SettingsError`), rather than failing later inside a request or a task.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path
from typing import Literal, Self

from platformdirs import user_data_dir
from pydantic import Field, SecretStr, ValidationError, field_validator, model_validator
from pydantic_settings import BaseSettings, SettingsConfigDict
from sqlalchemy.engine import make_url
from sqlalchemy.exc import ArgumentError

from models import limits

ENV_PREFIX = "SOAKLINE_"
_DATABASE_BACKENDS = {"sqlite", "postgresql"}
_BROKER_SCHEMES = {"redis", "rediss", "amqp", "pyamqp", "memory"}


def default_database_url() -> str:
    """SQLite file in the user's data folder: a working store with no server to set up."""
    return f"sqlite:///{Path(user_data_dir('soakline', appauthor=False)) / 'soakline.db'}"


class SettingsError(RuntimeError):
    """A configuration value is missing or malformed; the message names each variable to fix."""


class Settings(BaseSettings):
    """Everything the API, the workers and the CLI client read from the environment."""

    model_config = SettingsConfigDict(env_prefix=ENV_PREFIX, frozen=True)

    database_url: str = Field(default_factory=default_database_url)
    broker_url: str | None = None
    queue: str = Field(default="soakline", min_length=1, pattern=r"^[A-Za-z0-9_.:-]+$")
    # A running job stays its worker's while the worker renews this lease (a heartbeat every third of
    # it, however long the job runs); when the lease runs out (the worker died) the job is sent again.
    # A queued job not taken this long after it was sent is sent again once the broker queue is empty.
    lease_s: float = Field(default=30.0, ge=3)
    # Redis hands an unacknowledged message to another worker after this long (a lost worker's message);
    # the lease, not this, protects running jobs: such a message finds its job held and is skipped.
    visibility_timeout_s: float = Field(default=3600.0, gt=0)
    sweep_interval_s: float = Field(default=10.0, gt=0)
    max_attempts: int = Field(default=5, ge=1)
    # A worker computes up to this many queued parts of a batch in one vectorised engine call...
    group_parts: int = Field(default=250, ge=1, le=1000)
    # ...and no more than about this much estimated computing time (a nonlinear block costs hundreds of
    # plates), so that a batch of heavy parts is shared among workers and a lost worker loses little.
    group_seconds: float = Field(default=10.0, gt=0)
    retry_backoff_max_s: int = Field(default=60, ge=1)
    inprocess_threads: int = Field(default=1, ge=1, le=64)
    db_wait_s: float = Field(default=60.0, ge=0)
    # Requests larger than this are refused (413) before they are read further or validated.
    max_body_bytes: int = Field(default=8 * 1024 * 1024, ge=1024)
    # Parts per submitted batch, checked before any part is validated (at most the product limit).
    max_parts: int = Field(default=limits.MAX_PARTS, ge=1, le=limits.MAX_PARTS)
    # The review pages' cookies are Secure (sent over https only) when this says so: auto = when the
    # request came over https as the API sees it (a proxy's X-Forwarded-Proto counts only from
    # trusted_proxies), so plain http on a host name can sign in and https keeps its cookies to https.
    cookie_secure: Literal["auto", "true", "false"] = "auto"
    # Addresses (or networks, or "*") whose X-Forwarded-Proto and X-Forwarded-For the API believes:
    # the TLS proxy in front of it. Comma-separated.
    trusted_proxies: str = "127.0.0.1"
    # Signs the review pages' form tokens; unset, a random key per API process (open forms must be
    # reloaded after a restart). Set it when several API processes serve the same pages.
    secret_key: SecretStr | None = None
    api_url: str = "http://127.0.0.1:8000"
    token: SecretStr | None = None

    @field_validator("database_url")
    @classmethod
    def _known_database(cls, value: str) -> str:
        try:
            url = make_url(value)
        except ArgumentError as exc:
            raise ValueError(f"not a SQLAlchemy URL ({exc})") from None
        if url.get_backend_name() not in _DATABASE_BACKENDS:
            raise ValueError(f"backend {url.get_backend_name()!r} unsupported; use sqlite or postgresql")
        return value

    @field_validator("broker_url")
    @classmethod
    def _known_broker(cls, value: str | None) -> str | None:
        if value is None or value.strip() == "":
            return None
        scheme = value.split("://", 1)[0] if "://" in value else ""
        if scheme not in _BROKER_SCHEMES:
            raise ValueError(f"expected a URL like redis://127.0.0.1:6379/0, got {value!r}")
        return value

    @field_validator("cookie_secure", mode="before")
    @classmethod
    def _lower(cls, value: object) -> object:
        return value.strip().lower() if isinstance(value, str) else value

    @field_validator("api_url")
    @classmethod
    def _http_url(cls, value: str) -> str:
        if not value.startswith(("http://", "https://")):
            raise ValueError(f"expected an http(s) URL, got {value!r}")
        return value.rstrip("/")

    @model_validator(mode="after")
    def _visibility_outlasts_lease(self) -> Self:
        if self.visibility_timeout_s < self.lease_s:
            raise ValueError(
                f"{ENV_PREFIX}VISIBILITY_TIMEOUT_S ({self.visibility_timeout_s:g}) must be at least "
                f"{ENV_PREFIX}LEASE_S ({self.lease_s:g}), or Redis redelivers jobs faster than leases end"
            )
        return self

    @property
    def heartbeat_s(self) -> float:
        """How often a worker renews the lease of the jobs it runs."""
        return self.lease_s / 3.0

    @property
    def sqlite_path(self) -> Path | None:
        """File of a SQLite database, None for a server or an in-memory database."""
        url = make_url(self.database_url)
        if url.get_backend_name() != "sqlite" or not url.database or url.database == ":memory:":
            return None
        return Path(url.database)


def load_settings() -> Settings:
    """Read the environment now; raise :class:`SettingsError` naming each bad variable."""
    try:
        return Settings()
    except ValidationError as exc:
        lines = []
        for err in exc.errors():
            field = "_".join(str(p) for p in err["loc"]).upper()
            name = f"{ENV_PREFIX}{field}" if field else "settings"
            lines.append(f"{name}: {err['msg']}")
        raise SettingsError("bad configuration:\n  " + "\n  ".join(lines)) from None


@lru_cache(maxsize=1)
def get_settings() -> Settings:
    """The process-wide settings, read once."""
    return load_settings()
