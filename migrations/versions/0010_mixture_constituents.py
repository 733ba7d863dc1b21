"""Mixture constituents: a library ingredient may declare the substances it is made of.

Revision ID: 0010_mixture_constituents
Revises: 0009_users_roles
Created: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0010_mixture_constituents"
down_revision: str | None = "0009_users_roles"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "mixture_constituents",
        sa.Column("mixture_id", sa.Integer(), nullable=False),
        sa.Column("constituent_id", sa.Integer(), nullable=False),
        sa.Column("percent", sa.Float(), nullable=False),
        sa.Column("source_key", sa.String(80), nullable=False),
        sa.ForeignKeyConstraint(["mixture_id"], ["ingredients.id"], ondelete="CASCADE",
                                name=op.f("fk_mixture_constituents_mixture_id_ingredients")),
        sa.ForeignKeyConstraint(["constituent_id"], ["ingredients.id"], ondelete="CASCADE",
                                name=op.f("fk_mixture_constituents_constituent_id_ingredients")),
        sa.ForeignKeyConstraint(["source_key"], ["sources.key"],
                                name=op.f("fk_mixture_constituents_source_key_sources")),
        sa.PrimaryKeyConstraint("mixture_id", "constituent_id",
                                name=op.f("pk_mixture_constituents")),
    )


def downgrade() -> None:
    op.drop_table("mixture_constituents")
