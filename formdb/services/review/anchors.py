"""Anchors: what the library looked like when a reviewer filed a report, kept outside it.

A hash chain alone cannot show that its newest rows were removed (the head just moves back), nor
that a library value was changed with plain SQL (library tables are not chained rows). An anchor
is a small JSON file the reviewer keeps with the filed report (``formdb audit anchor FILE``):
- the head (id, hash and row count) of every sealed chain;
- a digest of every library record a check or a sign-off relies on, by record: ingredients
  (names, CAS, roles, classes and every property value with its source), limits, imported list
  snapshots with their entries, sources, toxicology and exposure rows, label thresholds, users
  with their roles.
``formdb audit verify --anchor FILE`` then finds an anchored head that is gone or rewritten
(rows removed since), fewer rows up to it than anchored, and every record whose digest changed
without a change-log entry for it since the anchor: a change made around formdb. A record that
changed with a logged change is reported as changed, not as broken. Keys enrolled or revoked
and review policies set since the anchor are named too (notes, not breaks).

What it cannot show: a record changed with plain SQL *and* given a forged change-log entry by
someone who can also reseal the log (on SQLite, whoever can write the file); a change to a
record that was also changed legitimately since the anchor.
"""

from __future__ import annotations

import hashlib
import json
from collections import defaultdict
from collections.abc import Iterable
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import Table, inspect, select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.schemas.audit import ChainProblem, ChainReport
from formdb.schemas.bounds import MAX_TABLE_BYTES, UnreadableInput, read_input
from formdb.schemas.times import utc
from formdb.store.models import Base

FORM = "formdb-anchor-1"
# record kind -> (table, key columns, change-log entities that explain a change of it)
KEYED: dict[str, tuple[str, tuple[str, ...], tuple[str, ...]]] = {
    "limit": ("limits", ("key",), ("limit",)),
    "source": ("sources", ("key",), ("source",)),
    "toxicology": ("toxicology", ("key",), ("toxicology",)),
    "exposure": ("exposure", ("product",), ("exposure",)),
    "label threshold": ("label_thresholds", ("key",), ("label threshold",)),
    "incompatibility": ("incompatibilities", ("key",), ("incompatibility",)),
}
EXPLAINED_BY: dict[str, tuple[str, ...]] = {
    **{kind: entities for kind, (_t, _k, entities) in KEYED.items()},
    "ingredient": ("ingredient", "mixture", "constituent"),
    "list": ("list", "list entry"),
    "user": ("user",),
}


def _digest(value: Any) -> str:
    text = json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      default=str)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:32]


def _rows(session: Session, table: str) -> Iterable[dict[str, Any]]:
    model: Table = Base.metadata.tables[table]
    return (dict(r) for r in session.execute(select(model)).mappings())


def _keyed(session: Session, table: str, key: tuple[str, ...]) -> dict[str, str]:
    return {" / ".join(str(r[k]) for k in key): _digest(r) for r in _rows(session, table)}


def _ingredients(session: Session) -> dict[str, str]:
    parts: dict[int, dict[str, Any]] = defaultdict(lambda: defaultdict(list))
    for name in ("ingredient_names", "ingredient_cas", "ingredient_roles",
                 "ingredient_classes", "property_values", "mixture_constituents"):
        owner = "mixture_id" if name == "mixture_constituents" else "ingredient_id"
        for row in _rows(session, name):
            parts[int(row.pop(owner))][name].append(row)
    out = {}
    for row in _rows(session, "ingredients"):
        own = parts.get(int(row["id"]), {})
        record = {"row": {k: v for k, v in row.items() if k != "id"},
                  **{k: sorted(own.get(k, []), key=_digest) for k in sorted(own)}}
        names = [n["name"] for n in own.get("ingredient_names", []) if n.get("is_primary")]
        out[names[0] if names else f"#{row['id']}"] = _digest(record)
    return out


def _lists(session: Session) -> dict[str, str]:
    entries: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for row in _rows(session, "list_entries"):
        entries[int(row.pop("snapshot_id"))].append(row)
    groups: dict[str, list[Any]] = defaultdict(list)
    for snap in _rows(session, "list_snapshots"):
        label = f"{snap['jurisdiction']} Annex {snap['annex']}"
        body = sorted(entries.get(int(snap["id"]), []), key=lambda e: str(e["key"]))
        groups[label].append({"snapshot": snap, "entries": [_digest(e) for e in body]})
    return {label: _digest(sorted(g, key=_digest)) for label, g in groups.items()}


def _users(session: Session) -> dict[str, str]:
    roles: dict[int, list[str]] = defaultdict(list)
    for row in _rows(session, "user_roles"):
        roles[int(row["user_id"])].append(str(row["role"]))
    return {str(u["name"]): _digest({"active": u["active"], "roles": sorted(roles[int(u["id"])])})
            for u in _rows(session, "users")}


def record_digests(session: Session) -> dict[str, dict[str, str]]:
    """Every anchored record's digest, by kind and key (tables absent here are left out)."""
    present = set(inspect(session.connection()).get_table_names())
    out: dict[str, dict[str, str]] = {}
    for kind, (table, key, _entities) in KEYED.items():
        if table in present:
            out[kind] = _keyed(session, table, key)
    if "ingredients" in present:
        out["ingredient"] = _ingredients(session)
    if "list_snapshots" in present:
        out["list"] = _lists(session)
    if "users" in present:
        out["user"] = _users(session)
    return out


def make_anchor(session: Session, chains: list[ChainReport], *, user: str,
                database: str) -> dict[str, Any]:
    """The anchor: the chains' heads and every record's digest, now."""
    return {"form": FORM, "made_at": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
            "made_by": user, "database": database,
            "chains": {c.table: {"rows": c.rows, "head_id": c.head_id, "head_hash": c.head_hash}
                       for c in chains},
            "records": record_digests(session)}


def read_anchor(path: Path) -> dict[str, Any]:
    """An anchor file, checked for its shape (a bad file is an input error, exit 2)."""
    try:
        data: Any = json.loads(read_input(path, MAX_TABLE_BYTES).decode("utf-8"))
    except (OSError, UnicodeDecodeError, UnreadableInput) as exc:
        raise InvalidData(f"--anchor {path}: cannot be read ({exc})",
                          hint="give the file `formdb audit anchor` wrote") from None
    except ValueError as exc:
        raise InvalidData(f"--anchor {path}: not JSON ({exc})",
                          hint="give the file `formdb audit anchor` wrote") from None
    ok = (isinstance(data, dict) and data.get("form") == FORM
          and isinstance(data.get("chains"), dict) and isinstance(data.get("records"), dict))
    if not ok:
        raise InvalidData(f"--anchor {path}: not a formdb anchor (form {FORM})",
                          hint="give the file `formdb audit anchor` wrote")
    for table, head in data["chains"].items():
        if not (isinstance(head, dict) and isinstance(head.get("rows"), int)
                and (head.get("head_id") is None or isinstance(head.get("head_id"), int))):
            raise InvalidData(f"--anchor {path}, chain {table!r}: no rows/head_id",
                              hint="give the file `formdb audit anchor` wrote")
    return dict(data)


def _since(session: Session, anchored_head: int | None) -> set[tuple[str, str]]:
    """(entity, key) of every change-log entry after the anchored head."""
    log = Base.metadata.tables["change_log"]
    stmt = select(log.c.entity, log.c.entity_key)
    if anchored_head is not None:
        stmt = stmt.where(log.c.id > anchored_head)
    return {(str(e), str(k)) for e, k in session.execute(stmt).all()}


def check_anchor(session: Session, anchor: dict[str, Any],
                 chains: dict[str, ChainReport]) -> tuple[list[ChainProblem], list[str]]:
    """Problems against the anchor (rows removed since, records changed around formdb), and
    notes (records changed with a logged change)."""
    problems: list[ChainProblem] = []
    notes: list[str] = []
    for table, head in anchor["chains"].items():
        head_id, head_hash, rows = head.get("head_id"), head.get("head_hash"), head["rows"]
        if head_id is None:
            continue
        chain = chains.get(table)
        if chain is None:
            problems.append(ChainProblem(table, head_id, "removed-since-anchor",
                                         f"the {table} chain is gone since the anchor"))
            continue
        model = Base.metadata.tables[table]
        found = session.execute(select(model.c.row_hash).where(model.c.id == head_id)).first()
        if found is None:
            problems.append(ChainProblem(table, head_id, "removed-since-anchor", (
                f"row {head_id}, the head of {table} when anchored ({str(head_hash)[:12]}), is "
                "gone: rows were removed since the anchor")))
        elif found[0] != head_hash:
            problems.append(ChainProblem(table, head_id, "rewritten-since-anchor", (
                f"row {head_id}, the head of {table} when anchored, now has hash "
                f"{str(found[0])[:12]}, not {str(head_hash)[:12]}: rewritten since the anchor")))
        count = len(session.execute(select(model.c.id).where(model.c.id <= head_id)).all())
        if count < rows:
            problems.append(ChainProblem(table, head_id, "removed-since-anchor", (
                f"{rows - count} row(s) of {table} up to row {head_id} were removed since the "
                f"anchor ({rows} then, {count} now)")))
    notes += _trust_changes(session, anchor)
    log_head = anchor["chains"].get("change_log", {}).get("head_id")
    logged = _since(session, log_head)
    now = record_digests(session)
    for kind, then in anchor["records"].items():
        current = now.get(kind, {})
        entities = EXPLAINED_BY.get(kind, (kind,))
        for key in sorted(set(then) | set(current)):
            if then.get(key) == current.get(key):
                continue
            what = ("added" if key not in then else "removed" if key not in current
                    else "changed")
            if any((entity, key) in logged for entity in entities):
                notes.append(f"{kind} {key}: {what} since the anchor (logged)")
            else:
                problems.append(ChainProblem(f"{kind} records", 0, "unlogged-change", (
                    f"{kind} {key} was {what} since the anchor with no change-log entry for "
                    "it: a change made around formdb (plain SQL or a file edit)")))
    return problems, notes


def _trust_changes(session: Session, anchor: dict[str, Any]) -> list[str]:
    """Keys enrolled or revoked and review policies set since the anchor, each named: what
    decides whose signature is valid and which runs are signable. A row appended to those
    chains by someone who can write them directly verifies (README), so it is shown here for
    the reviewer to recognise."""
    present = set(inspect(session.connection()).get_table_names())
    out = []
    for table in ("key_enrolments", "policy_versions"):
        if table not in present:
            continue
        head = anchor["chains"].get(table, {}).get("head_id") or 0
        model = Base.metadata.tables[table]
        for row in session.execute(select(model).where(model.c.id > head)
                                   .order_by(model.c.id)).mappings():
            if table == "key_enrolments":
                done = {"enrol": "enrolled", "revoke": "revoked"}.get(row["action"],
                                                                      row["action"])
                out.append(f"key {row['key_id']} {done} for {row['login']} "
                           f"({row['printed_name']}) by {row['by_user']} at "
                           f"{utc(row['at']):%Y-%m-%d %H:%M:%S UTC}, since the anchor")
            else:
                try:
                    profile = json.loads(row["policy_json"])["profile"]
                    named = f"{profile['name']} {profile['version']} ({profile['hash'][:12]})"
                except (ValueError, KeyError, TypeError):
                    named = "unreadable"
                out.append(f"review policy set by {row['set_by']} at "
                           f"{utc(row['set_at']):%Y-%m-%d %H:%M:%S UTC}, since the anchor: "
                           f"signable profile {named}")
    return out


def anchor_time(anchor: dict[str, Any]) -> str:
    made = str(anchor.get("made_at", ""))
    try:
        return utc(datetime.fromisoformat(made.replace("Z", "+00:00"))).strftime(
            "%Y-%m-%d %H:%M:%S UTC")
    except ValueError:
        return made
