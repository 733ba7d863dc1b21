"""The exposure table (daily exposure per product type) and toxicology records per substance.

Revision ID: 0002_exposure_toxicology
Revises: 0001_library
Created: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0002_exposure_toxicology"
down_revision: str | None = "0001_library"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def _source_fk(table: str, column: str) -> sa.ForeignKeyConstraint:
    return sa.ForeignKeyConstraint([column], ["sources.key"],
                                   name=op.f(f"fk_{table}_{column}_sources"))


def upgrade() -> None:
    op.create_table(
        "exposure",
        sa.Column("product", sa.String(100), nullable=False),
        sa.Column("category", sa.String(20), nullable=False),
        sa.Column("amount_g_day", sa.Float(), nullable=True),
        sa.Column("amount_mg_kg_bw_day", sa.Float(), nullable=True),
        sa.Column("retention_factor", sa.Float(), nullable=False),
        sa.Column("exposure_g_day", sa.Float(), nullable=True),
        sa.Column("exposure_mg_kg_bw_day", sa.Float(), nullable=True),
        sa.Column("source_key", sa.String(80), nullable=False),
        _source_fk("exposure", "source_key"),
        sa.PrimaryKeyConstraint("product", name=op.f("pk_exposure")),
    )
    op.create_table(
        "toxicology",
        sa.Column("key", sa.String(80), nullable=False),
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("pod_kind", sa.String(20), nullable=False),
        sa.Column("pod_value", sa.Float(), nullable=False),
        sa.Column("pod_unit", sa.String(30), nullable=False),
        sa.Column("route", sa.String(20), nullable=False),
        sa.Column("species", sa.String(60), nullable=False),
        sa.Column("study", sa.Text(), nullable=False),
        sa.Column("source_key", sa.String(80), nullable=False),
        sa.Column("dermal_absorption_percent", sa.Float(), nullable=True),
        sa.Column("dermal_absorption_source", sa.String(80), nullable=True),
        sa.Column("oral_bioavailability_percent", sa.Float(), nullable=True),
        sa.Column("oral_bioavailability_source", sa.String(80), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
        sa.ForeignKeyConstraint(["ingredient_id"], ["ingredients.id"], ondelete="CASCADE",
                                name=op.f("fk_toxicology_ingredient_id_ingredients")),
        _source_fk("toxicology", "source_key"),
        _source_fk("toxicology", "dermal_absorption_source"),
        _source_fk("toxicology", "oral_bioavailability_source"),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_toxicology")),
        sa.UniqueConstraint("ingredient_id", name=op.f("uq_toxicology_ingredient_id")),
    )


def downgrade() -> None:
    op.drop_table("toxicology")
    op.drop_table("exposure")
