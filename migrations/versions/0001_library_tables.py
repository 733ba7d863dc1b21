"""The library tables: sources, ingredients with names, CAS numbers, roles, classes and property
values, the change log, limits, incompatibilities, soap pairs and stored formulas.

Constraint names follow formdb.store.models.NAMING_CONVENTION (``op.f`` keeps them verbatim), so
later batch migrations on SQLite can find and alter them by name.

Revision ID: 0001_library
Revises:
Created: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0001_library"
down_revision: str | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def _ingredient_fk(table: str) -> sa.ForeignKeyConstraint:
    return sa.ForeignKeyConstraint(
        ["ingredient_id"], ["ingredients.id"], ondelete="CASCADE",
        name=op.f(f"fk_{table}_ingredient_id_ingredients"))


def _source_fk(table: str) -> sa.ForeignKeyConstraint:
    return sa.ForeignKeyConstraint(["source_key"], ["sources.key"],
                                   name=op.f(f"fk_{table}_source_key_sources"))


def upgrade() -> None:
    op.create_table(
        "sources",
        sa.Column("key", sa.String(80), nullable=False),
        sa.Column("citation", sa.Text(), nullable=False),
        sa.Column("evidence", sa.String(20), nullable=False),
        sa.Column("url", sa.Text(), nullable=True),
        sa.Column("seen", sa.String(20), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_sources")),
    )
    op.create_table(
        "ingredients",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("inci_name", sa.String(200), nullable=False),
        sa.Column("retired", sa.Boolean(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_by", sa.String(100), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_ingredients")),
    )
    op.create_table(
        "ingredient_names",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("name_key", sa.String(200), nullable=False),
        sa.Column("is_primary", sa.Boolean(), nullable=False),
        _ingredient_fk("ingredient_names"),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_ingredient_names")),
        sa.UniqueConstraint("name_key", name=op.f("uq_ingredient_names_name_key")),
    )
    op.create_index(op.f("ix_ingredient_names_ingredient_id"), "ingredient_names",
                    ["ingredient_id"])
    op.create_table(
        "ingredient_cas",
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("cas", sa.String(20), nullable=False),
        _ingredient_fk("ingredient_cas"),
        sa.PrimaryKeyConstraint("ingredient_id", "cas", name=op.f("pk_ingredient_cas")),
    )
    op.create_table(
        "ingredient_roles",
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("role", sa.String(40), nullable=False),
        _ingredient_fk("ingredient_roles"),
        sa.PrimaryKeyConstraint("ingredient_id", "role", name=op.f("pk_ingredient_roles")),
    )
    op.create_table(
        "ingredient_classes",
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("class_name", sa.String(60), nullable=False),
        _ingredient_fk("ingredient_classes"),
        sa.PrimaryKeyConstraint("ingredient_id", "class_name",
                                name=op.f("pk_ingredient_classes")),
    )
    op.create_table(
        "property_values",
        sa.Column("ingredient_id", sa.Integer(), nullable=False),
        sa.Column("property", sa.String(40), nullable=False),
        sa.Column("value_num", sa.Float(), nullable=True),
        sa.Column("value_text", sa.String(200), nullable=True),
        sa.Column("source_key", sa.String(80), nullable=False),
        sa.Column("evidence", sa.String(20), nullable=False),
        sa.Column("note", sa.Text(), nullable=True),
        _ingredient_fk("property_values"),
        _source_fk("property_values"),
        sa.PrimaryKeyConstraint("ingredient_id", "property", name=op.f("pk_property_values")),
    )
    op.create_table(
        "change_log",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("user", sa.String(100), nullable=False),
        sa.Column("entity", sa.String(20), nullable=False),
        sa.Column("entity_key", sa.String(200), nullable=False),
        sa.Column("entity_version", sa.Integer(), nullable=True),
        sa.Column("action", sa.String(20), nullable=False),
        sa.Column("field", sa.String(60), nullable=True),
        sa.Column("old_value", sa.Text(), nullable=True),
        sa.Column("new_value", sa.Text(), nullable=True),
        sa.Column("reason", sa.Text(), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_change_log")),
    )
    op.create_index(op.f("ix_change_log_at"), "change_log", ["at"])
    op.create_index(op.f("ix_change_log_entity_key"), "change_log", ["entity_key"])
    op.create_table(
        "limits",
        sa.Column("key", sa.String(80), nullable=False),
        sa.Column("jurisdiction", sa.String(20), nullable=False),
        sa.Column("list_name", sa.String(200), nullable=False),
        sa.Column("entry", sa.String(40), nullable=False),
        sa.Column("ingredients", sa.Text(), nullable=False),
        sa.Column("category", sa.String(20), nullable=False),
        sa.Column("product", sa.String(100), nullable=True),
        sa.Column("max_percent", sa.Float(), nullable=False),
        sa.Column("aggregate", sa.String(10), nullable=False),
        sa.Column("basis", sa.String(10), nullable=False),
        sa.Column("acid_inci", sa.String(200), nullable=True),
        sa.Column("excludes", sa.Text(), nullable=True),
        sa.Column("conditions", sa.Text(), nullable=True),
        sa.Column("source_key", sa.String(80), nullable=False),
        sa.Column("list_date", sa.Date(), nullable=False),
        _source_fk("limits"),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_limits")),
    )
    op.create_table(
        "incompatibilities",
        sa.Column("key", sa.String(80), nullable=False),
        sa.Column("class_a", sa.String(60), nullable=False),
        sa.Column("class_b", sa.String(60), nullable=False),
        sa.Column("severity", sa.String(10), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("advice", sa.Text(), nullable=False),
        sa.Column("source_key", sa.String(80), nullable=False),
        _source_fk("incompatibilities"),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_incompatibilities")),
    )
    op.create_table(
        "soap_pairs",
        sa.Column("acid_inci", sa.String(200), nullable=False),
        sa.Column("base_inci", sa.String(200), nullable=False),
        sa.Column("soap_inci", sa.String(200), nullable=False),
        sa.Column("source_key", sa.String(80), nullable=False),
        _source_fk("soap_pairs"),
        sa.PrimaryKeyConstraint("acid_inci", "base_inci", name=op.f("pk_soap_pairs")),
    )
    op.create_table(
        "formulas",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(300), nullable=False),
        sa.Column("name_key", sa.String(300), nullable=False),
        sa.Column("content", sa.Text(), nullable=False),
        sa.Column("content_hash", sa.String(64), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_by", sa.String(100), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_formulas")),
        sa.UniqueConstraint("name_key", name=op.f("uq_formulas_name_key")),
    )


def downgrade() -> None:
    # children before parents; dropping a table drops its indexes on both backends
    for table in ("formulas", "soap_pairs", "incompatibilities", "limits", "change_log",
                  "property_values", "ingredient_classes", "ingredient_roles", "ingredient_cas",
                  "ingredient_names", "ingredients", "sources"):
        op.drop_table(table)
