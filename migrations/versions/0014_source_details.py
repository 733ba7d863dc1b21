"""Sources as first-class records: the kind of evidence, where in the document, the supplier's
document and lot, a measurement's method and analyst, a file checksum; a toxicology study's
duration.

Revision ID: 0014_source_details
Revises: 0013_list_snapshots
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0014_source_details"
down_revision: str | None = "0013_list_snapshots"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

_SOURCE_COLUMNS = (
    ("kind", sa.String(30)), ("year", sa.Integer()), ("edition", sa.String(40)),
    ("table_ref", sa.String(80)), ("page", sa.String(40)), ("supplier", sa.String(200)),
    ("document", sa.String(200)), ("lot", sa.String(80)), ("issued", sa.Date()),
    ("method", sa.Text()), ("measured_by", sa.String(100)), ("checksum", sa.String(80)))


def upgrade() -> None:
    with op.batch_alter_table("sources") as batch:
        for name, type_ in _SOURCE_COLUMNS:
            batch.add_column(sa.Column(name, type_, nullable=True))
    with op.batch_alter_table("toxicology") as batch:
        batch.add_column(sa.Column("duration", sa.String(60), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("toxicology") as batch:
        batch.drop_column("duration")
    with op.batch_alter_table("sources") as batch:
        for name, _type in reversed(_SOURCE_COLUMNS):
            batch.drop_column(name)
