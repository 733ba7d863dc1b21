"""Users and their roles (admin, editor, formulator, reviewer) as data.

Data migration: everyone who already appears in the change log has been running the library in
open mode (no users configured), so each becomes a user with the roles admin, editor and
formulator: nobody who worked on the library is locked out, and the team has admins who can
grant the rest. A library with an empty change log keeps no users, so it stays in open mode
until its first admin is created (formdb.services.access). Downgrading drops both tables (the
users and grants made since are lost; back the library up first); upgrading again rebuilds the
users from the change log.

Revision ID: 0009_users_roles
Revises: 0003_label_thresholds
Created: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime

import sqlalchemy as sa
from alembic import op

revision: str = "0009_users_roles"
down_revision: str | None = "0003_label_thresholds"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

MIGRATION_USER = "migration 0009_users_roles"
AUTHOR_ROLES = ("admin", "editor", "formulator")


def upgrade() -> None:
    users = op.create_table(
        "users",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(100), nullable=False),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(100), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_users")),
        sa.UniqueConstraint("name", name=op.f("uq_users_name")),
    )
    roles = op.create_table(
        "user_roles",
        sa.Column("user_id", sa.Integer(), nullable=False),
        sa.Column("role", sa.String(20), nullable=False),
        sa.ForeignKeyConstraint(["user_id"], ["users.id"], ondelete="CASCADE",
                                name=op.f("fk_user_roles_user_id_users")),
        sa.PrimaryKeyConstraint("user_id", "role", name=op.f("pk_user_roles")),
    )
    log = sa.table("change_log", sa.column("user", sa.String))
    bind = op.get_bind()
    authors = [name for name in bind.execute(
        sa.select(log.c.user).distinct().order_by(log.c.user)).scalars() if name]
    now = datetime.now(UTC)
    for number, name in enumerate(authors, start=1):
        bind.execute(sa.insert(users).values(id=number, name=name[:100], active=True,
                                             created_at=now, created_by=MIGRATION_USER))
        bind.execute(sa.insert(roles), [{"user_id": number, "role": r} for r in AUTHOR_ROLES])
    if authors and bind.dialect.name == "postgresql":  # the id counter moves past them
        bind.execute(sa.text("SELECT setval(pg_get_serial_sequence('users', 'id'), :n)"),
                     {"n": len(authors)})


def downgrade() -> None:
    op.drop_table("user_roles")
    op.drop_table("users")
