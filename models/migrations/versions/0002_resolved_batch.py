"""The resolved batch: each batch keeps its validated spec with a rerun's durations applied.

Revision ID: 0002
Revises: 0001

Existing batches get theirs computed here from the stored file and durations, as submit now does. A
batch whose file no longer validates keeps NULL: its jobs then fail with that reason, as before.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op
from sqlalchemy.dialects import postgresql

from models import SpecError, parse_batch, with_durations
from models.resolved import dump_resolved

revision: str = "0002"
down_revision: str | None = "0001"
branch_labels: str | None = None
depends_on: str | None = None

JSON_T = sa.JSON().with_variant(postgresql.JSONB(), "postgresql")

_batches = sa.table(
    "batches",
    sa.column("id", sa.Integer()),
    sa.column("spec", JSON_T),
    sa.column("durations", JSON_T),
    sa.column("resolved", JSON_T),
)


def upgrade() -> None:
    with op.batch_alter_table("batches", schema=None) as batch_op:
        batch_op.add_column(sa.Column("resolved", JSON_T, nullable=True))
    connection = op.get_bind()
    ids = connection.scalars(sa.select(_batches.c.id).order_by(_batches.c.id)).all()
    for batch_id in ids:  # one row at a time: stored files can be large
        spec, durations = connection.execute(
            sa.select(_batches.c.spec, _batches.c.durations).where(_batches.c.id == batch_id)
        ).one()
        try:
            resolved = parse_batch(spec)
            if durations:
                resolved = with_durations(resolved, dict(durations))
        except SpecError:
            continue
        connection.execute(
            sa.update(_batches).where(_batches.c.id == batch_id).values(resolved=dump_resolved(resolved))
        )


def downgrade() -> None:
    with op.batch_alter_table("batches", schema=None) as batch_op:
        batch_op.drop_column("resolved")
