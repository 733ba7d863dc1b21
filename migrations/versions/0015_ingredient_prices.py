"""Ingredient prices: quotes per kg with currency, supplier and date (rows only added: history).

Revision ID: 0015_ingredient_prices
Revises: 0014_source_details
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0015_ingredient_prices"
down_revision: str | None = "0014_source_details"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "ingredient_prices",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("price_per_kg", sa.Float(), nullable=False),
        sa.Column("currency", sa.String(length=3), nullable=False),
        sa.Column("supplier", sa.String(length=200), nullable=False),
        sa.Column("quoted_on", sa.Date(), nullable=False),
        sa.Column("recorded_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("recorded_by", sa.String(length=100), nullable=False),
        sa.Column("note", sa.Text(), nullable=True),
        sa.ForeignKeyConstraint(["ingredient_id"], ["ingredients.id"],
                                name=op.f("fk_ingredient_prices_ingredient_id_ingredients")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_ingredient_prices")),
    )
    with op.batch_alter_table("ingredient_prices", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_ingredient_prices_ingredient_id"),
                              ["ingredient_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("ingredient_prices", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_ingredient_prices_ingredient_id"))
    op.drop_table("ingredient_prices")
