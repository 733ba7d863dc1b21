"""``formdb lists import``: the Commission's annex exports into the library as dated snapshots.

All or nothing: every file is read and parsed, every refusal found, before anything is written.
A newer export replaces the snapshot in force for its annex and says what changed, entry by
entry (old -> new per cell), then which stored formulas and signed review runs the changed
entries touch. Every substance an entry names gets an ingredient record (marked as coming from
the lists, no physical data) so a formula can name it; an entry with no name short enough to be
one (a class, a 200+ character description) gets one named by its reference ("EU Annex II/293").

Reference numbers (``parse.entry_keys``): the Commission's exports repeat some numbers for other
substances (III/196, II/38) and for the same substance under a later act (III/16, III/253); each
row stays its own entry. The same number for the same substance (a shared name or CAS number)
under the same act is one entry given twice, a concatenated or damaged file: refused.
"""

from __future__ import annotations

import tomllib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, cast

from sqlalchemy import Table, insert, select, update
from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.schemas.admin import Action
from formdb.schemas.cas import cas_is_valid
from formdb.schemas.ingredient import name_key
from formdb.schemas.lists import AnnexImport, EntryChange, ListEntry, ListsImport, SnapshotInfo
from formdb.services.admin.access import require
from formdb.services.lists.annex_file import HINT, AnnexFile, read_annex_file
from formdb.services.lists.parse import (
    chemical_names,
    clean,
    entry_keys,
    is_mixture,
    parse_entry,
)
from formdb.services.lists.reading import with_lists
from formdb.store import queries
from formdb.store.change_log import log_values
from formdb.store.library import Library
from formdb.store.lists import (
    cas_match,
    entries_of,
    name_match,
    record_match_keys,
    snapshot_in_force,
    snapshot_info,
)
from formdb.store.models import (
    ChangeLogEntry,
    Ingredient,
    IngredientCas,
    IngredientName,
    ListEntryMatch,
    ListEntryRow,
    ListIngredient,
    ListSnapshot,
    ReviewRun,
    ReviewSignature,
    StoredFormula,
)
from formdb.store.sealing import append_rows

JURISDICTION = "EU"
_CHUNK = 500
_SKIP_CELLS = ("Update Date",)  # a date stamp alone is not a change of the entry's content


@dataclass
class ParsedExport:
    file: AnnexFile
    entries: list[ListEntry]


def read_export(path: Path) -> ParsedExport:
    """Read and structure one export; problems name the file, the line and the field."""
    file = read_annex_file(path)
    try:
        keys = entry_keys(file.annex, file.rows)
    except InvalidData as exc:
        raise InvalidData(f"{path}, {exc.message}", hint=exc.hint) from None
    entries = [parse_entry(file.annex, row, key)
               for (_line, row), key in zip(file.rows, keys, strict=True)]
    return ParsedExport(file, entries)


def entry_match_keys(entry: ListEntry) -> set[str]:
    """The keys an entry is found by: each INCI name, the chemical name's plain forms, each CAS."""
    keys = {name_match(n) for n in entry.record_names}
    keys |= {name_match(n) for n in chemical_names(entry.chemical_name)}
    if not (entry.inci_names and all(is_mixture(n) for n in entry.inci_names)):
        # a mixture's entry (V/39 "... AND ...") lists its components' CAS numbers too: those
        # would match a component used alone, so a mixture is found by its name only
        keys |= {cas_match(c) for c in entry.cas_numbers}
    return {k for k in keys if len(k) <= 250 and k not in ("name:", "cas:")}


def _snapshot(file: AnnexFile, entries: int) -> SnapshotInfo:
    return SnapshotInfo(jurisdiction=JURISDICTION, annex=file.annex, file_name=file.name,
                        file_created=file.file_created, last_update=file.last_update,
                        file_hash=file.file_hash, entries=entries)


def _diff(old: dict[str, ListEntry], new: Sequence[ListEntry], annex: str) -> list[EntryChange]:
    """Entries added, removed or changed between two snapshots, each change old -> new."""
    changes = []
    fresh = {e.key: e for e in new}
    for key, entry in fresh.items():
        before = old.get(key)
        if before is None:
            changes.append(EntryChange(annex=annex, key=key, kind="added", title=entry.title))
            continue
        details = tuple(
            f"{cell}: {clean(before.cells.get(cell, ''))!r} -> {clean(value)!r}"
            for cell, value in entry.cells.items()
            if cell not in _SKIP_CELLS and clean(before.cells.get(cell, "")) != clean(value))
        if details:
            changes.append(EntryChange(annex=annex, key=key, kind="changed", title=entry.title,
                                       details=details))
    changes.extend(EntryChange(annex=annex, key=key, kind="removed", title=entry.title)
                   for key, entry in old.items() if key not in fresh)
    return changes


def _coverage(entries: Iterable[ListEntry]) -> tuple[int, int, list[str]]:
    parts = structured = 0
    rest = []
    for entry in entries:
        for part in entry.parts:
            parts += 1
            if part.structured:
                structured += 1
            else:
                rest.append(f"{entry.annex}/{entry.key} {part.name}: {'; '.join(part.unparsed)}")
    return parts, structured, rest


def import_lists(library: Library, paths: Sequence[Path], *, user: str, dry_run: bool = False,
                 allow_older: bool = False) -> ListsImport:
    """Import every export in ``paths`` in one transaction (nothing when any is refused)."""
    exports: list[ParsedExport] = []
    problems: list[str] = []
    for path in paths:
        try:
            exports.append(read_export(path))
        except InvalidData as exc:
            problems.extend(exc.problems)
    if problems:
        raise InvalidData.of(problems, hint=f"{HINT}; nothing was imported")
    seen: dict[str, Path] = {}
    for export in exports:
        other = seen.setdefault(export.file.annex, export.file.path)
        if other != export.file.path:
            raise InvalidData(f"{export.file.path}: a second export of Annex "
                              f"{export.file.annex} (the first is {other}); import one per annex",
                              hint="nothing was imported")
    with library.write() as session:
        if not dry_run:
            require(session, user, Action.CHANGE_LIBRARY)
        plans = [_plan(session, e, allow_older) for e in exports]
        refusals = [p for plan in plans for p in plan.refusals]
        if refusals:
            raise InvalidData.of(refusals, hint="import the newer export, or pass --allow-older "
                                 "to put an older one in force on purpose; nothing was imported")
        created = _new_ingredients(session, [p for p in plans if not p.unchanged])
        touched, stale, texts = _impact(session, [c for p in plans for c in p.changes
                                                  if p.current], plans)
        before = _findings(session, texts)
        results = [plan.report(created.get(plan.export.file.annex, [])) for plan in plans]
        # a dry run writes inside a savepoint and rolls it back: it reports exactly what the
        # import would do, re-checks included, and leaves the library as it was
        savepoint = session.begin_nested() if dry_run else None
        now = datetime.now(UTC)
        for plan in plans:
            if not plan.unchanged:
                _write(session, plan, user, now)
        _write_ingredients(session, created, user, now)
        session.flush()
        moved = _compare(before, _findings(session, texts))
        if savepoint is not None:
            savepoint.rollback()
        return ListsImport(annexes=tuple(results), dry_run=dry_run,
                           touched_formulas=tuple(touched), stale_runs=tuple(stale),
                           formula_changes=tuple(moved))


def _findings(session: Session, texts: dict[str, str]) -> dict[str, list[tuple[str, str, str]]]:
    """(rule, severity, message) of every finding of each stored formula, default profile."""
    from formdb.rules.engine import check_resolved
    from formdb.rules.profiles import load_profile
    from formdb.services.checking.flow import input_from_text, resolve_all

    if not texts:
        return {}
    profile = load_profile("default")
    reference = queries.load_reference_data(session)
    out = {}
    for name, text in texts.items():
        try:
            resolved = resolve_all(session, [input_from_text(text, f"stored:{name}")])[0]
        except InvalidData:
            continue  # a stored formula that no longer resolves: review status says so
        reference = with_lists(session, reference, [resolved])
        result = check_resolved(resolved, reference, profile)
        out[name] = [(f.rule, f.severity.value, f.message) for f in result.findings]
    return out


def _compare(before: dict[str, list[tuple[str, str, str]]],
             after: dict[str, list[tuple[str, str, str]]]) -> list[str]:
    """Per stored formula whose findings moved: errors before -> after, findings new and gone."""
    out = []
    for name in sorted(set(before) | set(after)):
        old, new = before.get(name, []), after.get(name, [])
        added = [f for f in new if f not in old]
        gone = [f for f in old if f not in new]
        if not added and not gone:
            continue
        errors = (sum(f[1] == "error" for f in old), sum(f[1] == "error" for f in new))
        said = [f"{name}: errors {errors[0]} -> {errors[1]}"]
        said += [f"  new: {r} {sev}: {msg}" for r, sev, msg in added]
        said += [f"  gone: {r} {sev}: {msg}" for r, sev, msg in gone]
        out.append("\n".join(said))
    return out


class _Plan:
    """What importing one export will do, worked out before anything is written."""

    def __init__(self, export: ParsedExport, current: ListSnapshot | None,
                 old: dict[str, ListEntry], refusals: list[str]) -> None:
        self.export = export
        self.current = current
        self.refusals = refusals
        # the same file, parsed as before: nothing to do (a file parsed differently by a newer
        # formdb is written again, so its entries carry what the parser now understands)
        same_file = current is not None and current.file_hash == export.file.file_hash
        fresh = {e.key: e for e in export.entries}
        self.reread = sorted(k for k in old.keys() | fresh.keys() if old.get(k) != fresh.get(k)) \
            if same_file else []
        self.unchanged = same_file and not self.reread
        self.changes = [] if self.unchanged else _diff(old, export.entries, export.file.annex)
        # an entry read differently changes what the checks see as much as a new export would:
        # the stored formulas and signed runs that use it are re-checked and named the same way
        self.changes += [EntryChange(
            annex=export.file.annex, key=key, kind="changed",
            title=(fresh.get(key) or old[key]).title,
            details=("the same cells, read differently by this version of formdb",))
            for key in self.reread]

    def report(self, created: list[tuple[str, ListEntry]]) -> AnnexImport:
        parts, structured, rest = _coverage(self.export.entries)
        return AnnexImport(
            snapshot=_snapshot(self.export.file, len(self.export.entries)),
            replaces=None if self.current is None else snapshot_info(self.current),
            parts=parts, structured_parts=structured, unparsed=tuple(rest),
            changes=tuple(self.changes) if self.current is not None else (),
            ingredients_created=len(created), unchanged=self.unchanged,
            reread=tuple(self.reread))


def _plan(session: Session, export: ParsedExport, allow_older: bool) -> _Plan:
    file = export.file
    current = snapshot_in_force(session, JURISDICTION, file.annex)
    refusals = []
    old: dict[str, ListEntry] = {}
    if current is not None:
        older = (file.last_update, file.file_created) < (current.last_update,
                                                         current.file_created)
        if older and not allow_older and current.file_hash != file.file_hash:
            refusals.append(
                f"{file.path}: Annex {file.annex} export of {file.last_update:%d/%m/%Y} is older "
                f"than the one in force ({current.file_name}, last update "
                f"{current.last_update:%d/%m/%Y}); refused")
        old = entries_of(session, current.id)
    return _Plan(export, current, old, refusals)


# ----- writing ------------------------------------------------------------------------------

def _write(session: Session, plan: _Plan, user: str, now: datetime) -> None:
    file = plan.export.file
    if plan.current is not None:
        session.execute(update(ListSnapshot).where(ListSnapshot.id == plan.current.id)
                        .values(in_force=False))
    snapshot = ListSnapshot(
        jurisdiction=JURISDICTION, annex=file.annex, file_name=file.name,
        file_created=file.file_created, last_update=file.last_update,
        file_hash=file.file_hash, entry_count=len(plan.export.entries), imported_at=now,
        imported_by=user, in_force=True)
    session.add(snapshot)
    session.flush()
    entries = plan.export.entries
    ids: list[int] = []
    table = cast(Table, ListEntryRow.__table__)
    for start in range(0, len(entries), _CHUNK):
        chunk = entries[start:start + _CHUNK]
        ids.extend(session.scalars(
            insert(table).returning(table.c.id, sort_by_parameter_order=True),
            [{"snapshot_id": snapshot.id, "key": e.key, "ref": e.ref,
              "names": "; ".join(e.inci_names), "body": e.model_dump_json()} for e in chunk]))
    matches = [{"entry_id": entry_id, "match_key": key}
               for entry_id, entry in zip(ids, entries, strict=True)
               for key in sorted(entry_match_keys(entry))]
    for start in range(0, len(matches), 5000):
        session.execute(insert(ListEntryMatch.__table__), matches[start:start + 5000])  # type: ignore[arg-type]
    label = f"{JURISDICTION} Annex {file.annex}"
    old = plan.current
    moved = [("file", None if old is None else old.file_name, file.name),
                ("last_update", None if old is None else old.last_update, file.last_update),
                ("file_hash", None if old is None else old.file_hash, file.file_hash)]
    log: list[dict[str, Any]] = [log_values(
        at=now, user=user, entity="list", entity_key=label, entity_version=None,
        action="import", reason=f"list import of {file.name}", via=file.name,
        changes=[*({"field": f, "old": o, "new": n} for f, o, n in moved if o != n),
                 {"field": "entries", "old": None, "new": len(entries)}])]
    log.extend(log_values(
        at=now, user=user, entity="list entry", entity_key=f"{label}/{change.key}",
        entity_version=None, action=change.kind, reason=f"list import of {file.name}",
        via=file.name, changes=[{"field": "details", "old": None, "new": list(change.details)}])
        for change in (plan.changes if old is not None else ()))
    append_rows(session, cast(Table, ChangeLogEntry.__table__), log)


def _new_ingredients(session: Session, plans: Sequence[_Plan]
                     ) -> dict[str, list[tuple[str, ListEntry]]]:
    """annex -> (name, entry) for every name the exports give that the library does not know."""
    wanted: dict[str, tuple[str, ListEntry]] = {}
    for plan in plans:
        for entry in plan.export.entries:
            for name in entry.record_names:
                wanted.setdefault(name_key(name), (name, entry))
    known: set[str] = set()
    keys = sorted(wanted)
    for start in range(0, len(keys), _CHUNK):
        known.update(session.scalars(select(IngredientName.name_key).where(
            IngredientName.name_key.in_(keys[start:start + _CHUNK]))))
    out: dict[str, list[tuple[str, ListEntry]]] = {}
    for key in keys:
        if key in known or not key:
            continue
        name, entry = wanted[key]
        out.setdefault(entry.annex, []).append((name, entry))
    return out


def _cas_for(name: str, entry: ListEntry) -> list[str]:
    """The CAS numbers of one name of an entry: paired by position when the entry gives one per
    name, all of them when it names one substance, none when it cannot tell."""
    names, numbers = entry.record_names, entry.cas_numbers
    if len(names) == 1:
        return list(numbers)
    if len(names) == len(numbers):
        position = [name_key(n) for n in names].index(name_key(name))
        return [numbers[position]]
    return []


def _write_ingredients(session: Session, created: dict[str, list[tuple[str, ListEntry]]],
                       user: str, now: datetime) -> None:
    batch = [item for annex in sorted(created) for item in created[annex]]
    table = cast(Table, Ingredient.__table__)
    for start in range(0, len(batch), _CHUNK):
        chunk = batch[start:start + _CHUNK]
        ids = list(session.scalars(
            insert(table).returning(table.c.id, sort_by_parameter_order=True),
            [{"inci_name": name, "retired": False, "version": 1, "created_at": now,
              "updated_at": now, "updated_by": user} for name, _entry in chunk]))
        names: list[dict[str, Any]] = []
        cas: list[dict[str, Any]] = []
        origin: list[dict[str, Any]] = []
        log: list[dict[str, Any]] = []
        for ingredient_id, (name, entry) in zip(ids, chunk, strict=True):
            names.append({"ingredient_id": ingredient_id, "name": name,
                          "name_key": name_key(name), "is_primary": True})
            numbers = [c for c in _cas_for(name, entry) if cas_is_valid(c)]
            cas.extend({"ingredient_id": ingredient_id, "cas": c} for c in sorted(set(numbers)))
            origin.append({"ingredient_id": ingredient_id, "jurisdiction": entry.jurisdiction,
                           "annex": entry.annex, "entry_key": entry.key, "created_at": now})
            log.append(log_values(
                at=now, user=user, entity="ingredient", entity_key=name, entity_version=1,
                action="add", reason=f"named by {entry.label} (list import; no physical data)",
                changes=[{"field": "inci_name", "old": None, "new": name},
                         *([{"field": "cas", "old": [], "new": sorted(set(numbers))}]
                           if numbers else [])]))
        session.execute(insert(IngredientName.__table__), names)  # type: ignore[arg-type]
        if cas:
            session.execute(insert(IngredientCas.__table__), cas)  # type: ignore[arg-type]
        session.execute(insert(ListIngredient.__table__), origin)  # type: ignore[arg-type]
        append_rows(session, cast(Table, ChangeLogEntry.__table__), log)


# ----- impact -------------------------------------------------------------------------------

def _formula_names(text: str) -> set[str]:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        return set()
    lines = data.get("ingredients", [])
    return {str(line.get("inci", "")) for line in lines if isinstance(line, dict)} - {""}


def _impact(session: Session, changes: Sequence[EntryChange], plans: Sequence[_Plan]
            ) -> tuple[list[str], list[str], dict[str, str]]:
    """(stored formulas, signed review runs) that name a substance of a changed entry, and the
    text of each such stored formula (to re-check it before and after)."""
    if not changes:
        return [], [], {}
    by_key: dict[tuple[str, str], set[str]] = {}
    for plan in plans:
        old = entries_of(session, plan.current.id) if plan.current is not None else {}
        fresh = {e.key: e for e in plan.export.entries}
        for entry in (*old.values(), *fresh.values()):
            by_key.setdefault((entry.annex, entry.key), set()).update(entry_match_keys(entry))
    hit: dict[str, list[str]] = {}
    for change in changes:
        for key in by_key.get((change.annex, change.key), ()):
            hit.setdefault(key, []).append(f"{JURISDICTION} Annex {change.annex}/{change.key}")
    formulas = list(session.execute(select(StoredFormula.name, StoredFormula.content)
                                    .order_by(StoredFormula.name_key)))
    signed = set(session.scalars(select(ReviewSignature.run_id)))
    superseded = set(session.scalars(select(ReviewRun.supersedes_run_id).where(
        ReviewRun.supersedes_run_id.is_not(None))))
    runs = list(session.execute(select(ReviewRun.id, ReviewRun.run_key, ReviewRun.formula_name,
                                       ReviewRun.formula_text).order_by(ReviewRun.id)))
    runs = [r for r in runs if r.id in signed and r.id not in superseded]
    names = {n for _name, text in formulas for n in _formula_names(text)} | \
        {n for r in runs for n in _formula_names(r.formula_text)}
    records = queries.find_ingredients(session, names)
    # a mixture line touches the entries of its declared constituents too (the check matches them)
    blends = queries.constituents(session)

    def entries_named(text: str) -> list[str]:
        found: dict[str, None] = {}
        for n in _formula_names(text):
            record = records.get(name_key(n))
            keys = record_match_keys(record) if record else {name_match(n)}
            todo = list(blends.get(name_key(record.inci_name if record else n), ()))
            seen: set[str] = set()
            while todo:  # a constituent that is a declared mixture itself: read in turn
                part = todo.pop()
                keys = keys | record_match_keys(part.record)
                inner = name_key(part.record.inci_name)
                if inner not in seen:
                    seen.add(inner)
                    todo.extend(blends.get(inner, ()))
            for key in keys:
                found.update(dict.fromkeys(hit.get(key, ())))
        return list(found)

    touched = [f"{name}: {', '.join(e)}" for name, text in formulas if (e := entries_named(text))]
    stale = [f"run {r.run_key} ({r.formula_name}): {', '.join(e)}" for r in runs
             if (e := entries_named(r.formula_text))]
    texts = {name: text for name, text in formulas if entries_named(text)}
    return touched, stale, texts
