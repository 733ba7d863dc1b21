"""Hash-chained, append-only rows: the change log and the review records seal themselves.

Each sealed table is its own chain ordered by id. A row's ``row_hash`` is
``sha256(prev_hash + canonical(row))``, where ``canonical`` is every column except ``row_hash``
in a fixed order, each value as text (timestamps in ISO 8601 UTC), and ``prev_hash`` is the
``row_hash`` of the row before it (``GENESIS`` for the first row). A table whose covered columns
changed keeps every old form (``FORMS``): a row's ``form`` column says which one it was sealed in
(the change log's form 1 is the per-column log before migration 0021; its rows carry that text
in their payload's "sealed" part). Editing, removing or slipping
in a row with plain SQL then breaks the chain, which ``formdb audit verify`` reports.

Sealing happens on formdb's own session class, ``LibrarySession`` (every unit of work of a
``formdb.store.library.Library`` is one), never on SQLAlchemy's ``Session`` itself, so other code
in the same process is untouched:
- ``before_flush``: new ORM instances of a sealed table get their id, prev_hash and row_hash;
- ``append_rows(session, table, rows)``: plain dicts sealed the same way and inserted in bulk
  (``formdb.store.bulk``, beside the hooks: they are sealed already);
- ``do_orm_execute``: any other INSERT, and every UPDATE or DELETE, of a sealed table through a
  LibrarySession is refused (append-only; a bulk insert must come through ``append_rows``).
Ids are given here, not by the database, because the hash covers the id and the row must be
complete when it is inserted (writers may INSERT the log but never UPDATE it, see grant-setup).

Chains must not fork when two writers append at once. SQLite serialises writers (the services'
``unit_of_work(write=True)`` takes the write lock at BEGIN; a deferred transaction whose snapshot
went stale cannot commit). On PostgreSQL every writing session takes one transaction-level
advisory lock at its first write (flush or DML statement), so writers queue in the same order
for every table and the last row read under the lock is the last row committed.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Mapping, Sequence
from datetime import UTC, date, datetime
from functools import lru_cache
from typing import Any

import orjson
from sqlalchemy import Table, event, inspect, text
from sqlalchemy.orm import ORMExecuteState, Session, UOWTransaction

from formdb.errors import FormdbError
from formdb.store.bulk import insert_dicts, sequence_ids

GENESIS = "0" * 64  # prev_hash of the first row of every chain
# The canonical columns of each sealed table, in hashing order. Fixed on purpose: a column added
# later is not covered until it is added here (tests/services/test_audit_chain.py fails when a
# model column is neither listed nor row_hash, so that choice is made knowingly).
SEALED_COLUMNS: dict[str, tuple[str, ...]] = {
    "change_log": ("id", "at", "user", "entity", "entity_key", "entity_version", "action",
                   "form", "payload", "reason", "prev_hash"),
    "review_runs": ("id", "run_key", "run_hash", "formula_name", "formula_source",
                    "formula_hash", "formula_text", "library_hash", "records_json",
                    "profile_name", "profile_version", "formdb_version", "created_at",
                    "created_by", "findings_json", "result_json", "supersedes_run_id",
                    "prev_hash", "profile_hash", "profile_origin", "policy_json", "signable"),
    "review_signatures": ("id", "run_id", "run_hash", "signer", "signed_by", "meaning",
                          "signed_at", "comment", "prev_hash", "waivers_json", "key_id",
                          "signature"),
    "policy_versions": ("id", "set_at", "set_by", "policy_json", "policy_hash", "prev_hash"),
    "key_enrolments": ("id", "at", "by_user", "action", "login", "printed_name", "key_id",
                       "public_key", "reason", "prev_hash"),
}
# Columns added to a sealed table after its rows were first sealed: the canonical form lists
# them only when they hold a value, so older rows (None there) keep the hash they were sealed
# with, and a value set or cleared later with plain SQL still breaks the row's hash.
ADDED_LATER: dict[str, frozenset[str]] = {
    "review_runs": frozenset({"profile_hash", "profile_origin", "policy_json", "signable"}),
    "review_signatures": frozenset({"waivers_json", "key_id", "signature"}),
}
# Columns a sealed table has beside its canonical ones: its own hash, and on PostgreSQL the
# server's keyed seal (migration 0019: a trigger computes it with a key writer logins cannot
# read; formdb never writes it). Neither is part of the canonical form.
NOT_CANONICAL = ("row_hash", "server_seal")

# Canonical forms per table, by the row's ``form`` column (tables without one have form 1 only).
# Form 1 of the change log is the per-column log of before migration 0021: its rows keep the hash
# computed over that text, which they carry in their payload's "sealed" part.
FORMS: dict[str, dict[int, tuple[str, ...]]] = {
    "change_log": {
        1: ("id", "at", "user", "entity", "entity_key", "entity_version", "action", "field",
            "old_value", "new_value", "reason", "prev_hash"),
        2: SEALED_COLUMNS["change_log"]},
}
_WRITE_LOCK_ID = 0x666462_6C6F67  # pg_advisory_xact_lock key shared by every formdb writer
_LOCKED = "formdb_sealing_locked_tx"


class LibrarySession(Session):
    """formdb's session: the only one the sealing hooks listen to."""


class AppendOnly(FormdbError):
    """An UPDATE or DELETE of a sealed table was attempted."""


def as_text(value: Any) -> str | None:
    """A column value as the text the hash covers; None stays None (JSON null)."""
    if value is None:
        return None
    kind = type(value)  # the common column types first: a large import seals 50,000 rows
    if kind is str:
        return value  # type: ignore[no-any-return]
    if kind is int:
        return str(value)
    if isinstance(value, datetime):
        return _time_text(value)
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    return str(value)


@lru_cache(maxsize=64)  # the rows of one write share their timestamp
def _time_text(value: datetime) -> str:
    return utc(value).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def utc(value: datetime) -> datetime:
    """Aware UTC; a naive value (SQLite hands those back) was written as UTC."""
    return value.replace(tzinfo=UTC) if value.tzinfo is None else value.astimezone(UTC)


def canonical(table: str, values: Mapping[str, Any]) -> str:
    """The row as one text: [[column, value-as-text], ...] in the order of its form's columns
    (SEALED_COLUMNS for rows written now, FORMS for older forms), as JSON; a column of
    ADDED_LATER is listed only when it holds a value."""
    form = values.get("form")
    if table not in FORMS or form is None or form == max(FORMS[table]):
        return _current_canonical(table, values)
    columns = FORMS[table].get(form if isinstance(form, int) else -1, ())
    if not columns:
        return json.dumps([["form", as_text(form)]])  # no such form: never matches a hash
    values = {**values, **_sealed_text(values.get("payload"))}
    later = ADDED_LATER.get(table, frozenset())
    pairs = [[column, as_text(values.get(column))] for column in columns
             if column not in later or values.get(column) is not None]
    return _CANONICAL_JSON.encode(pairs)


# json.dumps(pairs, ensure_ascii=False, separators=(",", ":")), its encoder made once
_CANONICAL_JSON = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"))


def _sealed_text(payload: Any) -> dict[str, Any]:
    """The old columns a form-1 change-log row was sealed with (its payload's "sealed" part)."""
    try:
        sealed = json.loads(payload).get("sealed") if isinstance(payload, str) else None
    except (ValueError, AttributeError):
        sealed = None
    return sealed if isinstance(sealed, dict) else {}


def row_hash(prev_hash: str, canonical_text: str) -> str:
    return hashlib.sha256((prev_hash + canonical_text).encode("utf-8")).hexdigest()


def seal(table: str, rows: Sequence[dict[str, Any]], first_id: int | Sequence[int],
         prev_hash: str) -> str:
    """Give ``rows`` (plain dicts, in chain order) their ids, prev_hash and row_hash, linking
    the first one to ``prev_hash``; returns the last row's hash (the new head)."""
    ids = (list(range(first_id, first_id + len(rows))) if isinstance(first_id, int)
           else list(first_id))
    current = max(FORMS[table]) if table in FORMS else None
    for row, row_id in zip(rows, ids, strict=True):
        if current is not None and row.get("form") is None:
            row["form"] = current
        for key, value in row.items():
            if isinstance(value, datetime):
                row[key] = utc(value)
        row["id"], row["prev_hash"] = row_id, prev_hash
        if current is None or row["form"] == current:
            digest = hashlib.sha256(prev_hash.encode("utf-8"))
            digest.update(_current_canonical_bytes(table, row))
            prev_hash = digest.hexdigest()
        else:  # an older form (a migration resealing): the verifier's own text
            prev_hash = row_hash(prev_hash, canonical(table, row))
        row["row_hash"] = prev_hash
    return prev_hash


def _current_canonical(table: str, values: Mapping[str, Any]) -> str:
    """The canonical text of a row of its table's current form: the JSON of its [column, text]
    pairs, written as each value's text escaped once (as a JSON string) and joined to its
    column's fixed head, instead of building the pairs and encoding them (a large import seals
    50,000 rows; tests/services/test_audit_chain.py holds it to the pairs' JSON byte for byte)."""
    later = ADDED_LATER.get(table)
    parts = []
    for column, head in _HEADS[table]:
        value = values.get(column)
        if type(value) is str:  # most columns: as_text would hand it back as it is
            parts.append(head + _escaped(value) + "]")
        elif value is None:
            if later is None or column not in later:
                parts.append(head + "null]")
        else:
            parts.append(head + _escaped(str(as_text(value))) + "]")
    return "[" + ",".join(parts) + "]"


def _current_canonical_bytes(table: str, values: Mapping[str, Any]) -> bytes:
    """``_current_canonical(table, values)`` as UTF-8, written by orjson: the pairs hold only
    texts and None, which orjson writes byte for byte as ``json.dumps(..., ensure_ascii=False,
    separators=(",", ":"))`` does (the same escapes, non-ASCII kept:
    tests/store/test_canonical_json.py checks every code point). A text orjson refuses (a lone
    surrogate, which UTF-8 cannot hold) takes json's way, which fails as it always did."""
    later = ADDED_LATER.get(table)
    columns = SEALED_COLUMNS[table]
    pairs: list[tuple[str, str | None]]
    if later is None:  # every column listed (the change log): the values picked in C
        pairs = list(zip(columns, [v if v is None or type(v) is str else str(as_text(v))
                                   for v in map(values.get, columns)], strict=True))
    else:
        pairs = []
        for column in columns:
            value = values.get(column)
            if value is None:
                if column not in later:
                    pairs.append((column, None))
            else:
                pairs.append((column, value if type(value) is str else str(as_text(value))))
    try:
        return orjson.dumps(pairs)
    except orjson.JSONEncodeError:
        return _current_canonical(table, values).encode("utf-8")


# a str as _CANONICAL_JSON writes it (ensure_ascii=False: the same escaping function)
_escaped = json.encoder.encode_basestring
# '["column",' for each column of each table's current form, in hashing order
_HEADS: dict[str, tuple[tuple[str, str], ...]] = {
    table: tuple((column, "[" + _escaped(column) + ",") for column in columns)
    for table, columns in SEALED_COLUMNS.items()}


# --- the chain's head, under the write lock ----------------------------------------------------

def lock_for_write(session: Session) -> None:
    """On PostgreSQL, take formdb's writer lock once per transaction (a no-op on SQLite, whose
    writers the database itself serialises)."""
    if session.get_bind().dialect.name != "postgresql":
        return
    connection = session.connection()  # begins the transaction if it has not begun
    transaction = session.get_transaction()
    if session.info.get(_LOCKED) is transaction:
        return
    connection.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": _WRITE_LOCK_ID})
    session.info[_LOCKED] = transaction


def chain_head(session: Session, table: str) -> tuple[int, str]:
    """(id, row_hash) of the table's last row, (0, GENESIS) when it is empty."""
    row = session.connection().execute(
        text(f"SELECT id, row_hash FROM {table} ORDER BY id DESC LIMIT 1")).first()
    if row is None:
        return 0, GENESIS
    return int(row[0]), (row[1] or GENESIS)


def next_ids(session: Session, table: str, count: int, last_id: int) -> list[int]:
    """Ids for ``count`` new rows after ``last_id``: the id sequence's next values on
    PostgreSQL (so the serial default never collides with them), max + 1... on SQLite."""
    if session.get_bind().dialect.name != "postgresql":
        return list(range(last_id + 1, last_id + 1 + count))
    return sequence_ids(session, table, count)


def _seal_rows(session: Session, table: str, rows: list[dict[str, Any]]) -> None:
    lock_for_write(session)
    last_id, head = chain_head(session, table)
    seal(table, rows, next_ids(session, table, len(rows), last_id), head)


# --- the hooks -----------------------------------------------------------------------------------

# --- the server's append function (PostgreSQL, installed by `formdb db grant-setup`) -------------

SERVER_APPEND = "formdb_append"  # formdb_append(table text, rows jsonb): see services.admin.server
_SERVER_KNOWN = "formdb_server_append_known"


def server_appends(session: Session) -> bool:
    """True when sealed rows must go through the server's append function: on PostgreSQL once
    ``db grant-setup`` installed it, writers have no INSERT right on the sealed tables; the
    function checks the caller's duty and the triggers that the rows name the login."""
    if session.get_bind().dialect.name != "postgresql":
        return False
    known = session.info.get(_SERVER_KNOWN)
    if known is None:
        known = bool(session.connection().execute(text(
            f"SELECT to_regprocedure('{SERVER_APPEND}(text, jsonb)') IS NOT NULL")).scalar())
        session.info[_SERVER_KNOWN] = known
    return known


def _jsonable(value: Any) -> Any:
    if isinstance(value, datetime | date):
        return value.isoformat()
    return value


def _append_on_server(session: Session, table: str, rows: Sequence[Mapping[str, Any]]) -> None:
    payload = json.dumps([{k: _jsonable(v) for k, v in row.items()} for row in rows],
                         ensure_ascii=False)
    session.connection().execute(text(f"SELECT {SERVER_APPEND}(:t, CAST(:rows AS jsonb))"),
                                 {"t": table, "rows": payload})


def append_rows(session: Session, table: Table, rows: Sequence[dict[str, Any]]) -> None:
    """Insert ``rows`` (plain dicts, in chain order) into a sealed table, sealed onto its chain."""
    if table.name not in SEALED_COLUMNS:
        raise ValueError(f"{table.name} is not a sealed table")
    if not rows:
        return
    session.flush()  # pending ORM rows first, so ids and links follow the call order
    sealed = [dict(row) for row in rows]
    _seal_rows(session, table.name, sealed)
    if server_appends(session):
        _append_on_server(session, table.name, sealed)
        return
    insert_dicts(session, table, sealed)  # sealed above: not through the hooks


def _table_of(obj: object) -> str | None:
    table = getattr(type(obj), "__table__", None)
    name = getattr(table, "name", None)
    return name if name in SEALED_COLUMNS else None


def _orm_values(obj: Any, table: str) -> dict[str, Any]:
    """The instance's column values, scalar column defaults applied as the INSERT would."""
    columns = type(obj).__table__.columns
    values: dict[str, Any] = {}
    for name in SEALED_COLUMNS[table]:
        value = getattr(obj, name, None)
        default = columns[name].default if name in columns else None
        if value is None and default is not None and getattr(default, "is_scalar", False):
            value = default.arg
        values[name] = value
    return values


def _all_values(obj: Any) -> dict[str, Any]:
    """Every column of the instance (unsealed ones too), as the INSERT would write them."""
    values: dict[str, Any] = {}
    for column in type(obj).__table__.columns:
        value = getattr(obj, column.key, None)
        default = column.default
        if value is None and default is not None and getattr(default, "is_scalar", False):
            value = default.arg
        values[column.name] = value
    return values


def _insert_order(obj: object) -> int:
    return inspect(obj).insert_order or 0


def _before_flush(session: Session, _flush: UOWTransaction, _instances: Iterable[Any]) -> None:
    if not (session.new or session.dirty or session.deleted):
        return
    lock_for_write(session)
    for obj in list(session.dirty) + list(session.deleted):
        table = _table_of(obj)
        if table is not None and (obj in session.deleted or session.is_modified(obj)):
            raise AppendOnly(f"{table} is append-only: a sealed row is never changed or "
                             "removed.", hint="record a new row instead")
    pending: dict[str, list[Any]] = {}
    for obj in session.new:
        table = _table_of(obj)
        if table is not None:
            pending.setdefault(table, []).append(obj)
    for table, objs in pending.items():
        objs.sort(key=_insert_order)
        rows = [_orm_values(o, table) for o in objs]
        _seal_rows(session, table, rows)
        for obj, row in zip(objs, rows, strict=True):
            for name, value in row.items():
                if name == "row_hash" or name in SEALED_COLUMNS[table]:
                    setattr(obj, name, value)
        if server_appends(session):  # the server inserts them; the objects keep their values
            _append_on_server(session, table, [{**_all_values(o), **r}
                                               for o, r in zip(objs, rows, strict=True)])
            for obj in objs:
                session.expunge(obj)


def _on_execute(state: ORMExecuteState) -> None:
    if not (state.is_insert or state.is_update or state.is_delete):
        return
    state.session.flush()  # pending ORM rows first, so ids and links follow the call order
    lock_for_write(state.session)
    target = getattr(state.statement, "table", None)
    table = getattr(target, "name", None)
    if table not in SEALED_COLUMNS:
        return
    if state.is_insert:
        raise AppendOnly(f"rows of {table} are added through formdb.store.sealing.append_rows "
                         "(or as ORM objects) so that they are sealed.",
                         hint="pass the rows to append_rows()")
    raise AppendOnly(f"{table} is append-only: a sealed row is never changed or removed.",
                     hint="record a new row instead")


event.listen(LibrarySession, "before_flush", _before_flush)
event.listen(LibrarySession, "do_orm_execute", _on_execute)


__all__ = ["ADDED_LATER", "FORMS", "GENESIS", "SEALED_COLUMNS", "AppendOnly", "LibrarySession",
           "append_rows", "as_text", "canonical", "chain_head", "lock_for_write", "row_hash",
           "seal", "utc"]
