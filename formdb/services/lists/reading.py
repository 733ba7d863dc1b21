"""Reads for ``formdb lists status`` and ``formdb lists show``: snapshots and entries in force."""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import NotFound, quoted
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.lists import ANNEXES, ListEntry, SnapshotStatus
from formdb.schemas.suggest import close_matches
from formdb.store.library import Library
from formdb.store.lists import (
    entries_for_records,
    entries_of,
    list_origin,
    snapshots_in_force,
    with_list_entries,
)
from formdb.store.models import ListEntryRow, ListSnapshot

if TYPE_CHECKING:  # only annotations here: ``ingredient show`` reads lists without formulas
    from formdb.schemas.formula import ResolvedFormula
    from formdb.schemas.reference import ReferenceData


def reads_differently(entry: ListEntry) -> bool:
    """True when this version's parser reads the entry's export cells differently from the
    reading stored with it. Every imported entry keeps its cells verbatim, so a snapshot
    imported by an older formdb, which goes on being checked with that older reading (and found
    by its match keys) until the same export is imported again, can be told apart. An entry
    without cells (written by hand) has nothing to read again."""
    from formdb.services.lists.parse import parse_entry  # its patterns, only where lists are

    return bool(entry.cells) and parse_entry(entry.annex, entry.cells, entry.key) != entry


def read_differently(entries: Iterable[ListEntry]) -> tuple[str, ...]:
    """The keys of the entries this version reads differently (``reads_differently``)."""
    return tuple(sorted(e.key for e in entries if reads_differently(e)))


# entries already read again in this process, by identity (the entry is kept, so its id is not
# reused): a check of every stored formula meets the same entries in batch after batch. Emptied
# when it holds more than every annex's entries, so a long-lived process that checks through
# many libraries does not keep their entries alive.
_READ_AGAIN: dict[int, tuple[ListEntry, bool]] = {}
_READ_AGAIN_MAX = 10_000


def with_lists(session: Session, reference: ReferenceData,
               formulas: Iterable[ResolvedFormula]) -> ReferenceData:
    """``reference`` with the entries in force for ``formulas`` (``store.lists.
    with_list_entries``) and the labels of those this version reads differently (LIM05)."""
    reference = with_list_entries(session, reference, formulas)
    stale = set(reference.read_differently)
    for entries in reference.list_entries.values():
        for entry in entries:
            known = _READ_AGAIN.get(id(entry))
            if known is None or known[0] is not entry:
                if len(_READ_AGAIN) >= _READ_AGAIN_MAX:
                    _READ_AGAIN.clear()
                known = _READ_AGAIN[id(entry)] = (entry, reads_differently(entry))
            if known[1]:
                stale.add(entry.label)
    if stale == reference.read_differently:
        return reference
    return reference.model_copy(update={"read_differently": frozenset(stale)})


def lists_in_force(library: Library) -> tuple[SnapshotStatus, ...]:
    """The snapshots in force, each with the entries this version reads differently."""
    with library.read() as session:
        return tuple(SnapshotStatus(snapshot=s, read_differently=read_differently(
            entries_of(session, s.id).values()) if s.id is not None else ())
            for s in snapshots_in_force(session))


def show_entry(library: Library, reference: str) -> list[ListEntry]:
    """The entries in force under ``reference`` ("III/98", "Annex V/12a", "II 1666")."""
    text = reference.strip().upper().replace("ANNEX", "").replace(" ", "")
    annex, _, ref = text.replace("/", " ", 1).partition(" ") if "/" in text else ("", "", text)
    if annex not in ANNEXES:
        raise NotFound(f"{quoted(reference)} names no annex entry",
                       hint="write ANNEX/REFERENCE, e.g. III/98 or V/12a")
    with library.read() as session:
        rows = list(session.scalars(
            select(ListEntryRow).join(ListSnapshot, ListSnapshot.id == ListEntryRow.snapshot_id)
            .where(ListSnapshot.in_force.is_(True), ListSnapshot.annex == annex)))
    found = [ListEntry.model_validate_json(r.body) for r in rows if r.ref.upper() == ref]
    if not found:
        nearby = close_matches(ref, [r.ref for r in rows], limit=3)
        hint = f"did you mean {', '.join(f'{annex}/{n}' for n in nearby)}?" if nearby else \
            "`formdb lists status` shows which annexes are in force"
        raise NotFound(f"no entry {annex}/{ref} in the lists in force", hint=hint)
    return found


def entries_for_record(session: Session, record: IngredientRecord
                       ) -> tuple[str | None, tuple[ListEntry, ...]]:
    """(where the lists created the record, if they did; the entries in force that name the
    ingredient by INCI name, synonym or CAS) for ``formdb ingredient show``, which has read
    ``record`` already."""
    origin = list_origin(session, record.id) if record.id is not None else None
    made = None if origin is None else (
        f"created from {origin.jurisdiction} Annex {origin.annex}/{origin.entry_key} by a list "
        "import; it holds no physical data until someone adds some")
    return made, entries_for_records(session, [record]).get(name_key(record.inci_name), ())
