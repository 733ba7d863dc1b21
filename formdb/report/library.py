"""What the library commands print: ingredient lists, records, histories, imports and edits,
and stored formulas. Each function returns the whole text; the CLI only echoes it."""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Sequence
from datetime import datetime
from typing import TYPE_CHECKING, Any

from formdb.schemas.cells import guard_cell
from formdb.schemas.times import utc

if TYPE_CHECKING:
    from formdb.schemas.ingredient import IngredientRecord
    from formdb.schemas.stored import StoredFormulaInfo

CAUTION = ("A screening aid, not a safety assessment: check values against current sources, "
           "and defer to the regulation and a qualified safety assessor.")
LIST_FORMATS = ("table", "csv", "json")
_LIST_COLUMNS = ["inci_name", "roles", "hlb", "required_hlb_ow", "required_hlb_wo",
                 "solubility", "ionic_character", "version", "retired"]


def data_table(*headers: str) -> Any:
    """A Rich table of the library's text (``report.safe_table``): every character of a cell
    comes out, control characters as visible escapes, and a word too long for its column is
    folded, never cut short."""
    from formdb.report.safe_table import SafeTable

    return SafeTable(*headers)


def _tables(render: Any, width: int | None) -> str:
    """Rich renderables as text, at the terminal's width (or 160 columns into a pipe). Cells
    are the library's own text (citations, notes, names, reasons), printed as written: no Rich
    markup or emoji codes are read in them, so "[bold]" or ":warning:" stays as typed."""
    from formdb.report.safe_table import data_console

    console = data_console(width or 160)
    render(console)
    text: str = console.file.getvalue()  # type: ignore[attr-defined]
    return text


def when(at: datetime) -> str:
    """A stored timestamp as UTC text (SQLite hands back naive UTC values)."""
    return utc(at).strftime("%Y-%m-%d %H:%M:%S")


def _value(value: Any) -> str:
    from formdb.schemas.cells import render_property

    return render_property("", value)


def ingredient_list(records: Sequence[IngredientRecord], fmt: str, *,
                    include_retired: bool = False, width: int | None = None) -> str:
    if fmt == "json":
        return json.dumps([r.model_dump(mode="json") for r in records], indent=2,
                          ensure_ascii=False) + "\n"
    rows = [[r.inci_name, "; ".join(sorted(x.value for x in r.roles)),
             *(_value(getattr(r.p, p)) for p in _LIST_COLUMNS[2:7]), str(r.version),
             "yes" if r.retired else "no"] for r in records]
    if fmt == "csv":
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(_LIST_COLUMNS)
        writer.writerows([guard_cell(cell) for cell in row] for row in rows)
        return buffer.getvalue()
    table = data_table("INCI name", "roles", "HLB", "req. HLB O/W", "req. HLB W/O", "solubility",
                       "ionic", "version", *(["retired"] if include_retired else []))
    for row in rows:
        table.add_row(*(row if include_retired else row[:-1]))
    return _tables(lambda c: c.print(table), width) + f"{len(rows)} ingredient(s).\n"


def ingredient_detail(detail: Any, *, width: int | None = None) -> str:
    """``ingredient show``: every property with value, unit, source, evidence and citation."""
    from formdb.schemas.cells import render_property
    from formdb.schemas.ingredient import PROPERTY_NAMES, IngredientProperties

    rec = detail.record
    lines = [f"{rec.inci_name}  (version {rec.version}{', RETIRED' if rec.retired else ''}; "
             f"last changed {when(detail.updated_at)} UTC by {detail.updated_by})"]
    for label, items in (("synonyms", rec.synonyms), ("CAS", rec.cas_numbers),
                         ("roles", sorted(r.value for r in rec.roles)),
                         ("classes", sorted(rec.classes))):
        lines.append(f"  {label}: {'; '.join(items) or '-'}")
    table = data_table("property", "value", "unit", "source", "evidence", "citation", "note")
    for prop in PROPERTY_NAMES:
        value = getattr(rec.p, prop)
        prov = rec.provenance.get(prop)
        table.add_row(prop, render_property(prop, value) if value is not None else "-",
                      IngredientProperties.unit_of(prop) if value is not None else "",
                      prov.source if prov else "", prov.evidence.value if prov else "",
                      (prov.citation or "") if prov else "", (prov.note or "") if prov else "")
    return "\n".join(lines) + "\n" + _tables(lambda c: c.print(table), width) + CAUTION + "\n"


def ingredient_history(entries: Sequence[Any], *, width: int | None = None,
                       dialect: str = "postgresql") -> str:
    from formdb.schemas.change_log import value_text

    table = data_table("when (UTC)", "who", "action", "version", "field", "old", "new", "reason")
    for e in entries:
        head = [when(e.at), e.user, e.action, "" if e.version is None else str(e.version)]
        rows = [(field, value_text(old) if old not in (None, []) else "",
                 value_text(new) if new not in (None, []) else "")
                for field, old, new in _history_rows(e.changes)] or [("", "", "")]
        for number, (field, old, new) in enumerate(rows):
            table.add_row(*(head if number == 0 else [""] * 4), field, old, new,
                          (e.reason or "") if number == 0 else "")
    return (_tables(lambda c: c.print(table), width) + f"{len(entries)} change(s).\n"
            + outside_note(dialect))


def outside_note(dialect: str) -> str:
    """What a history cannot show: on SQLite no server records changes made around formdb."""
    if dialect == "postgresql":
        return ""
    return ("note: on SQLite no server records changes made outside formdb (whoever can write "
            "the file can change it unseen); this is formdb's own change log.\n")


def _history_rows(changes: Sequence[Any]) -> list[tuple[str, Any, Any]]:
    """(field, old, new) per changed part of each field: the value, then its source and note."""
    rows = []
    for change in changes:
        given = change.model_fields_set
        if given & {"old", "new"}:
            rows.append((change.field, change.old, change.new))
        rows += [(f"{change.field} {part}", getattr(change, f"old_{part}"),
                  getattr(change, f"new_{part}")) for part in ("source", "note", "evidence")
                 if given & {f"old_{part}", f"new_{part}"}]
    return rows


def record_changes(report: Any, verb: str) -> str:
    """What an add, edit, retire or restore did to one ingredient."""
    name, changes, version = report.inci_name, report.changes, report.version
    if not changes:
        return f"{name}: nothing changed (version {version}).\n"
    accepted = getattr(report, "accepted", ())
    weaker = getattr(report, "weaker", ())
    return "".join([f"{verb} {name} (now version {version}):\n",
                    *(f"  {change.describe()}\n" for change in changes),
                    *(f"accepted: {line}\n" for line in accepted),
                    *(f"weaker evidence: {line}\n" for line in weaker)])


def import_summary(report: Any) -> str:
    """What an ingredient import did (or, in a dry run, would do), row by row."""
    dry_run = report.dry_run
    would = "would be " if dry_run else ""
    lines = [f"note: {note}" for note in report.notes]
    lines += [f"{would}added: {name}" for name in report.added]
    for name, changes in report.changed.items():
        lines.append(f"{would}changed: {name}")
        lines += [f"  {change.describe()}" for change in changes]
    lines += [f"{would}left alone: {name}" for name in report.unchanged]
    lines.append(f"{len(report.added)} {would}added, {len(report.changed)} {would}changed, "
                 f"{len(report.unchanged)} left alone"
                 + (" (dry run: nothing was written)." if dry_run else "."))
    return "\n".join(lines) + "\n"


def formula_list(rows: Sequence[StoredFormulaInfo], *, width: int | None = None) -> str:
    table = data_table("name", "version", "lines", "updated (UTC)", "by", "sha-256")
    for info in rows:
        table.add_row(info.name, str(info.version), str(info.lines),
                      info.updated_at.strftime("%Y-%m-%d %H:%M"), info.updated_by,
                      info.content_hash[:12])
    text = _tables(lambda c: c.print(table), width)
    if not rows:
        text += "No stored formulas yet: `formdb formula import FILE`.\n"
    return text
