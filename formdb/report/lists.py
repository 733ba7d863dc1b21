"""What ``formdb lists ...`` prints: an import (parse coverage, changes old -> new, what they
touch), the snapshots in force, and one entry with its parts."""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

from formdb.schemas.lists import (
    ANNEX_TITLES,
    ANNEXES,
    ListEntry,
    ListsImport,
    Part,
    SnapshotInfo,
    SnapshotStatus,
)

CAUTION = ("Lists are dated snapshots of the Commission's exports: defer to the current "
           "consolidated Regulation (EC) No 1223/2009, local codes and a qualified safety "
           "assessor. formdb is a screening aid, not a safety assessment.")


def _snap(s: SnapshotInfo) -> str:
    return (f"{s.jurisdiction} Annex {s.annex} ({ANNEX_TITLES.get(s.annex, '')}): {s.file_name}, "
            f"last update {s.last_update:%d/%m/%Y}, file created {s.file_created:%d/%m/%Y}, "
            f"{s.entries} entries, sha256 {s.file_hash[:16]}")


def import_text(result: ListsImport, *, show_unparsed: int = 40) -> str:
    out = ["Dry run: nothing was written." if result.dry_run else "Imported."]
    for annex in result.annexes:
        out.append("")
        out.append(_snap(annex.snapshot))
        if annex.unchanged:
            out.append("  the same file is already in force: nothing changed")
            continue
        if annex.reread:
            count = "1 entry" if len(annex.reread) == 1 else f"{len(annex.reread)} entries"
            carry = "carries" if len(annex.reread) == 1 else "carry"
            out.append(f"  the same file, read again by this version of formdb: {count} read "
                       f"differently ({_entries(annex.snapshot.annex, annex.reread)}) now "
                       f"{carry} the new reading")
        if annex.replaces is not None:
            out.append(f"  replaces: {annex.replaces.file_name}, last update "
                       f"{annex.replaces.last_update:%d/%m/%Y}")
        if annex.parts:
            out.append(f"  parts structured: {annex.structured_parts} of {annex.parts} "
                       f"({100 * annex.coverage:.1f} %)")
        out.append(f"  ingredient records {'to create' if result.dry_run else 'created'} for "
                   f"substances the library did not know: {annex.ingredients_created}")
        if annex.replaces is not None:
            kinds = {k: [c for c in annex.changes if c.kind == k]
                     for k in ("added", "removed", "changed")}
            out.append(f"  entries added {len(kinds['added'])}, removed "
                       f"{len(kinds['removed'])}, changed {len(kinds['changed'])}")
            for change in annex.changes:
                out.append(f"    {change.kind}: {change.title}")
                out.extend(f"      {d}" for d in change.details)
    if result.parts:
        share = 100 * result.structured_parts / result.parts
        out.append("")
        out.append(f"Parse coverage: {result.structured_parts} of {result.parts} parts "
                   f"structured ({share:.1f} %). Not structured (kept verbatim, shown to the "
                   "reviewer as conditions to confirm by hand):")
        rest = [u for a in result.annexes for u in a.unparsed]
        out.extend(f"  {u}" for u in rest[:show_unparsed])
        if len(rest) > show_unparsed:
            out.append(f"  ... and {len(rest) - show_unparsed} more (--all-unparsed lists them)")
    if any(a.replaces is not None and not a.unchanged for a in result.annexes):
        out.append("")
        out.append(f"Stored formulas touched by the changes: {len(result.touched_formulas)}")
        out.extend(f"  {t}" for t in result.touched_formulas)
        if result.formula_changes:
            out.append("Their findings, re-checked before and after (default profile):")
            out.extend(f"  {line}" for c in result.formula_changes for line in c.split("\n"))
        out.append(f"Signed review runs now stale: {len(result.stale_runs)}")
        out.extend(f"  {s}" for s in result.stale_runs)
        if result.stale_runs:
            out.append("  (`formdb review status` shows each, old -> new)")
    out.append("")
    out.append(CAUTION)
    return "\n".join(out) + "\n"


def import_json(result: ListsImport) -> str:
    data: dict[str, Any] = result.model_dump(mode="json")
    data["parse_coverage"] = (result.structured_parts / result.parts) if result.parts else None
    return json.dumps(data, indent=2, ensure_ascii=False) + "\n"


def _entries(annex: str, keys: Sequence[str], shown: int = 8) -> str:
    """The first few entries of a list, by reference ("V/3, V/12a, ...")."""
    return ", ".join(f"{annex}/{k}" for k in keys[:shown]) + (", ..." if len(keys) > shown
                                                               else "")


def _reread_line(keys: Sequence[str], annex: str, total: int, file_name: str) -> str:
    return (f"    read differently by this version of formdb: {len(keys)} of {total} entries "
            f"({_entries(annex, keys)}); the checks use the reading stored at the import until "
            f"the same export is imported again: `formdb lists import {file_name}`")


def snapshots_text(statuses: Sequence[SnapshotStatus]) -> str:
    if not statuses:
        return ("No list snapshot is in force: the checks use the seed's hand-written limit "
                "rows. Import the Commission's exports with `formdb lists import`.\n")
    out = ["Lists in force:"]
    for status in statuses:
        s = status.snapshot
        out.append(f"  {_snap(s)}; imported {s.imported_at} by {s.imported_by}")
        if status.read_differently:
            out.append(_reread_line(status.read_differently, s.annex, s.entries, s.file_name))
    snapshots = [status.snapshot for status in statuses]
    missing = [a for a in ANNEXES if not any(s.annex == a for s in snapshots)]
    if missing:
        out.append(f"No export imported for Annex {', '.join(missing)}: the seed's hand-written "
                   "rows (seed_data/limits.csv) apply there, where it has any.")
    out.append("")
    out.append(CAUTION)
    return "\n".join(out) + "\n"


def part_lines(part: Part) -> list[str]:
    scope = part.scope.text or "all products"
    limit = "no maximum" if part.max_percent is None else f"max {part.max_percent:g} %"
    extra = []
    if part.basis:
        extra.append(part.basis)
    if part.aggregate == "sum":
        extra.append("sum of the group")
    lines = [f"{part.name}: {scope}: {limit}" + (f" ({', '.join(extra)})" if extra else "")]
    if part.ph_min is not None or part.ph_max is not None:
        lines.append(f"    pH {part.ph_min if part.ph_min is not None else ''}"
                     f"{' to ' if part.ph_min is not None else 'up to '}{part.ph_max or ''}")
    lines.extend(f"    also: {f}" for f in part.further_limits)
    lines.extend(f"    condition: {c}" for c in part.conditions)
    if part.other:
        lines.append(f"    other: {part.other}")
    if part.labelling:
        lines.append(f"    label: {part.labelling}")
    lines.extend(f"    to confirm by hand: {u}" for u in part.unparsed)
    return lines


def entry_text(entry: ListEntry) -> str:
    out = [entry.title, f"  chemical name: {entry.chemical_name}"]
    if entry.inci_names:
        out.append(f"  INCI: {'; '.join(entry.inci_names)}")
    out.extend(f"  name corrected: {note}" for note in entry.misspelt)
    if entry.cas_numbers:
        out.append(f"  CAS: {', '.join(entry.cas_numbers)}")
    if entry.ec_numbers:
        out.append(f"  EC: {', '.join(entry.ec_numbers)}")
    out.append(f"  regulation: {entry.regulation}"
               + (f", updated {entry.update_date:%d/%m/%Y}" if entry.update_date else ""))
    if entry.purpose:
        out.append(f"  purpose: {entry.purpose.replace('-', ' ')} use only")
    if entry.allergen:
        out.append("  allergen: named on the label above 0.001 % (leave-on) / 0.01 % (rinse-off)"
                   + (" from 31/07/2026 (Reg. (EU) 2023/1545)" if entry.extended_allergen
                      else ""))
    if entry.annex == "II":
        out.append("  prohibited in cosmetic products")
    out.extend(f"  {line}" for p in entry.parts for line in part_lines(p))
    return "\n".join(out) + "\n"


def ingredient_entries_text(origin: str | None, entries: Sequence[ListEntry]) -> str:
    """The regulatory part of ``formdb ingredient show``: where the record came from and every
    entry in force that names it, with its parts."""
    out = []
    if origin:
        out.append(f"From the lists: {origin}.")
    if entries:
        out.append("Regulatory list entries in force (matched by INCI name, synonym or CAS):")
        for entry in entries:
            out.extend(f"  {line}" for line in entry_text(entry).rstrip("\n").split("\n"))
    return ("\n".join(out) + "\n") if out else ""
