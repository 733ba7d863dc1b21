"""A screening series as text: the plan (blends, HLB, emulsifier %), the observations, a fit."""

from __future__ import annotations

import dataclasses
import json
from datetime import datetime
from typing import TYPE_CHECKING, Any

from formdb.report.terminal import one_line, terminal_safe

if TYPE_CHECKING:
    from formdb.schemas.bench import ScreeningFit, ScreeningNote, ScreeningSeries


def series_text(series: ScreeningSeries) -> str:
    """The series as text. The emulsifiers head their columns in full (a column is at least
    22 characters wide and widens for a longer name), never cut short."""
    low = max(22, len(series.low_emulsifier))
    high = max(22, len(series.high_emulsifier))
    oils = ", ".join(f"{name} {share * 100:.4g} %" for name, share in series.oils)
    out = [f"Screening series: {series.name} ({series.emulsion_type}), planned by "
           f"{series.created_by} on {series.created_at:%Y-%m-%d}",
           f"Oil phase at {series.oil_percent:g} % of each emulsion: {oils}",
           f"Emulsifier pair at {series.emulsifier_percent:g} %: {series.low_emulsifier} "
           f"(HLB {series.low_hlb:g}) with {series.high_emulsifier} (HLB {series.high_hlb:g}); "
           f"water ({series.water_inci}) to 100 %; {series.batch_g:g} g of each",
           "",
           f"{'blend':>5}  {'HLB':>6}  {series.low_emulsifier:>{low}} %  "
           f"{series.high_emulsifier:>{high}} %  observations"]
    for b in series.blends:
        seen = ", ".join(f"{m} {v:g}" for m, v in b.observations.items()) or "-"
        out.append(f"{b.number:>5}  {b.hlb:>6.2f}  {b.low_percent:>{low + 2}.3f}  "
                   f"{b.high_percent:>{high + 2}.3f}  {seen}")
    noted = [(b.number, note) for b in series.blends for note in b.notes]
    if noted:
        out += ["", "Notes recorded with the readings:"]
        out += [f"  blend {number}, {_note_head(note)}: {_note_text(note.text)}"
                for number, note in noted]
    return "\n".join(out) + "\n"


def _note_head(note: ScreeningNote) -> str:
    age = "" if note.after_hours is None else f" after {note.after_hours:g} h"
    return (f"{', '.join(m.replace('_', ' ') for m in note.measures)}{age} "
            f"({terminal_safe(note.observed_by)}, {note.observed_at:%Y-%m-%d %H:%M} UTC)")


def _note_text(text: str) -> str:
    """A note as the lab typed it, on one line: control and invisible characters as visible
    escapes (as every data text of a report), a line break as \\n."""
    return one_line(terminal_safe(text))


def series_json(series: ScreeningSeries) -> str:
    """The series as JSON: the plan, every blend with its latest readings and its notes, and the
    fit where one is attached (the weigh sheets are their own output)."""
    data = dataclasses.asdict(dataclasses.replace(series, sheets=()))
    del data["sheets"]
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False,
                      default=_json_value) + "\n"


def _json_value(value: Any) -> Any:
    if isinstance(value, datetime):
        return value.isoformat()
    raise TypeError(f"{type(value).__name__} is not JSON")


def fit_text(series_name: str, fit: ScreeningFit, stored: bool) -> str:
    lines = [f"Required HLB of the oil phase of '{series_name}': {fit.required_hlb:.2f} "
             f"± {fit.uncertainty:.2f} (about 95 %), from {fit.measure}"
             f"{'' if fit.after_hours is None else f' after {fit.after_hours:g} h'} of blends "
             f"{', '.join(str(n) for n in fit.used_blends)}",
             f"Method: {fit.method}.",
             f"After: {fit.source}.",
             "A required HLB is a guideline, not an exact target (Pasquali et al., Int. J. "
             "Pharm. 356 (2008) 44)."]
    if stored:
        lines.append("Stored in the library as an in-house measurement (graded measured); the "
                     "check uses it for formulas with this oil phase.")
    return "\n".join(lines) + "\n"


def bench_demo_text(sheet_text: str, series_text_: str, fit_text_: str, lotion: str,
                    before: float | None, after: float | None, source: str | None) -> str:
    """The demo's bench part: the weigh sheet, the series, the fit and the re-check."""
    was = "none" if before is None else f"{before:.2f} (weight average of library values)"
    now = "none" if after is None else f"{after:.2f}"
    return "\n".join([
        "", "From formula to bench (invented prices and observations of the demo lab):", "",
        sheet_text, series_text_, fit_text_,
        f"{lotion}: required HLB {was} before the series; {now} after it "
        f"(source {source or 'none'}, graded measured), used by the check.", ""])
