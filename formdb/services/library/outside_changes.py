"""Changes made around formdb, for the record histories: on PostgreSQL the server's statement
triggers record every change to a library table with the login (``server_change_log``, see
formdb.store.server_audit), formdb's own writes included. A history shows, besides formdb's
change-log entries, each server-recorded change of the record that no entry accounts for.

Both sides are broken into atoms: (login, field, part, old, new), one per changed part of one
field (a property's value, source or note; one element added to or removed from a list). Each
change-log entry's atom cancels one equal server atom, so formdb's edits are not shown twice
and a plain-SQL change that repeats one is still shown. On SQLite no server records anything.
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Callable, Iterable, Mapping, Sequence
from datetime import datetime
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.schemas.cells import format_number
from formdb.store.models import ServerChange

OUTSIDE = "outside formdb"

Row = Mapping[str, Any]
# (login, field, part, old, new): one changed part of one field
Atom = tuple[str, str, str, str | None, str | None]
# a server row before and after as the record's atoms (without the login)
RowAtoms = Callable[[Row | None, Row | None], list[tuple[str, str, str | None, str | None]]]


def norm(value: Any) -> str | None:
    """A value as comparable text: numbers shortest, yes/no, None for nothing."""
    if value is None or value == "":
        return None
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        return format_number(float(value))
    return str(value)


def _rows(text: str | None) -> list[dict[str, Any]]:
    try:
        found = json.loads(text) if text else []
    except ValueError:
        return []
    return [r for r in found if isinstance(r, dict)] if isinstance(found, list) else []


def row_pairs(change: ServerChange, key: Sequence[str]) -> list[tuple[Row | None, Row | None]]:
    """The rows one statement changed, before and after, paired by primary key (a row whose
    key changed is a removal and an addition)."""
    before = {tuple(r.get(c) for c in key): r for r in _rows(change.old_rows)}
    after = {tuple(r.get(c) for c in key): r for r in _rows(change.new_rows)}
    return [(before.get(k), after.get(k)) for k in [*before, *(k for k in after
                                                                 if k not in before)]]


def server_atoms(session: Session, tables: Mapping[str, tuple[tuple[str, ...],
                 Callable[[Row], bool], RowAtoms]],
                 ) -> list[tuple[ServerChange, list[Atom]]]:
    """Per server-recorded statement on ``tables`` (name -> primary key, whether a row is the
    record's, its atoms), the atoms it made to the record, oldest first."""
    if session.get_bind().dialect.name != "postgresql":
        return []
    found = []
    for change in session.scalars(select(ServerChange)
                                  .where(ServerChange.table_name.in_(list(tables)))
                                  .order_by(ServerChange.at, ServerChange.id)):
        key, mine, atoms_of = tables[change.table_name]
        atoms: list[Atom] = []
        for old, new in row_pairs(change, key):
            if (old is not None and mine(old)) or (new is not None and mine(new)):
                atoms += [(change.login, *a) for a in atoms_of(old, new)]
        if atoms:
            found.append((change, atoms))
    return found


def unexplained(server: Iterable[tuple[ServerChange, list[Atom]]], logged: Iterable[Atom],
                ) -> list[tuple[ServerChange, list[Atom]]]:
    """The server's atoms that formdb's change log does not account for (each logged atom
    cancels one equal server atom), per statement, statements with none left dropped."""
    pending = Counter(logged)
    left = []
    for change, atoms in server:
        rest = []
        for atom in atoms:
            if pending[atom] > 0:
                pending[atom] -= 1
            else:
                rest.append(atom)
        if rest:
            left.append((change, rest))
    return left


def marked(login: str, at: datetime) -> str:
    return f"changed outside formdb by {login} at {at:%Y-%m-%d %H:%M:%S} UTC"


def column_atoms(columns: Sequence[str]) -> RowAtoms:
    """Atoms of a plain record row: one per column whose value differs."""
    def atoms(old: Row | None, new: Row | None) -> list[tuple[str, str, str | None, str | None]]:
        out = []
        for column in columns:
            before = norm(old.get(column)) if old is not None else None
            after = norm(new.get(column)) if new is not None else None
            if before != after:
                out.append((column, "value", before, after))
        return out
    return atoms


# --- ingredients: one record over several tables ---------------------------------------------

_LIST_TABLES = {"ingredient_cas": ("cas", "cas"), "ingredient_roles": ("roles", "role"),
                "ingredient_classes": ("classes", "class_name")}


def _list_atoms(field: str, old: Any, new: Any) -> list[tuple[str, str, str | None, str | None]]:
    before = {norm(v) for v in old or []} - {None}
    after = {norm(v) for v in new or []} - {None}
    return ([(field, "removed", v, None) for v in sorted(before - after, key=str)]
            + [(field, "added", None, v) for v in sorted(after - before, key=str)])


def _ingredient_row(old: Row | None, new: Row | None,
                    ) -> list[tuple[str, str, str | None, str | None]]:
    return [(column, "value", norm(old.get(column)) if old else None,
             norm(new.get(column)) if new else None) for column in ("inci_name", "retired")
            if (norm(old.get(column)) if old else None) != (norm(new.get(column)) if new else None)]


def _value_row(old: Row | None, new: Row | None) -> list[tuple[str, str, str | None, str | None]]:
    def parts(row: Row | None) -> dict[str, str | None]:
        if row is None:
            return {"value": None, "source": None, "note": None}
        value = row.get("value_num")
        return {"value": norm(value if value is not None else row.get("value_text")),
                "source": norm(row.get("source_key")), "note": norm(row.get("note"))}
    prop = str((new or old or {}).get("property"))
    before, after = parts(old), parts(new)
    return [(prop, part, before[part], after[part]) for part in ("value", "source", "note")
            if before[part] != after[part]]


def _member_row(field: str, column: str) -> RowAtoms:
    def atoms(old: Row | None, new: Row | None) -> list[tuple[str, str, str | None, str | None]]:
        return _list_atoms(field, [old[column]] if old else [], [new[column]] if new else [])
    return atoms


def _name_row(old: Row | None, new: Row | None) -> list[tuple[str, str, str | None, str | None]]:
    def synonym(row: Row | None) -> list[Any]:
        return [row["name"]] if row is not None and not row.get("is_primary") else []
    return _list_atoms("synonyms", synonym(old), synonym(new))


def logged_ingredient_atoms(user: str, changes: Iterable[Any], list_fields: Sequence[str],
                            ) -> list[Atom]:
    """The atoms of one change-log entry of an ingredient (its LoggedChange items)."""
    atoms: list[Atom] = []
    for change in changes:
        parts = change.parts()
        if "value" in parts:
            if change.field in list_fields:
                atoms += [(user, *a) for a in _list_atoms(change.field, change.old, change.new)]
            else:
                atoms.append((user, change.field, "value", norm(change.old), norm(change.new)))
        for part in ("source", "note"):
            if part in parts:
                atoms.append((user, change.field, part, norm(getattr(change, f"old_{part}")),
                              norm(getattr(change, f"new_{part}"))))
    return atoms


def ingredient_outside(session: Session, ingredient_id: int, logged: Iterable[Atom],
                       ) -> list[tuple[ServerChange, list[Atom]]]:
    """The server-recorded changes of one ingredient that its change log does not hold."""
    def own(column: str) -> Callable[[Row], bool]:
        return lambda row: row.get(column) == ingredient_id
    tables: dict[str, tuple[tuple[str, ...], Callable[[Row], bool], RowAtoms]] = {
        "ingredients": (("id",), own("id"), _ingredient_row),
        "property_values": (("ingredient_id", "property"), own("ingredient_id"), _value_row),
        "ingredient_names": (("id",), own("ingredient_id"), _name_row),
    }
    for table, (field, column) in _LIST_TABLES.items():
        tables[table] = (("ingredient_id", column), own("ingredient_id"),
                         _member_row(field, column))
    return unexplained(server_atoms(session, tables), logged)


def atom_changes(atoms: Iterable[Atom]) -> list[dict[str, Any]]:
    """Atoms as LoggedChange fields (a list member added or removed: a one-item list)."""
    out: list[dict[str, Any]] = []
    for _login, field, part, old, new in atoms:
        if part == "value":
            out.append({"field": field, "old": old, "new": new})
        elif part in ("source", "note"):
            out.append({"field": field, f"old_{part}": old, f"new_{part}": new})
        else:
            out.append({"field": field, "old": [old] if old else [], "new": [new] if new else []})
    return out
