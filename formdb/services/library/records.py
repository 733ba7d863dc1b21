"""The library's evidence records besides ingredients: sources, toxicology and exposure rows.

One path serves every kind, so each has the same doors: ``add`` and ``edit`` from the command
line (``--set column=value``), ``import`` of a CSV/XLSX table (all rows or none), ``export`` in
the columns ``import`` reads, ``list``, ``show`` and ``history``. A kind (``RecordKind``) says
its columns and how one row of cells is validated (the seed's row models, so the bundled seed,
a table and the command line accept exactly the same values). Every change writes one
change-log row per field (who, when, old, new, why); nothing is written until every row is good.
"""

from __future__ import annotations

import contextlib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import inspect as sa_inspect
from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import Conflict, InvalidData, NotFound, quoted
from formdb.schemas.admin import Action
from formdb.schemas.cells import format_number
from formdb.schemas.change_log import FieldChange, value_text
from formdb.schemas.names import refused_character
from formdb.schemas.suggest import did_you_mean
from formdb.schemas.times import utc
from formdb.services.admin.access import require
from formdb.services.library.outside_changes import (
    OUTSIDE,
    marked,
    norm,
    server_atoms,
    unexplained,
)
from formdb.services.library.tables import Problem, raise_problems, read_table, write_table
from formdb.store.change_log import changes_of, log_entry
from formdb.store.models import Base, ChangeLogEntry

Cells = dict[str, str]
# (row number or None, column or None, text): one problem of one row
RowProblem = tuple[int | None, str | None, str]
# validate(session, [(row, cells)], replacing keys) -> ([(row, key, values)], problems)
Validator = Callable[[Session, list[tuple[int, Cells]]],
                     tuple[list[tuple[int, tuple[Any, ...], dict[str, Any]]], list[RowProblem]]]


@dataclass(frozen=True)
class RecordKind:
    """One kind of library record: its table, its columns and its validation."""

    entity: str  # the change log's entity, e.g. "source"
    model: type[Base]
    columns: tuple[str, ...]  # table columns in order: import reads, export writes these
    key_columns: tuple[str, ...]  # the cells that name a record
    validate: Validator
    cells_of: Callable[[Session, Base], Cells]  # a stored row as table cells
    orm_key: Callable[[Session, Cells], tuple[Any, ...] | None]  # cells -> primary key (or None)
    plural: str = ""
    after_write: Callable[[Session, str], None] | None = None  # follow-up writes (user)
    # cell -> the cell it is worked out from: an edit recomputes it when that one is given
    derived: Mapping[str, str] = field(default_factory=dict)

    @property
    def name_plural(self) -> str:
        return self.plural or f"{self.entity}s"


@dataclass
class RecordChanges:
    """What an add, edit or import did (or, with ``dry_run``, would do)."""

    entity: str
    dry_run: bool = False
    added: list[str] = field(default_factory=list)
    changed: dict[str, list[FieldChange]] = field(default_factory=dict)
    unchanged: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class RecordHistoryEntry:
    at: datetime
    user: str
    action: str
    field: str | None
    old: str | None
    new: str | None
    reason: str | None


def cell_text(value: Any) -> str:
    """A stored value as the text a table cell holds."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float | int):
        return format_number(value)
    if isinstance(value, date):
        return value.isoformat()
    return str(value)


def key_text(kind: RecordKind, cells: Mapping[str, str]) -> str:
    return " > ".join(" ".join(cells.get(c, "").split()) for c in kind.key_columns)


def parse_assignments(kind: RecordKind, assignments: Sequence[tuple[str, str]]) -> Cells:
    """``--set column=value`` pairs as cells; an unknown column is one clear problem."""
    cells: Cells = {}
    for column, value in assignments:
        name = "_".join(column.replace("-", " ").split()).casefold()
        if name not in kind.columns or name in kind.key_columns:
            settable = [c for c in kind.columns if c not in kind.key_columns]
            raise InvalidData(f"--set: {column!r} is not a field of a {kind.entity}"
                              f"{did_you_mean(name, settable) or '.'}",
                              hint=f"fields are {', '.join(settable)}")
        cells[name] = value.strip()
    return cells


def _validated(session: Session, kind: RecordKind, rows: list[tuple[int, Cells]], label: str,
               ) -> list[tuple[int, tuple[Any, ...], dict[str, Any]]]:
    parsed, problems = kind.validate(session, rows)
    if problems:
        raise_problems([Problem(label, text, row, column) for row, column, text in problems],
                       hint="correct it and try again; nothing was written")
    return parsed


def _visible_new_keys(session: Session, kind: RecordKind,
                      plans: Sequence[tuple[int, tuple[Any, ...], dict[str, Any]]],
                      label: str) -> None:
    """A new record's key holds visible characters only, as a name does: a key is typed to cite
    or edit the record and is never renamed, so one holding a control or invisible character
    could not be typed again, and no XLSX export of its table could be written (a cell cannot
    hold a control character). A record already held keeps its key and stays editable."""
    problems = [
        Problem(label, f"holds {bad}; a key may hold only visible characters",
                row or None, kind.key_columns[-1])
        for row, key, _values in plans
        if isinstance(key[0], str) and (bad := refused_character(key[0])) is not None
        and _stored(session, kind, key) is None]
    raise_problems(problems, hint="correct it and try again; nothing was written")


def _stored(session: Session, kind: RecordKind, key: tuple[Any, ...]) -> Base | None:
    return session.get(kind.model, key)


def _log(session: Session, kind: RecordKind, name: str, changes: Sequence[FieldChange],
         held: Base | None, values: Mapping[str, Any], *, action: str, user: str,
         reason: str | None, at: datetime) -> None:
    """One change-log entry for the record: each changed column's old and new value as data
    (the stored values; a column the table spells differently keeps its cell text)."""
    typed = []
    for change in changes:
        if change.field in values:
            old = getattr(held, change.field, None) if held is not None else None
            typed.append({"field": change.field, "old": old, "new": values[change.field]})
        else:
            typed.append({"field": change.field, "old": change.old or None,
                          "new": change.new or None})
    session.add(log_entry(at=at, user=user, entity=kind.entity, entity_key=name,
                          entity_version=None, action=action, changes=typed, reason=reason))


def _diff(kind: RecordKind, old: Mapping[str, str], new: Mapping[str, str]) -> list[FieldChange]:
    return [FieldChange(c, old.get(c, ""), new.get(c, "")) for c in kind.columns
            if old.get(c, "") != new.get(c, "")]


def _apply(session: Session, kind: RecordKind, plans: Sequence[tuple[int, tuple[Any, ...],
           dict[str, Any]]], report: RecordChanges, *, action: str, user: str,
           reason: str | None) -> None:
    """Compare each validated row with the library and (unless a dry run) write the change."""
    now = datetime.now(UTC)
    writes: list[tuple[Base | None, dict[str, Any], str, list[FieldChange]]] = []
    for _row, key, values in plans:
        held = _stored(session, kind, key)
        candidate = kind.model(**values)
        new_cells = kind.cells_of(session, candidate)
        old_cells = kind.cells_of(session, held) if held is not None else {}
        name = key_text(kind, new_cells)
        changes = _diff(kind, old_cells, new_cells)
        if held is None:
            report.added.append(name)
        elif changes:
            report.changed[name] = changes
        else:
            report.unchanged.append(name)
        if changes:
            writes.append((held, values, name, changes))
    if report.dry_run:
        return
    for held, values, name, changes in writes:
        _log(session, kind, name, changes, held, values,  # before held takes the new values
             action="add" if held is None and action == "edit" else action, user=user,
             reason=reason, at=now)
        if held is None:
            session.add(kind.model(**values))
        else:
            for column, value in values.items():
                setattr(held, column, value)
    session.flush()
    if writes and kind.after_write is not None:
        kind.after_write(session, user)


def add_record(session: Session, kind: RecordKind, key: str,
               assignments: Sequence[tuple[str, str]], *, user: str,
               reason: str | None = None) -> RecordChanges:
    """Add one record named ``key``; refused when the library already holds it."""
    require(session, user, Action.CHANGE_LIBRARY)
    cells = parse_assignments(kind, assignments)
    cells[kind.key_columns[0]] = key
    label = f"{kind.entity} {key!r}"
    existing = kind.orm_key(session, cells)
    if existing is not None and _stored(session, kind, existing) is not None:
        raise Conflict(f"{label} is already in the library.",
                       hint=f"use `formdb {kind.entity} edit` to change it")
    plans = _validated(session, kind, [(0, cells)], label)
    _visible_new_keys(session, kind, plans, label)
    report = RecordChanges(kind.entity)
    _apply(session, kind, _no_row(plans), report, action="add", user=user, reason=reason)
    return report


def _no_row(plans: list[tuple[int, tuple[Any, ...], dict[str, Any]]],
            ) -> list[tuple[int, tuple[Any, ...], dict[str, Any]]]:
    return [(0, key, values) for _row, key, values in plans]


def _get(session: Session, kind: RecordKind, key: str) -> Base:
    cells = {kind.key_columns[0]: key}
    found = kind.orm_key(session, cells)
    held = _stored(session, kind, found) if found is not None else None
    if held is None:
        names = [key_text(kind, kind.cells_of(session, r))
                 for r in session.scalars(select(kind.model))]
        raise NotFound(f"no {kind.entity} {quoted(key)} in the library"
                       f"{did_you_mean(key, names) or '.'}",
                       hint=f"`formdb {kind.entity} list` shows them")
    return held


def edit_record(session: Session, kind: RecordKind, key: str,
                assignments: Sequence[tuple[str, str]], *, user: str,
                reason: str | None = None) -> RecordChanges:
    """Change fields of one record; an empty value clears a field."""
    require(session, user, Action.CHANGE_LIBRARY)
    if not assignments:
        raise InvalidData("nothing to change.", hint="give at least one --set field=value")
    held = _get(session, kind, key)
    given = parse_assignments(kind, assignments)
    cells = {**kind.cells_of(session, held), **given}
    for column, origin in kind.derived.items():
        if column not in given and cells.get(origin):
            cells[column] = ""
    plans = _validated(session, kind, [(0, cells)], f"{kind.entity} {key!r}")
    report = RecordChanges(kind.entity)
    _apply(session, kind, plans, report, action="edit", user=user, reason=reason)
    return report


def show_record(session: Session, kind: RecordKind, key: str) -> Cells:
    return kind.cells_of(session, _get(session, kind, key))


def list_records(session: Session, kind: RecordKind) -> list[Cells]:
    rows = [kind.cells_of(session, r) for r in session.scalars(select(kind.model))]
    return sorted(rows, key=lambda c: key_text(kind, c).casefold())


def record_history(session: Session, kind: RecordKind, key: str) -> list[RecordHistoryEntry]:
    """Every logged change of one record, oldest first (it may since have been removed)."""
    name = key
    with contextlib.suppress(NotFound):
        name = key_text(kind, kind.cells_of(session, _get(session, kind, key)))
    rows = list(session.scalars(
        select(ChangeLogEntry).where(ChangeLogEntry.entity == kind.entity,
                                     ChangeLogEntry.entity_key == name)
        .order_by(ChangeLogEntry.at, ChangeLogEntry.id)))
    outside = _outside(session, kind, name, rows)
    if not rows and not outside:
        _get(session, kind, key)  # the NotFound with suggestions
    return sorted([*history_entries(rows), *outside], key=lambda e: utc(e.at))


def _outside(session: Session, kind: RecordKind, name: str, rows: Sequence[ChangeLogEntry],
             ) -> list[RecordHistoryEntry]:
    """The server-recorded changes of the record that its change log does not hold (made
    around formdb; PostgreSQL only), one line per changed cell."""
    mapper = sa_inspect(kind.model)
    key = tuple(c.name for c in mapper.primary_key)
    columns = [c.key for c in mapper.column_attrs]
    table_name = str(kind.model.__tablename__)

    def cells(row: Mapping[str, Any] | None) -> Cells | None:
        if row is None:
            return None
        return kind.cells_of(session, kind.model(**{c: row.get(c) for c in columns}))

    def mine(row: Mapping[str, Any]) -> bool:
        held = cells(row)
        return held is not None and key_text(kind, held) == name

    def atoms(old: Mapping[str, Any] | None, new: Mapping[str, Any] | None,
              ) -> list[tuple[str, str, str | None, str | None]]:
        before, after = cells(old) or {}, cells(new) or {}
        return [(c, "value", norm(before.get(c)), norm(after.get(c))) for c in kind.columns
                if norm(before.get(c)) != norm(after.get(c))]

    logged = [(r.user, str(change.get("field")), "value", norm(cell_text(change.get("old"))),
               norm(cell_text(change.get("new"))))
              for r in rows for change in changes_of(r.payload)]
    server = server_atoms(session, {table_name: (key, mine, atoms)})
    return [RecordHistoryEntry(utc(change.at), change.login, OUTSIDE, field, old, new,
                               marked(change.login, utc(change.at)))
            for change, left in unexplained(server, logged)
            for _login, field, _part, old, new in left]


def history_entries(rows: Sequence[ChangeLogEntry]) -> list[RecordHistoryEntry]:
    """One line per changed field of each entry (an entry without changes: one line)."""
    return [RecordHistoryEntry(r.at, r.user, r.action, change.get("field"),
                               _text(change, "old"), _text(change, "new"), r.reason)
            for r in rows for change in changes_of(r.payload) or [{}]]


def _text(change: Mapping[str, Any], side: str) -> str | None:
    if side not in change and f"{side}_source" not in change:
        return None
    text = value_text(change.get(side)) if side in change else ""
    if f"{side}_source" in change:
        text = f"{text} ({value_text(change[f'{side}_source'])})".strip()
    return None if text in ("(none)", "") else text



def read_record_table(kind: RecordKind, path: Path) -> list[tuple[int, Cells]]:
    """The rows of a CSV/XLSX table in the kind's columns; unknown or missing columns refused."""
    return read_columns(path, kind.columns, kind.key_columns)


def read_columns(path: Path, columns: Sequence[str], required: Sequence[str],
                 ) -> list[tuple[int, Cells]]:
    """The rows of a CSV/XLSX table as cells by column; unknown, repeated or missing columns are
    problems of the header row."""
    table = read_table(path)
    header = ["_".join(h.replace("-", " ").split()).casefold() for h in table.header]
    problems = [Problem(table.file, f"unknown column {h!r}{did_you_mean(h, columns)}; the "
                        f"columns are {', '.join(columns)}", table.header_row, h)
                for h in header if h and h not in columns]
    problems += [Problem(table.file, f"column {h!r} appears twice", table.header_row, h)
                 for i, h in enumerate(header) if h and h in header[:i]]
    problems += [Problem(table.file, f"the column {c} is missing", table.header_row)
                 for c in required if c not in header]
    raise_problems(problems, hint="fix the file and import it again; nothing was written")
    return [(number, {h: cell for h, cell in zip(header, cells, strict=False) if h})
            for number, cells in table.rows]


def import_records(session: Session, kind: RecordKind, path: Path, *, user: str,
                   reason: str | None = None, dry_run: bool = False) -> RecordChanges:
    """Upsert every row of a table, all or nothing; a blank cell clears that field."""
    require(session, user, Action.CHANGE_LIBRARY)
    rows = read_record_table(kind, path)
    plans = _validated(session, kind, rows, str(path))
    seen: dict[tuple[Any, ...], int] = {}
    repeats = []
    for row, key, _values in plans:
        if key in seen:
            repeats.append(Problem(str(path), f"this {kind.entity} repeats row {seen[key]}", row,
                                   kind.key_columns[-1]))
        seen.setdefault(key, row)
    raise_problems(repeats, hint="fix the file and import it again; nothing was written")
    _visible_new_keys(session, kind, plans, str(path))
    report = RecordChanges(kind.entity, dry_run=dry_run)
    _apply(session, kind, plans, report, action="import", user=user,
           reason=reason or f"imported from {path.name}")
    return report


def export_records(session: Session, kind: RecordKind, path: Path) -> int:
    """Write every record in the columns ``import`` reads; returns the number of rows."""
    rows = list_records(session, kind)
    write_table(path, kind.columns, [[r.get(c, "") for c in kind.columns] for r in rows],
                sheet=kind.name_plural)
    return len(rows)


def blank_to_none(cells: Mapping[str, str]) -> dict[str, str]:
    """Cells without the empty ones: an empty cell means no value."""
    return {k: v for k, v in cells.items() if v.strip()}


def unknown_key(known: Mapping[str, Any] | set[str], key: str, what: str) -> str | None:
    if key in known:
        return None
    return (f"unknown source {key!r} for {what}{did_you_mean(key, known)}; add it first with "
            "`formdb source add`")


__all__ = [
    "FieldChange", "RecordChanges", "RecordHistoryEntry", "RecordKind", "add_record",
    "blank_to_none", "cell_text", "edit_record", "export_records", "import_records",
    "list_records", "parse_assignments", "record_history", "show_record",
]
