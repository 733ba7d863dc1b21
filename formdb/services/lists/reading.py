"""Reads for ``formdb lists status`` and ``formdb lists show``: snapshots and entries in force."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import NotFound, quoted
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.lists import ANNEXES, ListEntry, SnapshotInfo
from formdb.schemas.suggest import close_matches
from formdb.store.library import Library
from formdb.store.lists import entries_for_records, list_origin, snapshots_in_force
from formdb.store.models import ListEntryRow, ListSnapshot


def lists_in_force(library: Library) -> tuple[SnapshotInfo, ...]:
    with library.read() as session:
        return snapshots_in_force(session)


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
