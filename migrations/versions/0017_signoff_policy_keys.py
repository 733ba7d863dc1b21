"""Sign-off that holds: review policy versions, enrolled signing keys, and the columns that bind a
run to its profile (content hash, origin, policy) and a signature to its signer's key.

The new review-run and signature columns are empty on older rows; the canonical form leaves an
empty later column out (formdb.store.sealing.ADDED_LATER), so those rows keep their seals.

Revision ID: 0017_signoff_policy_keys
Revises: 0016_screening_series
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0017_signoff_policy_keys"
down_revision: str | None = "0016_screening_series"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("review_runs") as batch:
        batch.add_column(sa.Column("profile_hash", sa.String(64), nullable=True))
        batch.add_column(sa.Column("profile_origin", sa.Text(), nullable=True))
        batch.add_column(sa.Column("policy_json", sa.Text(), nullable=True))
        batch.add_column(sa.Column("signable", sa.Boolean(), nullable=True))
    with op.batch_alter_table("review_signatures") as batch:
        batch.add_column(sa.Column("waivers_json", sa.Text(), nullable=True))
        batch.add_column(sa.Column("key_id", sa.String(32), nullable=True))
        batch.add_column(sa.Column("signature", sa.String(100), nullable=True))
    op.create_table(
        "policy_versions",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("set_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("set_by", sa.String(100), nullable=False),
        sa.Column("policy_json", sa.Text(), nullable=False),
        sa.Column("policy_hash", sa.String(64), nullable=False),
        sa.Column("prev_hash", sa.String(64), nullable=True),
        sa.Column("row_hash", sa.String(64), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_policy_versions")),
    )
    op.create_table(
        "key_enrolments",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("by_user", sa.String(100), nullable=False),
        sa.Column("action", sa.String(10), nullable=False),
        sa.Column("login", sa.String(100), nullable=False),
        sa.Column("printed_name", sa.String(200), nullable=False),
        sa.Column("key_id", sa.String(32), nullable=False),
        sa.Column("public_key", sa.String(100), nullable=False),
        sa.Column("reason", sa.Text(), nullable=True),
        sa.Column("prev_hash", sa.String(64), nullable=True),
        sa.Column("row_hash", sa.String(64), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_key_enrolments")),
    )
    op.create_index(op.f("ix_key_enrolments_login"), "key_enrolments", ["login"])
    op.create_index(op.f("ix_key_enrolments_key_id"), "key_enrolments", ["key_id"])


def downgrade() -> None:
    op.drop_index(op.f("ix_key_enrolments_key_id"), table_name="key_enrolments")
    op.drop_index(op.f("ix_key_enrolments_login"), table_name="key_enrolments")
    op.drop_table("key_enrolments")
    op.drop_table("policy_versions")
    with op.batch_alter_table("review_signatures") as batch:
        batch.drop_column("signature")
        batch.drop_column("key_id")
        batch.drop_column("waivers_json")
    with op.batch_alter_table("review_runs") as batch:
        batch.drop_column("signable")
        batch.drop_column("policy_json")
        batch.drop_column("profile_origin")
        batch.drop_column("profile_hash")
