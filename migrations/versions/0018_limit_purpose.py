"""Limit rows say which use they bind: preservative use only, or every other use.

Revision ID: 0018_limit_purpose
Revises: 0017_signoff_policy_keys
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0018_limit_purpose"
down_revision: str | None = "0017_signoff_policy_keys"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("limits", schema=None) as batch_op:
        batch_op.add_column(sa.Column("purpose", sa.String(length=20), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("limits", schema=None) as batch_op:
        batch_op.drop_column("purpose")
