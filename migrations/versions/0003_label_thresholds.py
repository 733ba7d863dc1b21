"""Labelling thresholds: above a % in a product category, substances of a role (the fragrance
allergens) must be named on the label.

Revision ID: 0003_label_thresholds
Revises: 0002_exposure_toxicology
Created: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0003_label_thresholds"
down_revision: str | None = "0002_exposure_toxicology"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "label_thresholds",
        sa.Column("key", sa.String(80), nullable=False),
        sa.Column("jurisdiction", sa.String(20), nullable=False),
        sa.Column("list_name", sa.String(200), nullable=False),
        sa.Column("entry", sa.String(40), nullable=False),
        sa.Column("role", sa.String(40), nullable=False),
        sa.Column("category", sa.String(20), nullable=False),
        sa.Column("threshold_percent", sa.Float(), nullable=False),
        sa.Column("label_rule", sa.Text(), nullable=False),
        sa.Column("source_key", sa.String(80), nullable=False),
        sa.Column("list_date", sa.Date(), nullable=False),
        sa.ForeignKeyConstraint(["source_key"], ["sources.key"],
                                name=op.f("fk_label_thresholds_source_key_sources")),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_label_thresholds")),
    )


def downgrade() -> None:
    op.drop_table("label_thresholds")
