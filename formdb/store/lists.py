"""Reads of the regulatory list snapshots: which exports are in force, and the entries that
match given ingredients (through the indexed ``list_entry_matches``, never a scan of entries).
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.lists import ListEntry, SnapshotInfo
from formdb.store.models import ListEntryMatch, ListEntryRow, ListIngredient, ListSnapshot

if TYPE_CHECKING:  # only annotations here: ``ingredient show`` reads lists without formulas
    from formdb.schemas.formula import ResolvedFormula
    from formdb.schemas.reference import ReferenceData

_CHUNK = 500


def name_match(name: str) -> str:
    return f"name:{name_key(name)}"


def cas_match(cas: str) -> str:
    return f"cas:{cas.strip()}"


def record_match_keys(record: IngredientRecord) -> set[str]:
    """The keys a library ingredient matches by: its INCI name, its synonyms, its CAS numbers."""
    return {name_match(n) for n in (record.inci_name, *record.synonyms)} | \
        {cas_match(c) for c in record.cas_numbers}


def snapshot_info(row: ListSnapshot) -> SnapshotInfo:
    return SnapshotInfo(
        id=row.id, jurisdiction=row.jurisdiction, annex=row.annex, file_name=row.file_name,
        file_created=row.file_created, last_update=row.last_update, file_hash=row.file_hash,
        entries=row.entry_count, imported_at=row.imported_at.isoformat(),
        imported_by=row.imported_by, in_force=row.in_force)


def snapshots_in_force(session: Session) -> tuple[SnapshotInfo, ...]:
    rows = session.scalars(select(ListSnapshot).where(ListSnapshot.in_force.is_(True))
                           .order_by(ListSnapshot.jurisdiction, ListSnapshot.annex))
    return tuple(snapshot_info(r) for r in rows)


def all_snapshots(session: Session) -> tuple[SnapshotInfo, ...]:
    rows = session.scalars(select(ListSnapshot).order_by(ListSnapshot.id))
    return tuple(snapshot_info(r) for r in rows)


def snapshot_in_force(session: Session, jurisdiction: str, annex: str) -> ListSnapshot | None:
    return session.scalars(select(ListSnapshot).where(
        ListSnapshot.jurisdiction == jurisdiction, ListSnapshot.annex == annex,
        ListSnapshot.in_force.is_(True)).order_by(ListSnapshot.id.desc())).first()


def entries_of(session: Session, snapshot_id: int) -> dict[str, ListEntry]:
    """Every entry of one snapshot by key."""
    return {row.key: ListEntry.model_validate_json(row.body) for row in session.scalars(
        select(ListEntryRow).where(ListEntryRow.snapshot_id == snapshot_id))}


def entries_matching(session: Session, keys: Iterable[str]) -> dict[str, list[ListEntry]]:
    """match key -> entries in force found by it (a few queries per call, whatever the count)."""
    wanted = sorted(set(keys))
    hits: dict[int, list[str]] = {}
    for start in range(0, len(wanted), _CHUNK):
        # the match keys alone, by their index: joined to the snapshots in force, SQLite plans a
        # long IN list as a scan of every entry in force (0.6 s a chunk at 2,400 entries)
        for entry_id, key in session.execute(
                select(ListEntryMatch.entry_id, ListEntryMatch.match_key)
                .where(ListEntryMatch.match_key.in_(wanted[start:start + _CHUNK]))):
            hits.setdefault(entry_id, []).append(key)
    bodies: dict[int, ListEntry] = {}
    ids = sorted(hits)
    for start in range(0, len(ids), _CHUNK):
        # only the entries of snapshots in force: a superseded snapshot keeps its match keys
        for entry_id, body in session.execute(
                select(ListEntryRow.id, ListEntryRow.body)
                .join(ListSnapshot, ListSnapshot.id == ListEntryRow.snapshot_id)
                .where(ListEntryRow.id.in_(ids[start:start + _CHUNK]),
                       ListSnapshot.in_force.is_(True))):
            bodies[entry_id] = ListEntry.model_validate_json(body)
    out: dict[str, list[ListEntry]] = {}
    for entry_id in ids:
        if entry_id in bodies:
            for key in hits[entry_id]:
                out.setdefault(key, []).append(bodies[entry_id])
    return out


def entries_for_records(session: Session, records: Iterable[IngredientRecord]
                        ) -> dict[str, tuple[ListEntry, ...]]:
    """name_key(INCI name) -> the entries in force that match the ingredient, in annex order."""
    wanted = {name_key(r.inci_name): (r, record_match_keys(r)) for r in records}
    found = entries_matching(session, (k for _r, keys in wanted.values() for k in keys))
    out: dict[str, tuple[ListEntry, ...]] = {}
    for key, (record, keys) in wanted.items():
        by_name: dict[tuple[str, str, str], ListEntry] = {}
        by_cas: dict[tuple[str, str, str], ListEntry] = {}
        for match in keys:
            for entry in found.get(match, ()):
                side = by_name if match.startswith("name:") else by_cas
                side[(entry.jurisdiction, entry.annex, entry.key)] = entry
        entries = dict(by_name)
        entries.update((k, e) for k, e in by_cas.items()
                       if k not in by_name and _cas_match_holds(record, e, by_name.values()))
        out[key] = tuple(entries[k] for k in sorted(entries, key=_order))
    return out


def _nano_only(entry: ListEntry) -> bool:
    return bool(entry.inci_names) and all("(nano)" in n.casefold() for n in entry.inci_names)


def _cas_match_holds(record: IngredientRecord, entry: ListEntry,
                     named: Iterable[ListEntry]) -> bool:
    """Whether an entry found by a CAS number alone names the ingredient. Entries share CAS
    numbers (iron oxides CI 77491 and CI 77499 both give 1309-37-1; a substance and its nano
    form, VI/27 and VI/27a): a name the ingredient has for another entry of the same annex is the
    more specific, except that a nano form is also its parent substance (VI/27: "the sum shall
    not exceed"); a nano entry names only an ingredient named as nano ("(nano)" on the label,
    Art. 19(1)(g))."""
    if _nano_only(entry) and not any("nano" in n.casefold()
                                     for n in (record.inci_name, *record.synonyms)):
        return False
    return not any(e.jurisdiction == entry.jurisdiction and e.annex == entry.annex
                   and not _nano_only(e) for e in named)


_ANNEX_ORDER = {"II": 0, "III": 1, "IV": 2, "V": 3, "VI": 4}


def _order(key: tuple[str, str, str]) -> tuple[str, int, str]:
    return key[0], _ANNEX_ORDER.get(key[1], 9), key[2]


def list_origin(session: Session, ingredient_id: int) -> ListIngredient | None:
    """The list entry that created an ingredient record, if one did."""
    return session.get(ListIngredient, ingredient_id)


def with_list_entries(session: Session, reference: ReferenceData,
                      formulas: Iterable[ResolvedFormula]) -> ReferenceData:
    """``reference`` with the entries in force for every ingredient (and declared constituent)
    of ``formulas`` that it does not hold yet: one indexed lookup per call, none when no list is
    in force."""
    if not reference.lists:
        return reference
    wanted: dict[str, IngredientRecord] = {}
    todo = [line.ingredient for formula in formulas for line in formula.lines]
    while todo:  # a constituent that is a declared mixture itself is read through in turn
        record = todo.pop()
        key = name_key(record.inci_name)
        if key not in wanted:
            wanted[key] = record
            todo.extend(part.record for part in reference.constituents.get(key, ()))
    missing = [r for k, r in wanted.items() if k not in reference.list_entries]
    if not missing:
        return reference
    found = entries_for_records(session, missing)
    update: dict[str, object] = {"list_entries": {**reference.list_entries, **found}}
    # the parent acids of "as acid" parts (III/2a thioglycolic acid), for their molar masses
    known = {name_key(k) for k in reference.acids}
    wanted_acids = {n for entries in found.values() for e in entries
                    if any(p.basis == "as acid" for p in e.parts)
                    for n in e.inci_names if "acid" in n.casefold() and name_key(n) not in known}
    if wanted_acids:
        from formdb.store.queries import find_ingredients

        acids = {r.inci_name: r for r in find_ingredients(session, wanted_acids).values()}
        update["acids"] = {**reference.acids, **acids}
    return reference.model_copy(update=update)
