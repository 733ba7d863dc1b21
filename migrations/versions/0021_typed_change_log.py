"""Typed change log: one entry per record change, its changes as typed JSON (``payload``).

Upgrade: every row of the old log (one row per field, old and new value as cell text) is kept,
with its id, time, user and hashes, as an entry of canonical form 1 whose payload holds the same
change as typed data (formdb.store.change_log.legacy_payload) and, under "sealed", the exact
text the row was hashed over; ``formdb audit verify`` recomputes those hashes from it, so the
chain verifies as before and no row is resealed. The columns field, old_value and new_value go.

Downgrade: entries of form 1 get their sealed text back unchanged. Entries written since (form 2)
become the old one-row-per-field rows again, renumbered from the first of them and sealed in the
old form, linked on from the last form-1 row. It refuses (and changes nothing) when those entries'
chain is not intact, so a downgrade never reseals a tampered row.

Revision ID: 0021_typed_change_log
Revises: 0020_server_change_log
Created: 2026-12-04
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

import sqlalchemy as sa
from alembic import op

from formdb.store.change_log import legacy_payload
from formdb.store.sealing import GENESIS, canonical, row_hash

revision: str = "0021_typed_change_log"
down_revision: str | None = "0020_server_change_log"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

_CHUNK = 2000
_COMMON = ("id", "at", "user", "entity", "entity_key", "entity_version", "action", "reason",
           "prev_hash", "row_hash")


def _log(*extra: str) -> sa.TableClause:
    columns = [sa.column(c, sa.Integer) if c in ("id", "entity_version", "form")
               else sa.column(c, sa.DateTime(timezone=True)) if c == "at"
               else sa.column(c, sa.Text) for c in (*_COMMON, *extra)]
    return sa.table("change_log", *columns)


def _update(bind: sa.Connection, table: sa.TableClause, rows: list[dict[str, Any]]) -> None:
    names = [k for k in rows[0] if k != "b_id"] if rows else []
    stmt = (sa.update(table).where(table.c.id == sa.bindparam("b_id"))
            .values({n: sa.bindparam(f"b_{n}") for n in names}))
    for start in range(0, len(rows), _CHUNK):
        chunk = rows[start:start + _CHUNK]
        bind.execute(stmt, [{"b_id": r["b_id"], **{f"b_{n}": r[n] for n in names}}
                            for r in chunk])


def upgrade() -> None:
    bind = op.get_bind()
    with op.batch_alter_table("change_log") as batch:
        batch.add_column(sa.Column("form", sa.Integer(), nullable=True))
        batch.add_column(sa.Column("payload", sa.Text(), nullable=True))
    table = _log("field", "old_value", "new_value", "form", "payload")
    updates = [{"b_id": row["id"], "form": 1,
                "payload": legacy_payload(row["entity"], row["action"], row["field"],
                                          row["old_value"], row["new_value"])}
               for row in bind.execute(sa.select(table.c.id, table.c.entity, table.c.action,
                                                 table.c.field, table.c.old_value,
                                                 table.c.new_value)).mappings()]
    _update(bind, table, updates)
    with op.batch_alter_table("change_log") as batch:
        batch.alter_column("form", existing_type=sa.Integer(), nullable=False)
        batch.alter_column("payload", existing_type=sa.Text(), nullable=False)
        batch.drop_column("field")
        batch.drop_column("old_value")
        batch.drop_column("new_value")


# --- downgrade: typed entries back to one row per field ------------------------------------------

def _cell(entity: str, value: Any) -> str | None:
    """A typed value as the old log wrote it (cell text for ingredients, str() elsewhere)."""
    if value is None:
        return None
    if isinstance(value, list):
        return ("; " if entity == "ingredient" else ", ").join(str(v) for v in value) or None
    if isinstance(value, bool):
        return ("yes" if value else "no") if entity == "ingredient" else str(value)
    if isinstance(value, float) and entity == "ingredient" and value.is_integer() \
            and abs(value) < 1e15:
        return str(int(value))
    return str(value)


def _share(percent: Any, source: str | None) -> str | None:
    if percent is None:
        return None
    number = float(percent)
    text = str(int(number)) if number.is_integer() and abs(number) < 1e15 else repr(number)
    return f"{text} % ({source or ''})"


def _old_rows(entry: dict[str, Any]) -> list[tuple[str | None, str | None, str | None]]:
    """(field, old_value, new_value) rows of the old log for one typed entry."""
    payload = json.loads(entry["payload"])
    entity, changes = entry["entity"], payload.get("changes", [])
    if payload.get("attempted") is not None:
        return [(payload["attempted"], None, None)]
    if (entity != "ingredient" and changes and all(c.get("old") is None for c in changes)
            and entry["action"] in ("seed", "add") and len(changes) > 1):
        summary = {c["field"]: c.get("new") for c in changes if c.get("new") is not None}
        return [(None, None, json.dumps(summary, default=str, ensure_ascii=False,
                                        sort_keys=True))]
    if entity == "mixture":  # one row per constituent: "12.5 % (source)"
        shares = [(c["field"], _share(c.get("old"), c.get("old_source")),
                   _share(c.get("new"), c.get("new_source"))) for c in changes]
        return shares or [(None, None, None)]
    rows = []
    for change in changes:
        field = change["field"]
        if "old" in change or "new" in change:
            rows.append((field, _cell(entity, change.get("old")), _cell(entity, change.get("new"))))
        rows += [(f"{field}_{part}", change.get(f"old_{part}") or None,
                  change.get(f"new_{part}") or None) for part in ("source", "note", "evidence")
                 if f"old_{part}" in change or f"new_{part}" in change]
    return rows or [(None, None, None)]


def downgrade() -> None:
    bind = op.get_bind()
    with op.batch_alter_table("change_log") as batch:
        batch.add_column(sa.Column("field", sa.String(60), nullable=True))
        batch.add_column(sa.Column("old_value", sa.Text(), nullable=True))
        batch.add_column(sa.Column("new_value", sa.Text(), nullable=True))
    table = _log("form", "payload", "field", "old_value", "new_value")
    rows = [dict(r) for r in bind.execute(sa.select(table).order_by(table.c.id)).mappings()]
    first_typed = next((i for i, r in enumerate(rows) if r["form"] != 1), len(rows))
    restored = []
    for row in rows[:first_typed]:
        sealed = json.loads(row["payload"]).get("sealed") or {}
        restored.append({"b_id": row["id"], "field": sealed.get("field"),
                         "old_value": sealed.get("old_value"),
                         "new_value": sealed.get("new_value")})
    _update(bind, table, restored)
    typed = rows[first_typed:]
    if not typed:
        _drop_typed_columns()
        return
    head = rows[first_typed - 1]["row_hash"] if first_typed else GENESIS
    link = head
    for row in typed:
        if row["row_hash"] is None or row["prev_hash"] != link or \
                row_hash(row["prev_hash"] or "", canonical("change_log", row)) != row["row_hash"]:
            raise RuntimeError(f"change_log row {row['id']} does not verify (formdb audit "
                               "verify); not downgraded, since that would reseal it")
        link = row["row_hash"]
    bind.execute(sa.delete(table).where(table.c.id >= typed[0]["id"]))
    next_id, out = typed[0]["id"], []
    prev = head or GENESIS
    for entry in typed:
        for field, old, new in _old_rows(entry):
            row = {c: entry[c] for c in _COMMON}
            row.update(id=next_id, field=field, old_value=old, new_value=new, prev_hash=prev)
            sealed = {"field": field, "old_value": old, "new_value": new}
            row["row_hash"] = prev = row_hash(prev, canonical(
                "change_log", {**row, "form": 1, "payload": json.dumps({"sealed": sealed})}))
            row.update(form=1, payload=json.dumps({"sealed": sealed}))
            out.append(row)
            next_id += 1
    # the rows were verified above and keep their writers: the identity trigger grant-setup
    # installs (a row must name the login writing it) is not for the owner re-expressing them
    identity = bind.dialect.name == "postgresql" and bind.execute(sa.text(
        "SELECT count(*) FROM pg_trigger WHERE tgname = 'formdb_identity' "
        "AND tgrelid = 'change_log'::regclass")).scalar_one() > 0
    if identity:
        bind.execute(sa.text("ALTER TABLE change_log DISABLE TRIGGER formdb_identity"))
    for start in range(0, len(out), _CHUNK):
        bind.execute(sa.insert(table), out[start:start + _CHUNK])
    if identity:
        bind.execute(sa.text("ALTER TABLE change_log ENABLE TRIGGER formdb_identity"))
    if bind.dialect.name == "postgresql":
        bind.execute(sa.text("SELECT setval(pg_get_serial_sequence('change_log', 'id'), "
                             "(SELECT max(id) FROM change_log))"))
    _drop_typed_columns()


def _drop_typed_columns() -> None:
    with op.batch_alter_table("change_log") as batch:
        batch.drop_column("form")
        batch.drop_column("payload")
