"""The ingredient library's use cases: import, export, list, show, add, edit, retire, history.

Every function takes the caller's session (one unit of work per command, see
``formdb.store.db.unit_of_work``) and writes nothing until every input is known to be good, so a
rejected import or edit leaves the library exactly as it was. Each change of an ingredient writes
one change-log entry with its field changes as typed data (services.library.ingredient_log) and
bumps the ingredient's version (its optimistic lock).
"""

from __future__ import annotations

import gc
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, cast

from sqlalchemy import Select, Table, func, select
from sqlalchemy.orm import Session, selectinload
from sqlalchemy.orm.exc import StaleDataError

from formdb.errors import Conflict, InvalidData, NotFound, quoted
from formdb.schemas.admin import Action
from formdb.schemas.change_log import FieldChange, LoggedChange, read_payload
from formdb.schemas.ingredient import (
    PROPERTY_NAMES,
    IngredientIn,
    IngredientRecord,
    name_key,
    normalise_inci,
)
from formdb.schemas.times import utc
from formdb.schemas.vocab import UNVERIFIED_EVIDENCE, Evidence, Role
from formdb.services.admin.access import require
from formdb.services.library.ingredient_fields import (
    EDITABLE_FIELDS,
    LIST_SEPARATOR,
    NAME_COLUMN,
    FieldProblem,
    did_you_mean,
    export_columns,
    join_list,
    normalise_column,
    parse_list_item,
    property_kind,
    split_list,
)
from formdb.services.library.ingredient_log import (
    LIST_FIELDS,
    Fields,
    added_payload,
    fields_of,
    typed_changes,
)
from formdb.services.library.ingredient_rows import (
    Cells,
    empty_cells,
    header_labels,
    missing_only,
    overlay,
    read_ingredient_rows,
    render_ingredient,
    validate_cells,
)
from formdb.services.library.outside_changes import (
    OUTSIDE,
    atom_changes,
    ingredient_outside,
    logged_ingredient_atoms,
    marked,
)
from formdb.services.library.tables import (
    Problem,
    TableProblems,
    raise_problems,
    read_table,
    write_table,
)
from formdb.store import queries
from formdb.store.bulk import insert_rows, new_ids
from formdb.store.change_log import log_entry, log_values
from formdb.store.models import (
    ChangeLogEntry,
    Ingredient,
    IngredientCas,
    IngredientClass,
    IngredientName,
    IngredientRole,
    PropertyValue,
    Source,
)
from formdb.store.sealing import append_rows, lock_for_write

ENTITY = "ingredient"
# Source keys every library understands, created on first use when its sources table lacks them.
SPECIAL_SOURCES: dict[str, tuple[str, str]] = {
    "rule-of-thumb": (Evidence.RULE_OF_THUMB.value,
                      "Rule of thumb: a trade heuristic with no published source."),
    "from-memory": (Evidence.FROM_MEMORY.value,
                    "Recalled from memory; check a published source before relying on it."),
}
_CHUNK = 500
_BULK_CHUNK = 1000  # new ingredients per bulk insert


@dataclass
class ImportReport:
    """What an import did (or, with ``dry_run``, would do)."""

    file: str
    dry_run: bool
    added: list[str] = field(default_factory=list)
    changed: dict[str, list[FieldChange]] = field(default_factory=dict)
    unchanged: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)  # per-row remarks that are not problems
    left_alone: list[str] = field(default_factory=list)  # keep_existing: values not replaced


@dataclass(frozen=True)
class EditReport:
    inci_name: str
    version: int
    changes: list[FieldChange]
    accepted: tuple[str, ...] = ()  # unusual values the user confirmed (--accept-unusual)
    weaker: tuple[str, ...] = ()  # checked values now resting on unchecked sources


@dataclass(frozen=True)
class HistoryEntry:
    """One change-log entry of an ingredient: one change of the record, its fields as data."""

    at: datetime
    user: str
    action: str
    version: int | None
    changes: tuple[LoggedChange, ...]
    reason: str | None
    via: str | None = None


@dataclass(frozen=True)
class IngredientDetail:
    """What ``ingredient show`` prints: the record, its citations and its last change."""

    record: IngredientRecord
    updated_at: datetime
    updated_by: str


# --- reading the library -----------------------------------------------------------------------

def _with_children(stmt: Select[Ingredient]) -> Select[Ingredient]:
    return stmt.options(
        selectinload(Ingredient.names), selectinload(Ingredient.cas_numbers),
        selectinload(Ingredient.roles), selectinload(Ingredient.classes),
        selectinload(Ingredient.values))


def _owners(session: Session, keys: Iterable[str]) -> dict[str, Ingredient]:
    """Name key -> the ingredient that answers to it (INCI name or synonym), children loaded."""
    wanted = sorted(set(keys))
    key_to_id: dict[str, int] = {}
    if len(wanted) > _CHUNK and session.execute(
            select(func.count()).select_from(IngredientName)).scalar_one() <= len(wanted):
        # a large import into a smaller library: its names read at once, not asked one by one
        asked = set(wanted)
        key_to_id.update((key, ingredient_id) for key, ingredient_id in session.execute(
            select(IngredientName.name_key, IngredientName.ingredient_id)) if key in asked)
        wanted = []
    for start in range(0, len(wanted), _CHUNK):
        key_to_id.update(session.execute(
            select(IngredientName.name_key, IngredientName.ingredient_id)
            .where(IngredientName.name_key.in_(wanted[start:start + _CHUNK]))).all())
    ids = sorted(set(key_to_id.values()))
    found: dict[int, Ingredient] = {}
    for start in range(0, len(ids), _CHUNK):
        chunk = ids[start:start + _CHUNK]
        stmt = _with_children(select(Ingredient).where(Ingredient.id.in_(chunk)))
        found.update((ing.id, ing) for ing in session.scalars(stmt))
    return {key: found[ingredient_id] for key, ingredient_id in key_to_id.items()}


def _get(session: Session, name: str) -> Ingredient:
    """The ingredient called ``name`` (INCI name or synonym), or NotFound with suggestions."""
    found = _owners(session, [name_key(name)]).get(name_key(name))
    if found is None:
        close = queries.suggest_names(session, name)
        guess = f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""
        raise NotFound(f"no ingredient {quoted(normalise_inci(name))} in the library{guess or '.'}",
                       hint="`formdb ingredient list` shows the library's names")
    return found


def _sources(session: Session) -> dict[str, str]:
    """Source key -> evidence kind, the special keys included."""
    known = dict(session.execute(select(Source.key, Source.evidence)).all())
    for key, (evidence, _citation) in SPECIAL_SOURCES.items():
        known.setdefault(key, evidence)
    return known


def _citations(session: Session, ingredients: Iterable[Ingredient]) -> dict[str, str]:
    return queries.citations_for(session, (v.source_key for i in ingredients for v in i.values))


def _record(session: Session, ing: Ingredient) -> IngredientRecord:
    return queries.record_from_row(ing, _citations(session, [ing]))


def _as_input(record: IngredientRecord) -> IngredientIn:
    return IngredientIn(
        inci_name=record.inci_name, synonyms=record.synonyms, cas_numbers=record.cas_numbers,
        roles=tuple(record.roles), classes=tuple(record.classes), properties=record.properties,
        sources={p: prov.source for p, prov in record.provenance.items()},
        notes={p: prov.note for p, prov in record.provenance.items() if prov.note})


def _cells(ing: Ingredient | None) -> Cells:
    if ing is None:
        return empty_cells()
    return render_ingredient(_as_input(queries.record_from_row(ing, {})))


def _active(session: Session, role: str | None, include_retired: bool) -> list[Ingredient]:
    stmt = _with_children(select(Ingredient).order_by(Ingredient.inci_name))
    if not include_retired:
        stmt = stmt.where(Ingredient.retired.is_(False))
    if role:
        try:
            wanted = Role(parse_list_item("roles", role))
        except FieldProblem as exc:
            raise InvalidData(f"--role: {exc}.", hint="give one of the roles listed") from None
        stmt = stmt.where(Ingredient.roles.any(IngredientRole.role == wanted.value))
    return sorted(session.scalars(stmt), key=lambda i: i.inci_name.casefold())


def list_ingredients(session: Session, *, role: str | None = None,
                     include_retired: bool = False) -> list[IngredientRecord]:
    """The library's ingredients by INCI name, optionally one role only."""
    rows = _active(session, role, include_retired)
    citations = _citations(session, rows)
    return [queries.record_from_row(ing, citations) for ing in rows]


def show_ingredient(session: Session, name: str) -> IngredientDetail:
    ing = _get(session, name)
    return IngredientDetail(_record(session, ing), ing.updated_at, ing.updated_by)


def ingredient_history(session: Session, name: str) -> list[HistoryEntry]:
    """Every logged change of one ingredient, oldest first."""
    ing = _get(session, name)
    rows = session.scalars(
        select(ChangeLogEntry)
        .where(ChangeLogEntry.entity == ENTITY, ChangeLogEntry.entity_key == ing.inci_name)
        .order_by(ChangeLogEntry.at, ChangeLogEntry.id))
    entries = []
    for r in rows:
        payload = read_payload(r.payload)
        entries.append(HistoryEntry(r.at, r.user, r.action, r.entity_version, payload.changes,
                                    r.reason, payload.via))
    logged = [atom for e in entries
              for atom in logged_ingredient_atoms(e.user, e.changes, LIST_FIELDS)]
    for change, atoms in ingredient_outside(session, ing.id, logged):
        at = utc(change.at)
        entries.append(HistoryEntry(
            at, change.login, OUTSIDE, None,
            tuple(LoggedChange(**c) for c in atom_changes(atoms)), marked(change.login, at)))
    return sorted(entries, key=lambda e: utc(e.at))


# --- writing ---------------------------------------------------------------------------------

def diff_cells(old: Mapping[str, str], new: Mapping[str, str]) -> list[FieldChange]:
    """The fields whose canonical text differs, in column order."""
    return [FieldChange(c, old.get(c, ""), new.get(c, "")) for c in export_columns()
            if old.get(c, "") != new.get(c, "")]


def _ensure_special_sources(session: Session, used: Iterable[str]) -> None:
    """Create the special source rows a value cites, if missing; safe when two writers race
    (INSERT ... ON CONFLICT DO NOTHING, which SQLite and PostgreSQL both understand)."""
    wanted = sorted(k for k in set(used) if k in SPECIAL_SOURCES)
    present = set(session.scalars(select(Source.key).where(Source.key.in_(wanted))))
    missing = [k for k in wanted if k not in present]
    if not missing:
        return
    rows = [{"key": k, "citation": SPECIAL_SOURCES[k][1], "evidence": SPECIAL_SOURCES[k][0],
             "url": None, "seen": "calc", "note": None} for k in missing]
    if session.get_bind().dialect.name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert as pg_insert

        session.execute(pg_insert(Source).values(rows).on_conflict_do_nothing(
            index_elements=["key"]))
    else:
        from sqlalchemy.dialects.sqlite import insert as sqlite_insert

        session.execute(sqlite_insert(Source).values(rows).on_conflict_do_nothing(
            index_elements=["key"]))


def _apply(ing: Ingredient, item: IngredientIn, evidence: Mapping[str, str]) -> None:
    """Make the ORM rows of ``ing`` hold ``item``, reusing rows so unique keys never collide."""
    want = {name_key(s): s for s in item.synonyms}
    for row in [n for n in ing.names if not n.is_primary]:
        if row.name_key not in want:
            ing.names.remove(row)
        elif row.name != want[row.name_key]:
            row.name = want[row.name_key]
    have = {n.name_key for n in ing.names}
    ing.names.extend(IngredientName(name=s, name_key=k, is_primary=False)
                     for k, s in want.items() if k not in have)
    _sync(ing.cas_numbers, "cas", set(item.cas_numbers), lambda v: IngredientCas(cas=v))
    _sync(ing.roles, "role", {r.value for r in item.roles}, lambda v: IngredientRole(role=v))
    _sync(ing.classes, "class_name", set(item.classes), lambda v: IngredientClass(class_name=v))
    stored = {v.property: v for v in ing.values}
    for prop in PROPERTY_NAMES:
        value = getattr(item.properties, prop)
        held = stored.get(prop)
        if value is None:
            if held is not None:
                ing.values.remove(held)
            continue
        num, text = queries.property_columns(prop, value)
        source = item.sources[prop]
        if held is None:
            held = PropertyValue(property=prop)
            ing.values.append(held)
        held.value_num, held.value_text, held.source_key = num, text, source
        held.evidence, held.note = evidence[source], item.notes.get(prop)


def _sync(rows: list[Any], attr: str, want: set[str], make: Callable[[str], Any]) -> None:
    """Make ``rows`` (a child collection) hold exactly ``want``, keeping rows already there."""
    for row in list(rows):
        if getattr(row, attr) not in want:
            rows.remove(row)
    have = {getattr(row, attr) for row in rows}
    rows.extend(make(v) for v in sorted(want - have))


def _log(session: Session, ing: Ingredient, changes: Sequence[Mapping[str, Any]], *, action: str,
         user: str, reason: str | None, at: datetime, via: str | None = None) -> None:
    """One change-log entry for one change of ``ing`` (at its new version)."""
    session.add(log_entry(at=at, user=user, entity=ENTITY, entity_key=ing.inci_name,
                          entity_version=ing.version, action=action, changes=changes,
                          reason=reason, via=via))


def _flush(session: Session, names: Sequence[str]) -> None:
    """Flush; a concurrent edit (the version moved under us) becomes a Conflict naming who."""
    try:
        session.flush()
    except StaleDataError:
        session.rollback()
        latest = session.scalars(
            select(ChangeLogEntry).where(ChangeLogEntry.entity == ENTITY,
                                         ChangeLogEntry.entity_key.in_(names))
            .order_by(ChangeLogEntry.at.desc(), ChangeLogEntry.id.desc()).limit(1)).first()
        who = (f" by {latest.user} at {_when(latest.at)} (now version {latest.entity_version})"
               if latest else "")
        raise Conflict(f"{', '.join(names)} was changed{who} while this change was being made; "
                       "nothing was written.",
                       hint="show it again and repeat your change") from None


def _when(at: datetime) -> str:
    return utc(at).strftime("%Y-%m-%d %H:%M:%S UTC")


def _write(session: Session, ing: Ingredient | None, item: IngredientIn, before: Fields | None,
           evidence: Mapping[str, str], *, action: str, user: str, reason: str | None,
           now: datetime, via: str | None = None,
           grades: Mapping[str, tuple[str, str]] | None = None) -> Ingredient:
    """Store ``item`` as ``ing`` (None: a new ingredient), logging what differs from ``before``
    (the ingredient's fields as they were) and the evidence grades that moved with it."""
    changes = typed_changes(before, fields_of(item))
    for prop, (old, new) in (grades or {}).items():
        held = next((c for c in changes if c["field"] == prop), None)
        if held is None:
            held = {"field": prop}
            changes.append(held)
        held["old_evidence"], held["new_evidence"] = old, new
    if ing is None:
        ing = Ingredient(inci_name=item.inci_name, retired=False, created_at=now, updated_at=now,
                         updated_by=user)
        ing.names.append(IngredientName(name=item.inci_name, name_key=name_key(item.inci_name),
                                        is_primary=True))
        session.add(ing)
    _apply(ing, item, evidence)
    ing.updated_at, ing.updated_by = now, user  # an UPDATE of the row: the version moves on
    _flush(session, [ing.inci_name])
    _log(session, ing, changes, action=action, user=user, reason=reason, at=now, via=via)
    return ing


# --- import / export ---------------------------------------------------------------------------

def _names_of(given: Mapping[str, str]) -> list[tuple[str, str]]:
    names = [(NAME_COLUMN, normalise_inci(given.get(NAME_COLUMN, "")))]
    names += [("synonyms", normalise_inci(s)) for s in split_list(given.get("synonyms", ""))]
    return [(column, n) for column, n in names if n]


@contextmanager
def _cycle_collector_paused() -> Iterator[None]:
    """Python's cycle collector off for the block, as it was after it.

    An import builds hundreds of thousands of small objects that live until it ends; the
    collector would walk all of them again and again (a fifth of a large import's time) and
    find nothing to free. Reference counting still frees everything that is dropped, and the
    collector picks up any cycle when it runs next."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def import_table(session: Session, path: Path, *, user: str, reason: str | None,
                 action: str = "import", dry_run: bool = False,
                 keep_existing: bool = False, confirm: bool | None = None) -> ImportReport:
    """Upsert every row of a CSV/XLSX ingredient table, all or nothing.

    Rows match library ingredients by INCI name or synonym (case and spacing ignored); a blank
    cell leaves the library's value alone; a non-blank list cell replaces the list. Every problem
    of every row is collected first and raised together as TableProblems, before anything is
    written. ``dry_run`` computes the same report and writes nothing. ``keep_existing``
    (``init --seed`` on an existing library) only fills what the library lacks and lists in
    ``left_alone`` every value it did not replace.
    """
    with _cycle_collector_paused():
        return _import_table(session, path, user=user, reason=reason, action=action,
                             dry_run=dry_run, keep_existing=keep_existing, confirm=confirm)


def _import_table(session: Session, path: Path, *, user: str, reason: str | None,
                  action: str, dry_run: bool, keep_existing: bool,
                  confirm: bool | None) -> ImportReport:
    if not dry_run and action != "seed":  # seeding is part of `formdb init`
        require(session, user, Action.CHANGE_LIBRARY)
    table = read_table(path)
    rows, problems = read_ingredient_rows(table)
    unusual: list[tuple[int, Ingredient | None, IngredientIn, list[FieldChange]]] = []
    labels = header_labels(table)
    sources = _sources(session)
    # each row's names as (column, name, key), worked out once; a name in display form (as
    # _names_of gives them) has its casefold as its name_key, with no memo to fill
    row_names = [[(column, n, n.casefold()) for column, n in _names_of(r.given)] for r in rows]
    owners = _owners(session, (key for names in row_names for _c, _n, key in names))
    blank = empty_cells()  # the cells of a new ingredient (read, never changed)
    report = ImportReport(str(path), dry_run)
    first_use: dict[str, tuple[int, str]] = {}
    described: dict[int, int] = {}
    # (library ingredient or None, the row validated, its changes as cells, its fields before)
    plans: list[tuple[Ingredient | None, IngredientIn, list[FieldChange], Fields | None]] = []

    def problem(row: int, column: str | None, text: str) -> None:
        problems.append(Problem(table.file, text, row, labels.get(column, column)
                                if column else None))

    for row, names in zip(rows, row_names, strict=True):
        for column, n, key in names:
            earlier = first_use.setdefault(key, (row.row, column))
            if earlier[0] != row.row:
                problem(row.row, column, f"{n!r} is already used on row {earlier[0]} "
                        f"(column {labels.get(earlier[1], earlier[1])}); each name may appear once")
        target = owners.get(names[0][2]) if names and names[0][0] == NAME_COLUMN else None
        if target is not None:
            if target.id in described:
                problem(row.row, NAME_COLUMN, f"{names[0][1]!r} is the library's "
                        f"{target.inci_name!r}, which row {described[target.id]} already describes")
            described.setdefault(target.id, row.row)
        for column, n, key in names:
            owner = owners.get(key) if owners else None
            if owner is not None and owner is not target:
                kind = "its INCI name" if name_key(owner.inci_name) == name_key(n) \
                    else "a synonym"
                problem(row.row, column, f"{n!r} already belongs to another library "
                        f"ingredient, {owner.inci_name!r} (as {kind}); a name may belong to one "
                        "ingredient only")
        before = None if target is None else _as_input(queries.record_from_row(target, {}))
        base = blank if before is None else render_ingredient(before)
        if keep_existing and target is not None:
            row, left = missing_only(base, row, target.inci_name)
            report.left_alone += left
        # a new ingredient's cells are the file's own: laying them over blank cells would
        # change nothing validate_cells reads (it takes a missing cell as blank)
        cells = row.given if target is None else overlay(base, row)
        if target is not None:
            cells[NAME_COLUMN] = target.inci_name
            given = normalise_inci(row.given.get(NAME_COLUMN, ""))
            if name_key(given) != name_key(target.inci_name):
                report.notes.append(f"row {row.row}: {given!r} is a synonym of the library's "
                                    f"{target.inci_name!r}; the row updates that ingredient")
                if name_key(given) not in {name_key(s) for s in split_list(cells["synonyms"])}:
                    cells["synonyms"] = join_list([*split_list(cells["synonyms"]), given])
            if target.retired:
                report.notes.append(f"row {row.row}: {target.inci_name!r} is retired; its values "
                                    "are updated but it stays retired")
        item, cell_problems = validate_cells(cells, sources, row.source_columns)
        for located, text in cell_problems:
            problem(row.row, located, text)
        if item is not None:
            # the cell changes: the report's (and the plausibility check's) view of the row;
            # a new row needs them only for that check, so a plain import skips them
            changes = ([] if target is None and confirm is None
                       else diff_cells(base, render_ingredient(item)))
            plans.append((target, item, changes,
                           None if before is None else fields_of(before)))
            if before is not None and changes:
                report.notes += [f"row {row.row}: weaker evidence: {text}"
                                 for text in _weaker(before, item, sources)]
            if confirm is not None and changes:
                unusual.append((row.row, target, item, changes))
    if not rows:
        report.notes.append("the file has a header but no data rows; nothing to import")
    position = {label: i for i, label in enumerate(table.header)}
    problems.sort(key=lambda p: (p.row or 0, position.get(p.column or "", len(position))))
    raise_problems(problems, hint="fix the file and import it again; nothing was written")
    if unusual:
        report.notes += _unusual_rows(session, str(path), unusual, bool(confirm))

    for target, item, changes, _before in plans:
        if target is None:
            report.added.append(item.inci_name)
        elif changes:
            report.changed[target.inci_name] = changes
        else:
            report.unchanged.append(target.inci_name)
    if dry_run:
        return report
    now = datetime.now(UTC)
    _ensure_special_sources(session, set().union(*(item.sources.values()
                                                   for _t, item, _c, _b in plans)))
    why = reason or f"imported from {path.name}"
    via = path.name
    new_run: list[IngredientIn] = []
    for target, item, changes, fields_before in plans:
        if target is None:
            new_run.append(item)
            continue
        _insert_new(session, new_run, sources, action=action, user=user, reason=why, now=now,
                    via=via)
        new_run = []
        if changes:
            _write(session, target, item, fields_before, sources, action=action, user=user,
                   reason=why, now=now, via=via)
    _insert_new(session, new_run, sources, action=action, user=user, reason=why, now=now,
                via=via)
    session.flush()
    return report


def _unusual_rows(session: Session, file: str,
                  rows: Sequence[tuple[int, Ingredient | None, IngredientIn, list[FieldChange]]],
                  confirm: bool) -> list[str]:
    """Plausibility warnings of the rows that change something; refused unless confirmed."""
    from formdb.services.library.plausibility import ACCEPT_OPTION, NameIndex, warnings_for

    names = NameIndex(session)
    lines = []
    for number, target, item, changes in rows:
        found = warnings_for(session, item, own_id=target.id if target else None,
                             fields=[c.field for c in changes], names=names)
        lines += [f"{file}, row {number}, column {w.field}: unusual value: {w.text}"
                  for w in found]
    if lines and not confirm:
        raise TableProblems(lines, hint=f"if the values are right, import again with "
                                        f"{ACCEPT_OPTION}; nothing was written")
    return [f"accepted: {line}" for line in lines]


def _check_unusual(session: Session, item: IngredientIn, label: str, *, own_id: int | None,
                   fields: Sequence[str] | None, confirm: bool | None) -> tuple[str, ...]:
    """Refuse unusual values unless confirmed; the confirmed ones are returned for the record."""
    if confirm is None:
        return ()
    from formdb.services.library.plausibility import ACCEPT_OPTION, describe, warnings_for

    lines = describe(label, warnings_for(session, item, own_id=own_id, fields=fields))
    if lines and not confirm:
        raise TableProblems(lines, hint=f"if the values are right, repeat with {ACCEPT_OPTION}; "
                                        "nothing was written")
    return tuple(lines)


def _weaker(before: IngredientIn, after: IngredientIn, grades: Mapping[str, str],
            ) -> tuple[str, ...]:
    from formdb.services.library.plausibility import weaker_evidence

    return tuple(w.text for w in weaker_evidence(before, after, grades))


def _with_accepted(reason: str | None, accepted: Sequence[str]) -> str | None:
    if not accepted:
        return reason
    note = "unusual value(s) confirmed: " + "; ".join(a.split(": unusual value: ", 1)[-1]
                                                        for a in accepted)
    return f"{reason}; {note}" if reason else note


def _insert_new(session: Session, batch: Sequence[IngredientIn], evidence: Mapping[str, str],
                *, action: str, user: str, reason: str | None, now: datetime,
                via: str | None) -> None:
    """Add new ingredients in bulk: the rows ``_write`` would store one by one (same order, so
    the same ids), one statement per table instead of a flush per ingredient. A new ingredient
    has no version to conflict with, so nothing of ``_flush``'s conflict check is lost."""
    if not batch:
        return
    session.flush()  # earlier updates first, as the row order has them
    for start in range(0, len(batch), _BULK_CHUNK):  # bounded memory for very large tables
        _insert_chunk(session, batch[start:start + _BULK_CHUNK], evidence, action=action,
                      user=user, reason=reason, now=now, via=via)


def _insert_chunk(session: Session, batch: Sequence[IngredientIn], evidence: Mapping[str, str],
                  *, action: str, user: str, reason: str | None, now: datetime,
                  via: str | None) -> None:
    # one executemany of the driver per table (formdb.store.bulk); the ingredients get the ids
    # their id column would give them, so their child rows can be written without a round trip
    lock_for_write(session)  # what a statement through the session takes first
    table = cast(Table, Ingredient.__table__)
    ids = new_ids(session, table, len(batch))
    insert_rows(session, table, ("id", "inci_name", "retired", "version", "created_at",
                                 "updated_at", "updated_by"),
                [(ingredient_id, item.inci_name, False, 1, now, now, user)
                 for ingredient_id, item in zip(ids, batch, strict=True)])
    names: list[tuple[object, ...]] = []
    cas: list[tuple[object, ...]] = []
    roles: list[tuple[object, ...]] = []
    classes: list[tuple[object, ...]] = []
    values: list[tuple[object, ...]] = []
    log: list[dict[str, Any]] = []
    for ingredient_id, item in zip(ids, batch, strict=True):
        inci_name = item.inci_name
        # validated names are in display form: name_key is their casefold
        names.append((ingredient_id, inci_name, inci_name.casefold(), True))
        if item.synonyms:  # most rows have none of these lists: no empty sorts
            names += [(ingredient_id, s, k, False)
                      for k, s in {s.casefold(): s for s in item.synonyms}.items()]
        if item.cas_numbers:
            cas += [(ingredient_id, v) for v in sorted(set(item.cas_numbers))]
        if item.roles:
            roles += [(ingredient_id, v) for v in sorted(set(map(str, item.roles)))]
        if item.classes:
            classes += [(ingredient_id, v) for v in sorted(set(item.classes))]
        sources, notes = item.sources, item.notes
        # the fields that hold a value, in catalogue order (a comprehension: most are None),
        # for the property rows and the payload
        present = [(p, v) for p, v in vars(item.properties).items() if v is not None]
        for prop, value in present:
            num, text = ((value, None) if type(value) is float
                         else queries.property_columns(prop, value))
            source = sources[prop]
            values.append((ingredient_id, prop, num, text, source, evidence[source],
                           notes.get(prop)))
        log.append(log_values(
            at=now, user=user, entity=ENTITY, entity_key=inci_name, entity_version=1,
            action=action, payload=added_payload(item, via=via, present=present),
            reason=reason))
    for model, columns, rows in (
            (IngredientName, ("ingredient_id", "name", "name_key", "is_primary"), names),
            (IngredientCas, ("ingredient_id", "cas"), cas),
            (IngredientRole, ("ingredient_id", "role"), roles),
            (IngredientClass, ("ingredient_id", "class_name"), classes),
            (PropertyValue, ("ingredient_id", "property", "value_num", "value_text",
                             "source_key", "evidence", "note"), values)):
        insert_rows(session, cast(Table, model.__table__), columns, rows)
    append_rows(session, cast(Table, ChangeLogEntry.__table__), log)


def export_table(session: Session, path: Path, *, role: str | None = None,
                 include_retired: bool = False) -> int:
    """Write the library (or one role) as CSV or XLSX in the import columns; returns the rows."""
    columns = export_columns()
    numeric = set()
    if path.suffix.lower() == ".xlsx":  # a workbook holds numbers as numbers, not as text
        numeric = {c for c in PROPERTY_NAMES if property_kind(c)[0] in ("float", "int")}
    rows = [[_typed(cells[c]) if c in numeric else cells[c] for c in columns] for cells in
            (_cells(ing) for ing in _active(session, role, include_retired))]
    write_table(path, columns, rows, sheet="ingredients")
    return len(rows)


def _typed(text: str) -> float | int | str | None:
    """A number cell for a workbook; kept as text when 15 digits (a workbook's precision, and
    what openpyxl writes) would not give the same number back."""
    if not text:
        return None
    number = float(text)
    if float(f"{number:.15g}") != number:
        return text
    return int(number) if number.is_integer() and abs(number) < 1e15 else number


# --- add / edit / retire ------------------------------------------------------------------------

def _field(name: str) -> str:
    column = normalise_column(name)
    allowed = [*EDITABLE_FIELDS, *(f"{p}_source" for p in PROPERTY_NAMES),
               *(f"{p}_note" for p in PROPERTY_NAMES)]
    if column not in allowed:
        raise InvalidData(f"--set: {name!r} is not a field of an ingredient"
                          f"{did_you_mean(column, allowed) or '.'}",
                          hint=f"fields are {', '.join(EDITABLE_FIELDS)} (and P_source, P_note)")
    return column


VALUE_SOURCE = "@"  # --set hlb=14.9@supplier-x-tds-2025: the value and its own source


def _lay(cells: Cells, assignments: Sequence[tuple[str, str]], source: str | None) -> Cells:
    """``--set field=value`` laid over cells. A property value takes its own source
    (``value@KEY``), else ``--source``; its note stays unless the command sets it."""
    out = dict(cells)
    fields = []
    for f, v in assignments:
        column, value, own = _field(f), v.strip(), None
        if column in PROPERTY_NAMES and VALUE_SOURCE in value:
            value, _sep, own = (part.strip() for part in value.rpartition(VALUE_SOURCE))
            if not own or not value:
                raise InvalidData(f"--set {f}={v}: write the value, then @ and its source key "
                                  "(e.g. hlb=14.9@supplier-x-tds-2025).",
                                  hint="`formdb source list` shows the source keys")
        fields.append((column, value, own))
    explicit = {f for f, _v, _o in fields}
    for column, value, own in fields:
        out[column] = value
        if column not in PROPERTY_NAMES:
            continue
        if not value:
            out[f"{column}_source"] = out[f"{column}_note"] = ""
            continue
        if own or source:
            out[f"{column}_source"] = own or source or ""
        elif f"{column}_source" not in explicit:
            raise InvalidData(f"--set {column}={value}: a new value needs its source.",
                              hint=f"write {column}={value}@KEY, or add --source KEY (a key of "
                                   "`formdb source list`, or rule-of-thumb / from-memory)")
    return out


def _validated(cells: Cells, sources: Mapping[str, str], label: str) -> IngredientIn:
    item, problems = validate_cells(cells, sources)
    if item is None:
        about_source = any(c and c.endswith("_source") and "unknown source" in t
                           for c, t in problems)
        hint = ("the value is fine: add the source first with `formdb source add KEY --kind ... "
                "--citation ...`, or cite a key of `formdb source list`" if about_source
                else "correct the value and try again")
        raise TableProblems([f"{label}, field {c}: {t}" if c else f"{label}: {t}"
                             for c, t in problems], hint=hint)
    return item


def _check_names_free(session: Session, item: IngredientIn, own: Ingredient | None) -> None:
    owners = _owners(session, [name_key(n) for n in (item.inci_name, *item.synonyms)])
    for n in (item.inci_name, *item.synonyms):
        owner = owners.get(name_key(n))
        if owner is not None and owner is not own:
            raise Conflict(f"{n!r} already belongs to the library's {owner.inci_name!r}.",
                           hint="a name may belong to one ingredient only; "
                                f"use `formdb ingredient edit {owner.inci_name!r}` to change it")


_ITEM_OPTIONS = {"synonyms": "--synonym", "cas": "--cas", "roles": "--role"}


def _one_item_each(column: str, values: Sequence[str]) -> None:
    """Each repeatable --synonym/--cas/--role gives one item of a ';'-separated list column, so
    a ';' inside one would split it into several (and a trailing one vanish): refused rather than
    stored other than as typed."""
    for value in values:
        if LIST_SEPARATOR in value:
            option = _ITEM_OPTIONS[column]
            raise InvalidData(f"{option} {value!r}: holds {LIST_SEPARATOR!r}, the separator of the "
                              f"{column} list, so it cannot be stored as one item.",
                              hint=f"give each item with its own {option}")


def add_ingredient(session: Session, name: str, assignments: Sequence[tuple[str, str]] = (), *,
                   user: str, source: str | None = None, synonyms: Sequence[str] = (),
                   cas: Sequence[str] = (), roles: Sequence[str] = (),
                   reason: str | None = None, confirm: bool | None = None) -> EditReport:
    """Add a new ingredient; its name and synonyms must be new to the library."""
    require(session, user, Action.CHANGE_LIBRARY)
    cells = empty_cells()
    cells[NAME_COLUMN] = name
    for column, values in (("synonyms", synonyms), ("cas", cas), ("roles", roles)):
        _one_item_each(column, values)
        if values:
            cells[column] = join_list([*split_list(cells[column]), *values])
    cells = _lay(cells, assignments, source)
    sources = _sources(session)
    item = _validated(cells, sources, f"add {normalise_inci(name)!r}")
    _check_names_free(session, item, None)
    changes = diff_cells(empty_cells(), render_ingredient(item))
    accepted = _check_unusual(session, item, f"add {item.inci_name!r}", own_id=None,
                              fields=None, confirm=confirm)
    _ensure_special_sources(session, item.sources.values())
    ing = _write(session, None, item, None, sources, action="add", user=user,
                 reason=_with_accepted(reason, accepted), now=datetime.now(UTC))
    return EditReport(ing.inci_name, ing.version, changes, accepted)


def _check_version(session: Session, ing: Ingredient, expect_version: int | None) -> None:
    if expect_version is None or expect_version == ing.version:
        return
    since = session.scalars(
        select(ChangeLogEntry).where(ChangeLogEntry.entity == ENTITY,
                                     ChangeLogEntry.entity_key == ing.inci_name,
                                     ChangeLogEntry.entity_version > expect_version)
        .order_by(ChangeLogEntry.at.desc(), ChangeLogEntry.id.desc())).all()
    if expect_version > ing.version:
        raise Conflict(f"{ing.inci_name!r} is at version {ing.version}; version {expect_version} "
                       "does not exist yet.", hint="show it again and repeat your change")
    who = sorted({e.user for e in since}) or [ing.updated_by]
    last = since[0].at if since else ing.updated_at
    raise Conflict(f"{ing.inci_name!r} was changed since version {expect_version} by "
                   f"{', '.join(who)} (last at {_when(last)}); it is now version {ing.version}.",
                   hint=f"run `formdb ingredient show {ing.inci_name!r}` and repeat your edit "
                        f"with --expect-version {ing.version}")


def edit_ingredient(session: Session, name: str, assignments: Sequence[tuple[str, str]], *,
                    user: str, reason: str | None = None, source: str | None = None,
                    expect_version: int | None = None, action: str = "edit",
                    confirm: bool | None = None,
                    grades: Mapping[str, tuple[str, str]] | None = None) -> EditReport:
    """Change fields of one ingredient; a published value changes only with a reason.
    ``grades`` (from verify): property -> (old, new) evidence grade, logged with the change."""
    require(session, user, Action.CHANGE_LIBRARY)
    if not assignments:
        raise InvalidData("nothing to change.", hint="give at least one --set field=value")
    ing = _get(session, name)
    _check_version(session, ing, expect_version)
    before = _as_input(queries.record_from_row(ing, {}))
    base = render_ingredient(before)
    sources = _sources(session)
    item = _validated(_lay(base, assignments, source), sources, f"edit {ing.inci_name!r}")
    _check_names_free(session, item, ing)
    changes = diff_cells(base, render_ingredient(item))
    if not changes:
        return EditReport(ing.inci_name, ing.version, [])
    if not (reason and reason.strip()):
        for change in changes:
            prop = change.field.removesuffix("_source").removesuffix("_note")
            old_source = base.get(f"{prop}_source", "")
            if old_source and sources.get(old_source) == Evidence.PUBLISHED.value:
                raise InvalidData(
                    f"{prop} of {ing.inci_name!r} is a published value (source {old_source}); "
                    "changing it needs a reason.", hint='add --reason "why the value changes"')
    accepted = _check_unusual(session, item, f"edit {ing.inci_name!r}", own_id=ing.id,
                              fields=[c.field for c in changes], confirm=confirm)
    weaker = _weaker(before, item, sources)
    _ensure_special_sources(session, item.sources.values())
    _write(session, ing, item, fields_of(before), sources, action=action, user=user,
           reason=_with_accepted(reason, accepted), now=datetime.now(UTC), grades=grades)
    if {c.field for c in changes} & {"hlb", "solubility"}:
        from formdb.services.library.mixtures import refresh_blends_of

        refresh_blends_of(session, ing.id, user=user)  # blends computed from this one follow
    return EditReport(ing.inci_name, ing.version, changes, accepted, weaker)


def verify_ingredient(session: Session, name: str, properties: Sequence[str], source: str, *,
                      user: str, reason: str | None = None, note: str | None = None,
                      expect_version: int | None = None) -> EditReport:
    """Attach a source to values already in the library, without retyping them: each value
    now cites ``source`` and takes its grade; the change log records it (action "verify").
    Only a source that was read can verify: not one graded from memory, a rule of thumb or a
    secondary copy."""
    require(session, user, Action.CHANGE_LIBRARY)
    if not properties:
        raise InvalidData("name the values to verify.", hint="e.g. --value hlb --value density")
    grade = _sources(session).get(source)
    if grade is None:
        raise NotFound(f"no source {quoted(source)} in the library"
                       f"{did_you_mean(source, _sources(session)) or '.'}",
                       hint="add it first with `formdb source add KEY --kind ... --citation ...`")
    if Evidence(grade) in UNVERIFIED_EVIDENCE:
        raise InvalidData(f"source {source!r} is graded {grade!r}, which verifies nothing.",
                          hint="cite the document you read (a regulation, publication, "
                               "handbook, supplier document, measurement or definition)")
    ing = _get(session, name)
    record = _record(session, ing)
    assignments = []
    for given in properties:
        prop = _field(given)
        if prop not in PROPERTY_NAMES:
            raise InvalidData(f"--value {given!r} is not a property of an ingredient.",
                              hint=f"properties are {', '.join(PROPERTY_NAMES)}")
        if getattr(record.p, prop) is None:
            raise InvalidData(f"{ing.inci_name!r} has no {prop} value to verify.",
                              hint=f"give it with `formdb ingredient edit --set {prop}=VALUE@KEY`")
        assignments.append((f"{prop}_source", source))
        if note is not None:
            assignments.append((f"{prop}_note", note))
    moved = {prop: (record.provenance[prop].evidence.value, grade)
             for prop in dict.fromkeys(_field(p) for p in properties)
             if record.provenance[prop].evidence.value != grade}
    report = edit_ingredient(session, name, assignments, user=user, reason=reason,
                             expect_version=expect_version, action="verify", grades=moved)
    grades = [FieldChange(f"{prop}_evidence", old, new) for prop, (old, new) in moved.items()]
    return EditReport(report.inci_name, report.version, [*report.changes, *grades])


def _set_retired(session: Session, name: str, retired: bool, *, user: str,
                 reason: str) -> EditReport:
    require(session, user, Action.CHANGE_LIBRARY)
    if not reason.strip():
        raise InvalidData("a reason is required.", hint='add --reason "why"')
    ing = _get(session, name)
    if ing.retired == retired:
        return EditReport(ing.inci_name, ing.version, [])
    change = FieldChange("retired", "yes" if ing.retired else "no", "yes" if retired else "no")
    now = datetime.now(UTC)
    ing.retired, ing.updated_at, ing.updated_by = retired, now, user
    _flush(session, [ing.inci_name])
    _log(session, ing, [{"field": "retired", "old": not retired, "new": retired}],
         action="retire" if retired else "restore", user=user, reason=reason, at=now)
    return EditReport(ing.inci_name, ing.version, [change])


def retire_ingredient(session: Session, name: str, *, user: str, reason: str) -> EditReport:
    """Take an ingredient out of use; it stays in the library (and its history) for old formulas."""
    return _set_retired(session, name, True, user=user, reason=reason)


def restore_ingredient(session: Session, name: str, *, user: str, reason: str) -> EditReport:
    return _set_retired(session, name, False, user=user, reason=reason)


__all__ = [
    "EditReport", "FieldChange", "HistoryEntry", "ImportReport", "IngredientDetail",
    "add_ingredient", "diff_cells", "edit_ingredient", "export_table", "import_table",
    "ingredient_history", "list_ingredients", "restore_ingredient", "retire_ingredient",
    "show_ingredient", "verify_ingredient",
]
