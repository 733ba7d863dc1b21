"""Seal the rows written before sealing existed: hash-chain the change log and review tables.

A table none of whose rows is sealed yet (a library from before sealing) is sealed in id
order, each row linked to the row before it (formdb.store.sealing: sha256(prev_hash +
canonical row), the first row after the genesis value). A table that already holds sealed rows
is left exactly as it is, so running this again never seals (launders) a row slipped in with
plain SQL. A data migration only; the downgrade keeps the hashes (0011's downgrade drops their
columns).

Revision ID: 0012_seal_audit_rows
Revises: 0011_review_runs
Created: 2026-12-01
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from datetime import datetime
from typing import Any

import sqlalchemy as sa
from alembic import op

from formdb.store.sealing import GENESIS, as_text, row_hash, utc

revision: str = "0012_seal_audit_rows"
down_revision: str | None = "0011_review_runs"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# The canonical columns as they were at this revision (frozen: formdb.store.sealing moves on, and
# form 1 of its change log is this one).
SEALED_COLUMNS: dict[str, tuple[str, ...]] = {
    "change_log": ("id", "at", "user", "entity", "entity_key", "entity_version", "action",
                   "field", "old_value", "new_value", "reason", "prev_hash"),
    "review_runs": ("id", "run_key", "run_hash", "formula_name", "formula_source",
                    "formula_hash", "formula_text", "library_hash", "records_json",
                    "profile_name", "profile_version", "formdb_version", "created_at",
                    "created_by", "findings_json", "result_json", "supersedes_run_id",
                    "prev_hash"),
    "review_signatures": ("id", "run_id", "run_hash", "signer", "signed_by", "meaning",
                          "signed_at", "comment", "prev_hash"),
}
_INTEGER = {"id", "entity_version", "supersedes_run_id", "run_id"}
_TIMESTAMP = {"at", "created_at", "signed_at"}
_CHUNK = 1000


def _column(name: str) -> sa.ColumnClause[Any]:
    if name in _INTEGER:
        return sa.column(name, sa.Integer)
    if name in _TIMESTAMP:  # read back as datetimes, so they hash as the ORM's values do
        return sa.column(name, sa.DateTime(timezone=True))
    return sa.column(name, sa.Text)


def seal(name: str, rows: list[dict[str, Any]], ids: list[int], prev_hash: str) -> str:
    """formdb.store.sealing.seal as it was at this revision, over the columns above."""
    for row, row_id in zip(rows, ids, strict=True):
        for key, value in row.items():
            if isinstance(value, datetime):
                row[key] = utc(value)
        row["id"], row["prev_hash"] = row_id, prev_hash
        pairs = [[column, as_text(row.get(column))] for column in SEALED_COLUMNS[name]]
        text = json.dumps(pairs, ensure_ascii=False, separators=(",", ":"))
        row["row_hash"] = prev_hash = row_hash(prev_hash, text)
    return prev_hash


def _seal_table(bind: sa.Connection, name: str) -> None:
    present = {c["name"] for c in sa.inspect(bind).get_columns(name)}  # later columns not yet
    table = sa.table(name, *(_column(c) for c in (*SEALED_COLUMNS[name], "row_hash")
                             if c in present))
    head = GENESIS
    updates: list[dict[str, Any]] = []
    rows = bind.execute(sa.select(table).order_by(table.c.id)).mappings().all()
    if any(stored["row_hash"] is not None for stored in rows):
        return  # already a chain: an unsealed row now is for `audit verify`, never laundered
    for stored in rows:
        row = dict(stored)
        head = seal(name, [row], [row["id"]], head)
        updates.append({"b_id": row["id"], "b_prev": row["prev_hash"], "b_hash": head})
    update = (sa.update(table).where(table.c.id == sa.bindparam("b_id"))
              .values(prev_hash=sa.bindparam("b_prev"), row_hash=sa.bindparam("b_hash")))
    for start in range(0, len(updates), _CHUNK):
        bind.execute(update, updates[start:start + _CHUNK])


def upgrade() -> None:
    bind = op.get_bind()
    present = set(sa.inspect(bind).get_table_names())
    for name in SEALED_COLUMNS:
        if name in present:
            _seal_table(bind, name)


def downgrade() -> None:
    pass  # the hashes stay; they are harmless to 0011 and dropped with its columns
