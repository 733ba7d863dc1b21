"""The server's own record of changes to library tables (PostgreSQL: written by triggers that
`formdb db grant-setup` installs, with session_user; see formdb.services.admin.server).

Revision ID: 0020_server_change_log
Revises: 0019_server_seals
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0020_server_change_log"
down_revision: str | None = "0019_server_seals"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "server_change_log",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("login", sa.String(100), nullable=False),
        sa.Column("table_name", sa.String(63), nullable=False),
        sa.Column("operation", sa.String(10), nullable=False),
        sa.Column("old_rows", sa.Text(), nullable=True),
        sa.Column("new_rows", sa.Text(), nullable=True),
        sa.PrimaryKeyConstraint("id"),
    )
    op.create_index(op.f("ix_server_change_log_login"), "server_change_log", ["login"])
    op.create_index(op.f("ix_server_change_log_table_name"), "server_change_log",
                    ["table_name"])


def downgrade() -> None:
    bind = op.get_bind()
    if bind.dialect.name == "postgresql":  # the server objects grant-setup made depend on it
        from formdb.store.server_audit import remove_server_objects

        remove_server_objects(bind)
    op.drop_index(op.f("ix_server_change_log_table_name"), table_name="server_change_log")
    op.drop_index(op.f("ix_server_change_log_login"), table_name="server_change_log")
    op.drop_table("server_change_log")
