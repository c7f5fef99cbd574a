"""Access to the database: engine and session factory, waiting for the server, Alembic migrations.

Start-up order for every long-running process is :func:`wait_for_database`, then :func:`migrate`, then
serve or work. Sessions come from :func:`session_factory`; a caller commits or the work is rolled back.
"""

from __future__ import annotations

import logging
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from functools import lru_cache
from importlib import resources
from typing import Any

from sqlalchemy import Engine, create_engine, event, text
from sqlalchemy.exc import DBAPIError, InterfaceError, OperationalError
from sqlalchemy.exc import TimeoutError as PoolTimeout
from sqlalchemy.orm import Session, sessionmaker

from models.settings import Settings, get_settings

__all__ = [
    "DatabaseUnavailable",
    "OutageLog",
    "engine_for",
    "is_outage",
    "migrate",
    "session_factory",
    "session_scope",
    "wait_for_database",
]


class DatabaseUnavailable(RuntimeError):
    """The database did not answer within the allowed wait."""


def is_outage(exc: BaseException) -> bool:
    """An error that says the database is not answering (down, restarting, unreachable, connection
    dropped, pool exhausted), as opposed to a bad statement: a later try can get past it."""
    if isinstance(exc, DBAPIError) and exc.connection_invalidated:
        return True
    return isinstance(exc, OperationalError | InterfaceError | PoolTimeout | DatabaseUnavailable)


def _first_line(exc: BaseException) -> str:
    orig = getattr(exc, "orig", None) or exc
    text = str(orig).strip().splitlines()
    return f"{type(orig).__name__}: {text[0] if text else ''}"[:300]


class OutageLog:
    """Says when the database stops answering and when it is back: one line each per outage, instead of
    a traceback for every request or pass that fails meanwhile. Thread-safe."""

    def __init__(self, logger: logging.Logger, who: str) -> None:
        self.logger, self.who = logger, who
        self._since: float | None = None
        self._lock = threading.Lock()

    def failed(self, exc: BaseException) -> None:
        with self._lock:
            if self._since is not None:
                return
            self._since = time.monotonic()
        self.logger.warning("%s: the database is not answering (%s)", self.who, _first_line(exc))

    def recovered(self) -> None:
        with self._lock:
            since, self._since = self._since, None
        if since is not None:
            self.logger.warning(
                "%s: the database answers again after %.0f s", self.who, time.monotonic() - since
            )

    @property
    def down(self) -> bool:
        return self._since is not None


def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    # Foreign keys are off by default in SQLite; WAL lets the API read while a worker thread writes.
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute("PRAGMA journal_mode=WAL")
    cursor.execute("PRAGMA busy_timeout=10000")
    cursor.close()


@lru_cache(maxsize=8)
def engine_for(database_url: str) -> Engine:
    """One engine (connection pool) per URL per process; connections are checked before use."""
    if database_url.startswith("sqlite"):
        from pathlib import Path

        from sqlalchemy.engine import make_url

        path = make_url(database_url).database
        if path and path != ":memory:":
            Path(path).parent.mkdir(parents=True, exist_ok=True)
        engine = create_engine(database_url, connect_args={"check_same_thread": False, "timeout": 30})
        event.listen(engine, "connect", _sqlite_pragmas)
        return engine
    # pool_pre_ping replaces connections that died in a database restart instead of failing a request.
    return create_engine(
        database_url,
        pool_pre_ping=True,
        pool_size=5,
        max_overflow=10,
        connect_args={"connect_timeout": 5},
    )


def session_factory(settings: Settings | None = None) -> sessionmaker[Session]:
    """Sessions bound to the configured database; objects stay readable after commit."""
    settings = settings or get_settings()
    return _factory(settings.database_url)


@lru_cache(maxsize=8)
def _factory(database_url: str) -> sessionmaker[Session]:
    return sessionmaker(bind=engine_for(database_url), expire_on_commit=False)


@contextmanager
def session_scope(factory: Callable[[], Session]) -> Iterator[Session]:
    """A transaction: committed when the block ends normally, rolled back on any exception."""
    with factory() as session:
        try:
            yield session
            session.commit()
        except BaseException:
            session.rollback()
            raise


def wait_for_database(settings: Settings | None = None, *, log: Callable[[str], None] = print) -> None:
    """Block until ``SELECT 1`` succeeds or ``SOAKLINE_DB_WAIT_S`` has passed."""
    settings = settings or get_settings()
    engine = engine_for(settings.database_url)
    deadline = time.monotonic() + settings.db_wait_s
    delay = 0.25
    while True:
        try:
            with engine.connect() as conn:
                conn.execute(text("SELECT 1"))
            return
        except (OperationalError, DBAPIError) as exc:
            if time.monotonic() >= deadline:
                where = engine.url.render_as_string(hide_password=True)
                raise DatabaseUnavailable(
                    f"database {where} did not answer within {settings.db_wait_s:g} s: {exc.orig}"
                ) from None
            log(f"waiting for the database ({type(exc.orig).__name__}); retrying in {delay:.1f} s")
            time.sleep(delay)
            delay = min(delay * 2, 5.0)


def alembic_config(database_url: str) -> Any:
    """Alembic configuration pointing at the packaged migrations and the given database."""
    from alembic.config import Config

    root = resources.files("models")
    config = Config(str(root / "alembic.ini"))
    config.set_main_option("script_location", str(root / "migrations"))
    # ConfigParser treats % as interpolation; a URL-encoded password must survive.
    config.set_main_option("sqlalchemy.url", database_url.replace("%", "%%"))
    return config


def migrate(settings: Settings | None = None) -> None:
    """Bring the schema to the newest revision (a no-op when it already is)."""
    from alembic import command

    settings = settings or get_settings()
    engine = engine_for(settings.database_url)
    config = alembic_config(settings.database_url)
    with engine.begin() as connection:
        if connection.dialect.name == "postgresql":
            # Two processes starting at once must not both create the tables.
            connection.execute(text("SELECT pg_advisory_xact_lock(7470311)"))
        config.attributes["connection"] = connection
        command.upgrade(config, "head")
