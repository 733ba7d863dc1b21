"""What the evidence-record commands print (sources, toxicology, exposure, constituents):
lists, one record, changes, histories. Each function returns the whole text."""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Mapping, Sequence
from typing import Any

from formdb.report.library import CAUTION, _tables, data_table, when
from formdb.schemas.cells import guard_cell

LIST_FORMATS = ("table", "csv", "json")


def record_list(rows: Sequence[Mapping[str, str]], columns: Sequence[str], shown: Sequence[str],
                fmt: str, noun: str, *, width: int | None = None) -> str:
    """Every record: all columns as CSV or JSON, the ``shown`` ones as a table."""
    if fmt == "json":
        return json.dumps([{c: r.get(c, "") for c in columns} for r in rows], indent=2,
                          ensure_ascii=False) + "\n"
    if fmt == "csv":
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(columns)
        writer.writerows([[guard_cell(r.get(c, "")) for c in columns] for r in rows])
        return buffer.getvalue()
    table = data_table(*shown)
    for r in rows:
        table.add_row(*(r.get(c, "") for c in shown))
    return _tables(lambda c: c.print(table), width) + f"{len(rows)} {noun}.\n"


def record_detail(title: str, cells: Mapping[str, str], columns: Sequence[str], *,
                  extra: Sequence[str] = (), width: int | None = None) -> str:
    """One record, a field per line, then any further lines (values citing a source...)."""
    table = data_table("field", "value")
    for c in columns:
        table.add_row(c, cells.get(c, "") or "-")
    out = title + "\n" + _tables(lambda c: c.print(table), width)
    if extra:
        out += "\n".join(extra) + "\n"
    return out + CAUTION + "\n"


def record_changes(report: Any) -> str:
    """What an add, edit or import did (or, in a dry run, would do), record by record."""
    would = "would be " if report.dry_run else ""
    lines = [f"warning: {w}" for w in report.warnings]
    lines += [f"{would}added {report.entity}: {name}" for name in report.added]
    for name, changes in report.changed.items():
        lines.append(f"{would}changed {report.entity}: {name}")
        lines += [f"  {change.describe()}" for change in changes]
    if len(report.added) + len(report.changed) + len(report.unchanged) > 1 or report.dry_run:
        lines.append(f"{len(report.added)} {would}added, {len(report.changed)} {would}changed, "
                     f"{len(report.unchanged)} left alone"
                     + (" (dry run: nothing was written)." if report.dry_run else "."))
    elif report.unchanged:
        lines.append(f"{report.entity} {report.unchanged[0]}: nothing changed.")
    return "\n".join(lines) + "\n"


def record_history(entries: Sequence[Any], *, width: int | None = None,
                   dialect: str = "postgresql") -> str:
    from formdb.report.library import outside_note

    table = data_table("when (UTC)", "who", "action", "field", "old", "new", "reason")
    for e in entries:
        table.add_row(when(e.at), e.user, e.action, e.field or "", e.old or "", e.new or "",
                      e.reason or "")
    return (_tables(lambda c: c.print(table), width) + f"{len(entries)} change(s).\n"
            + outside_note(dialect))


def identified(path: str, keys: Sequence[str]) -> str:
    if not keys:
        return f"{path}: no source records this file's checksum.\n"
    return f"{path}: the document cited by {', '.join(keys)}.\n"


def mixture_detail(view: Any, *, width: int | None = None) -> str:
    """A mixture's constituents, then its HLB and solubility as computed from them and as the
    library holds them."""
    from formdb.schemas.cells import format_number

    table = data_table("constituent", "% in the mixture", "HLB", "solubility", "source")
    for rec, pct, source in view.parts:
        table.add_row(rec.inci_name, format_number(pct),
                      "-" if rec.p.hlb is None else format_number(rec.p.hlb),
                      rec.p.solubility.value if rec.p.solubility else "-", source)
    lines = [f"{view.name}: {len(view.parts)} constituent(s), "
             f"{format_number(round(view.declared, 4))} % declared"]
    out = "\n".join(lines) + "\n" + _tables(lambda c: c.print(table), width)
    for prop, value, note in (("HLB", view.hlb, view.hlb_note),
                              ("solubility", view.solubility, view.solubility_note)):
        shown = "-" if value is None else (format_number(value) if isinstance(value, float)
                                           else str(value))
        out += f"computed {prop}: {shown}" + (f" ({note})" if note else "") + "\n"
    for prop, text in view.stored.items():
        out += f"library {prop}: {text}\n"
    return out + CAUTION + "\n"


def mixture_list(views: Sequence[Any]) -> str:
    from formdb.schemas.cells import format_number

    lines = [f"{v.name}: " + "; ".join(f"{format_number(p)} % {r.inci_name}"
                                       for r, p, _s in v.parts) for v in views]
    return "\n".join([*lines, f"{len(views)} mixture(s)."]) + "\n"


def mixture_changes(report: Any) -> str:
    would = "would be " if report.dry_run else ""
    lines = []
    for name, changes in report.declared.items():
        lines.append(f"{would}declared {name}:")
        lines += [f"  {c}" for c in changes]
    lines += [f"{name}: nothing changed." for name in report.unchanged]
    lines += [f"computed: {n}" for n in report.notes]
    if report.dry_run:
        lines.append("dry run: nothing was written.")
    return "\n".join(lines) + "\n"
