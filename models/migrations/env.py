"""Alembic environment: runs migrations on a connection handed in by ``models.store.migrate``.

Run by hand (``alembic -c models/alembic.ini upgrade head``) it connects with the URL from the
configuration or, failing that, from ``SOAKLINE_DATABASE_URL``.
"""

from __future__ import annotations

from alembic import context
from sqlalchemy import Connection, create_engine

from models.settings import get_settings
from models.tables import Base

config = context.config
target_metadata = Base.metadata


def _run(connection: Connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=connection.dialect.name == "sqlite",
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    """Migrate over the caller's connection, or one opened here."""
    connection = config.attributes.get("connection")
    if connection is not None:
        _run(connection)
        return
    url = config.get_main_option("sqlalchemy.url")
    if not url:
        url = get_settings().database_url
    engine = create_engine(url)
    with engine.begin() as conn:
        _run(conn)
    engine.dispose()


if context.is_offline_mode():
    context.configure(url=config.get_main_option("sqlalchemy.url"), target_metadata=target_metadata)
    with context.begin_transaction():
        context.run_migrations()
else:
    run_migrations_online()
