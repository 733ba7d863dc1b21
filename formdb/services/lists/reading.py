"""Reads for ``formdb lists status`` and ``formdb lists show``: snapshots and entries in force."""

from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import NotFound, quoted
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.lists import ANNEXES, ListEntry, SnapshotStatus
from formdb.schemas.suggest import close_matches
from formdb.services.lists.parse import parse_entry
from formdb.store.library import Library
from formdb.store.lists import entries_for_records, entries_of, list_origin, snapshots_in_force
from formdb.store.models import ListEntryRow, ListSnapshot


def read_differently(entries: Iterable[ListEntry]) -> tuple[str, ...]:
    """The keys of the entries this version's parser reads differently from their stored
    reading. Every entry keeps its export cells verbatim, so the stored reading can be compared
    with what the parser makes of the same cells now: a snapshot imported by an older formdb
    goes on being checked with the older reading (and found by its match keys) until the same
    export is imported again."""
    return tuple(sorted(e.key for e in entries
                        if parse_entry(e.annex, e.cells, e.key) != e))


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
