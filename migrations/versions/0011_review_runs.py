"""Review runs and sign-offs; hash-chain columns on the change log.

Revision ID: 0011_review_runs
Revises: 0010_mixture_constituents
Created: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0011_review_runs"
down_revision: str | None = "0010_mixture_constituents"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "review_runs",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("run_key", sa.String(20), nullable=False),
        sa.Column("run_hash", sa.String(64), nullable=False),
        sa.Column("formula_name", sa.String(300), nullable=False),
        sa.Column("formula_source", sa.Text(), nullable=False),
        sa.Column("formula_hash", sa.String(64), nullable=False),
        sa.Column("formula_text", sa.Text(), nullable=False),
        sa.Column("library_hash", sa.String(64), nullable=False),
        sa.Column("records_json", sa.Text(), nullable=False),
        sa.Column("profile_name", sa.String(60), nullable=False),
        sa.Column("profile_version", sa.String(40), nullable=False),
        sa.Column("formdb_version", sa.String(40), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(100), nullable=False),
        sa.Column("findings_json", sa.Text(), nullable=False),
        sa.Column("result_json", sa.Text(), nullable=False),
        sa.Column("supersedes_run_id", sa.Integer(), nullable=True),
        sa.Column("prev_hash", sa.String(64), nullable=True),
        sa.Column("row_hash", sa.String(64), nullable=True),
        sa.ForeignKeyConstraint(["supersedes_run_id"], ["review_runs.id"],
                                name=op.f("fk_review_runs_supersedes_run_id_review_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_review_runs")),
        sa.UniqueConstraint("run_key", name=op.f("uq_review_runs_run_key")),
    )
    op.create_index(op.f("ix_review_runs_formula_name"), "review_runs", ["formula_name"])
    op.create_table(
        "review_signatures",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("run_hash", sa.String(64), nullable=False),
        sa.Column("signer", sa.String(200), nullable=False),
        sa.Column("signed_by", sa.String(100), nullable=False),
        sa.Column("meaning", sa.String(20), nullable=False),
        sa.Column("signed_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("comment", sa.Text(), nullable=True),
        sa.Column("prev_hash", sa.String(64), nullable=True),
        sa.Column("row_hash", sa.String(64), nullable=True),
        sa.ForeignKeyConstraint(["run_id"], ["review_runs.id"],
                                name=op.f("fk_review_signatures_run_id_review_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_review_signatures")),
    )
    op.create_index(op.f("ix_review_signatures_run_id"), "review_signatures", ["run_id"])
    with op.batch_alter_table("change_log") as batch:
        batch.add_column(sa.Column("prev_hash", sa.String(64), nullable=True))
        batch.add_column(sa.Column("row_hash", sa.String(64), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("change_log") as batch:
        batch.drop_column("row_hash")
        batch.drop_column("prev_hash")
    op.drop_index(op.f("ix_review_signatures_run_id"), table_name="review_signatures")
    op.drop_table("review_signatures")
    op.drop_index(op.f("ix_review_runs_formula_name"), table_name="review_runs")
    op.drop_table("review_runs")
