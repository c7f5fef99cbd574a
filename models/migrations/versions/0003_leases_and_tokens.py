"""Job leases and token life: who holds a running job, and when a token expires or was last used.

Revision ID: 0003
Revises: 0002

``jobs.owner`` names the execution that holds a running job (a Celery task id, or an in-process
runner's claim); with ``deadline`` renewed by that execution's heartbeat it is a lease, so the sweeper
re-sends only jobs whose holder stopped renewing. ``api_tokens.expires_at`` (optional) and
``last_used_at`` serve ``soakline token list`` and expiry.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision: str = "0003"
down_revision: str | None = "0002"
branch_labels: str | None = None
depends_on: str | None = None


def upgrade() -> None:
    with op.batch_alter_table("jobs") as batch:
        batch.add_column(sa.Column("owner", sa.String(length=120), nullable=True))
    with op.batch_alter_table("api_tokens") as batch:
        batch.add_column(sa.Column("expires_at", sa.DateTime(timezone=True), nullable=True))
        batch.add_column(sa.Column("last_used_at", sa.DateTime(timezone=True), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("api_tokens") as batch:
        batch.drop_column("last_used_at")
        batch.drop_column("expires_at")
    with op.batch_alter_table("jobs") as batch:
        batch.drop_column("owner")
