"""Seed limit rows carry a pH range (III/15a: sodium and potassium hydroxide up to pH 11 as pH
adjusters), and a row may give a pH limit with no concentration maximum.

Revision ID: 0022_limit_ph
Revises: 0021_typed_change_log
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0022_limit_ph"
down_revision: str | None = "0021_typed_change_log"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("limits", schema=None) as batch_op:
        batch_op.add_column(sa.Column("ph_min", sa.Float(), nullable=True))
        batch_op.add_column(sa.Column("ph_max", sa.Float(), nullable=True))
        batch_op.alter_column("max_percent", existing_type=sa.Float(), nullable=True)


def downgrade() -> None:
    # a row with a pH limit and no maximum cannot be held by the older table: it goes, as the
    # older seed never had it
    op.execute(sa.text("DELETE FROM limits WHERE max_percent IS NULL"))
    with op.batch_alter_table("limits", schema=None) as batch_op:
        batch_op.alter_column("max_percent", existing_type=sa.Float(), nullable=False)
        batch_op.drop_column("ph_max")
        batch_op.drop_column("ph_min")
