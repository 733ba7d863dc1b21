"""A batch's weigh sheet as text (rich), CSV and XLSX for the lab, and HTML for printing.

Every format prints the same figures from one ``WeighSheet``: each line's scaled mass, the mass
to read off the balance (rounded to that balance's resolution) and the rounding, phase by phase
in process order, the total checked against the plan, the cost, and lines for who weighed and
who checked each line and the batch.
"""

from __future__ import annotations

import csv
from collections.abc import Callable, Sequence
from io import BytesIO, StringIO
from pathlib import PurePath
from typing import TYPE_CHECKING

from rich import box
from rich.console import RenderableType
from rich.table import Table
from rich.text import Text

from formdb.errors import ConfigError, InvalidData
from formdb.report.cautions import DEFER, SCREENING
from formdb.report.safe_table import data_console
from formdb.report.terminal import safe_fields
from formdb.schemas.cells import guard_cell, xlsx_refusal

if TYPE_CHECKING:  # the report layer reads these records only
    from formdb.schemas.bench import PhaseGroup, StepView, WeighLine, WeighSheet

WIDTH = 120
SHEET_FORMATS = ("text", "csv", "xlsx", "html")
PRICE_CAUTION = ("Prices are the latest quotes the library holds, each with its supplier and "
                 "date; they are not converted between currencies.")
CSV_COLUMNS = ("phase", "line", "inci", "percent", "target_g", "weigh_g", "rounding_g",
               "balance_resolution_g", "portions", "supplier", "lot", "note", "neutralised",
               "price_per_kg", "currency", "price_supplier", "price_date", "cost",
               "weighed_by", "checked_by")


def grams(value: float, resolution: float) -> str:
    """A mass with as many decimals as its balance reads (0.01 g -> 2 decimals)."""
    decimals = max(0, -int(f"{resolution:e}".split("e")[1]))
    return f"{value:,.{decimals}f}"


def signed(value: float, resolution: float) -> str:
    """A rounding with its sign; one that shows as zero at this precision reads ±0."""
    text = grams(abs(value), resolution / 10)
    if float(text.replace(",", "")) == 0:
        return "±" + text
    return ("+" if value > 0 else "−") + text


def step_words(step: StepView) -> str:
    """'step 2: A+B at 75 °C, homogeniser 3000 rpm for 5 min; add B to A slowly'."""
    parts = [f"step {step.row}: {'+'.join(step.phases)}"]
    if step.temperature_c is not None:
        parts.append(f"at {step.temperature_c:g} °C")
    mixing = " ".join(x for x in (
        step.mixing, f"{step.speed_rpm:g} rpm" if step.speed_rpm else None,
        f"for {step.minutes:g} min" if step.minutes else None) if x)
    text = " ".join(parts) + (f", {mixing}" if mixing else "")
    return text + (f"; {step.note}" if step.note else "")


def phase_title(group: PhaseGroup) -> str:
    name = f"Phase {group.phase}" if group.phase else "Lines without a phase"
    return name + (f" ({step_words(group.first_step)})" if group.first_step else "")


def line_remarks(w: WeighLine) -> str:
    parts = [x for x in (w.note, w.neutralised,
                         f"supplier {w.supplier}" if w.supplier else None,
                         f"lot {w.lot}" if w.lot else None,
                         f"in {w.portions} portions, each at most {w.capacity_g:,.0f} g "
                         "(the balance's capacity)" if w.portions > 1 else None,
                         "BELOW BALANCE RESOLUTION" if w.below_resolution else None) if x]
    return "; ".join(parts)


def total_words(sheet: WeighSheet) -> str:
    verdict = "within" if sheet.total_within_bound else "OUTSIDE"
    return (f"Total to weigh {grams(sheet.weighed_total_g, 0.01)} g against "
            f"{grams(sheet.planned_total_g, 0.01)} g planned: "
            f"{signed(sheet.total_difference_g, 0.01)} g, {verdict} the rounding bound "
            f"±{grams(sheet.rounding_bound_g, 0.001)} g (half a balance step a line)")


def cost_words(sheet: WeighSheet) -> list[str]:
    total = sheet.weighed_total_g
    lines = [f"Cost: {c.batch_cost:,.2f} {c.currency} a batch, {c.per_kg:,.2f} {c.currency}/kg "
             + (f"(prices cover {grams(c.priced_g, 0.01)} g)" if c.priced_g >= total - 1e-6
                else f"(prices cover only {grams(c.priced_g, 0.01)} of the "
                     f"{grams(total, 0.01)} g weighed: the lines without a price are not in "
                     "it)")
             for c in sheet.costs]
    if len(sheet.costs) > 1:
        lines.append("Prices are in more than one currency: the costs are not added up.")
    if sheet.unpriced:
        lines.append("No price in the library for: " + ", ".join(sheet.unpriced)
                     + " (formdb price add)")
    return lines


def _heading(sheet: WeighSheet) -> list[str]:
    allowance = (f", plus {sheet.evaporation_percent:g} % water for evaporation"
                 if sheet.evaporation_percent else "")
    return [f"Weigh sheet: {sheet.formula}",
            f"Batch {grams(sheet.batch_g / 1000, 0.001)} kg{allowance}; from {sheet.source} "
            f"(sha256 {sheet.content_hash[:12]}); made {sheet.made_at:%Y-%m-%d %H:%M} UTC"]


def _print(*items: RenderableType) -> str:
    console = data_console(WIDTH)
    for item in items:
        console.print(item)
    text = console.file.getvalue()  # type: ignore[attr-defined]
    return "\n".join(line.rstrip() for line in text.splitlines()) + "\n"


def render_text(sheet: WeighSheet) -> str:
    sheet = safe_fields(sheet)  # every character visible, before the layout (report.safe_table)
    items: list[RenderableType] = [Text("\n".join(_heading(sheet)))]
    for group in sheet.groups:
        table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False,
                      title=phase_title(group), title_justify="left")
        for header, justify in (("#", "right"), ("Ingredient", "left"), ("% w/w", "right"),
                                ("Scaled g", "right"), ("Weigh g", "right"),
                                ("Rounding g", "right"), ("Balance", "right"),
                                ("Remarks", "left"), ("Weighed", "left"), ("Checked", "left")):
            table.add_column(Text(header), justify=justify,  # type: ignore[arg-type]
                             overflow="fold")
        for w in group.lines:
            table.add_row(str(w.line_no or "+"), w.inci,
                          f"{w.percent:.4g}" if w.percent is not None else "",
                          grams(w.target_g, w.resolution_g / 100),
                          grams(w.weighed_g, w.resolution_g),
                          signed(w.rounding_g, w.resolution_g), f"{w.resolution_g:g} g",
                          line_remarks(w), "____", "____")
        table.add_row("", "subtotal", "", grams(group.target_g, 0.01),
                      grams(group.weighed_g, 0.01), "", "", "", "", "")
        items.append(table)
    items.append(Text(total_words(sheet)))
    if sheet.steps:
        items.append(Text("Process:\n" + "\n".join("  " + step_words(s) for s in sheet.steps)))
    items.extend(Text(line) for line in cost_words(sheet))
    items.extend(Text("Note: " + note) for note in sheet.notes)
    items.append(Text("Weighed by: ____________________  date: __________\n"
                      "Checked by: ____________________  date: __________"))
    items.append(Text(f"{SCREENING} {DEFER} {PRICE_CAUTION}"))
    return _print(*items)


def _rows(sheet: WeighSheet) -> list[list[object]]:
    rows: list[list[object]] = []
    for group in sheet.groups:
        for w in group.lines:
            p = w.price
            rows.append([
                group.phase or "", w.line_no if w.line_no is not None else "allowance", w.inci,
                w.percent if w.percent is not None else "", round(w.target_g, 6), w.weighed_g,
                round(w.rounding_g, 6), w.resolution_g, w.portions, w.supplier or "",
                w.lot or "", w.note or "", w.neutralised or "",
                p.price_per_kg if p else "", p.currency if p else "", p.supplier if p else "",
                p.quoted_on.isoformat() if p else "",
                round(w.cost, 4) if w.cost is not None else "", "", ""])
    return rows


def _guarded(row: list[object]) -> list[object]:
    """Text cells that a spreadsheet would run as formulas get an apostrophe (schemas.cells)."""
    return [guard_cell(c) if isinstance(c, str) else c for c in row]


def _xlsx_row(row: list[object], where: str, columns: Sequence[str] = ()) -> list[object]:
    """A guarded row for the workbook; a text an XLSX cell cannot hold (a control character in
    a remark or a price's supplier) is refused, naming it, rather than failing inside openpyxl."""
    for number, cell in enumerate(row):
        why = xlsx_refusal(cell) if isinstance(cell, str) else None
        if why is not None:
            column = f", column {columns[number]}" if number < len(columns) else ""
            raise InvalidData(f"weigh sheet, {where}{column}: holds {why}, which an XLSX "
                              "cell cannot hold; nothing was written.",
                              "choose --format csv, text or html, or correct the text.")
    return _guarded(row)


def render_csv(sheet: WeighSheet) -> str:
    """One row a line to weigh, with empty weighed-by and checked-by columns to fill in."""
    out = StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    writer.writerows(_guarded(row) for row in _rows(sheet))
    return out.getvalue()


def render_xlsx(sheet: WeighSheet) -> bytes:
    """The CSV's rows on a 'weigh sheet' worksheet under a heading, the total and cost below."""
    from openpyxl import Workbook
    from openpyxl.styles import Font

    book = Workbook()
    ws = book.create_sheet("weigh sheet", 0)
    book.remove(book.worksheets[1])
    ws.title = "weigh sheet"
    for line in _heading(sheet):
        ws.append(_xlsx_row([line], "heading"))
    ws.append([])
    ws.append(list(CSV_COLUMNS))
    for cell in ws[ws.max_row]:
        cell.font = Font(bold=True)
    for row in _rows(sheet):
        ws.append(_xlsx_row(row, f"line {row[1]}", CSV_COLUMNS))
    ws.append([])
    for line in [total_words(sheet), *cost_words(sheet), *("Note: " + n for n in sheet.notes),
                 "Weighed by:", "Checked by:", SCREENING]:
        ws.append(_xlsx_row([line], "notes"))
    buffer = BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def render_html(sheet: WeighSheet) -> str:
    """A page to print: one table a phase, signature lines, escaped user text (autoescape)."""
    from formdb.report.html import environment

    template = environment().get_template("weigh_sheet.html.j2")
    return template.render(
        sheet=sheet, heading=_heading(sheet), phase_title=phase_title, grams=grams,
        signed=signed, remarks=line_remarks, total=total_words(sheet),
        costs=cost_words(sheet), step_words=step_words,
        cautions=(SCREENING, DEFER, PRICE_CAUTION))


RENDERERS: dict[str, Callable[[WeighSheet], str | bytes]] = {
    "text": render_text, "csv": render_csv, "xlsx": render_xlsx, "html": render_html}


def render_sheet(sheet: WeighSheet, fmt: str) -> str | bytes:
    try:
        return RENDERERS[fmt](sheet)
    except KeyError:
        raise ConfigError(f"--format {fmt!r}: choose one of {', '.join(SHEET_FORMATS)}") from None


SHEET_SUFFIXES = {".txt": "text", ".csv": "csv", ".xlsx": "xlsx", ".html": "html",
                  ".htm": "html"}


def format_for(out: str | None, fmt: str | None) -> str:
    """The format asked for, else the one the file name says, else text. A file name that says
    another format (sheet.pdf, or --format csv with sheet.xlsx) is refused rather than given
    content its name does not promise."""
    suffix = PurePath(out).suffix.lower() if out else ""
    named = SHEET_SUFFIXES.get(suffix)
    if fmt:
        if named is not None and named != fmt:
            raise InvalidData(f"--out {out}: the name says {named}, but --format is {fmt}",
                              hint="make the file name and --format agree")
        return fmt
    if out and suffix and named is None:
        raise InvalidData(f"--out {out}: a weigh sheet is written as .txt, .csv, .xlsx or "
                          f".html, not {suffix}",
                          hint="for a PDF, write the .html and print it from a browser")
    return named or "text"
