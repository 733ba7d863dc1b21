"""``formdb batch`` (a weigh sheet for a batch) and ``formdb price`` (ingredient prices)."""

from __future__ import annotations

from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.command("batch")
@click.argument("file", type=click.Path(path_type=Path))
@click.option("--kg", "batch_kg", type=float, help="Batch size in kg (default: the file's "
              "batch_kg).")
@click.option("--evaporation-percent", type=float, default=0.0, show_default=True,
              help="Extra water, as % of the batch, to make up for evaporation while hot.")
@click.option("--balance", "balances", multiple=True, metavar="RESOLUTION:CAPACITY",
              help="A balance of the bench, in grams (repeat; default 0.01:200, 0.1:4000, "
                   "1:60000). Each line goes on the finest balance that carries it.")
@click.option("--format", "fmt", type=click.Choice(["text", "csv", "xlsx", "html"]),
              help="Output format (default: from --out's extension, else text).")
@click.option("--out", type=click.Path(path_type=Path), help="Write the sheet to this file.")
@with_library
def batch_cmd(app: AppContext, library: Library, file: Path, batch_kg: float | None,
              evaporation_percent: float, balances: tuple[str, ...], fmt: str | None,
              out: Path | None) -> None:
    """A weigh sheet for a batch of formula FILE: lines scaled, rounded per balance, grouped
    by phase in process order, the total checked, the cost from the library's prices."""
    from formdb.errors import InvalidData
    from formdb.report.files import write_report
    from formdb.report.weigh_sheet import format_for, render_sheet
    from formdb.science.weighing import DEFAULT_BALANCES
    from formdb.services.bench_work.weigh_sheets import parse_balance, weigh_sheet_for_file

    chosen = format_for(str(out) if out else None, fmt)
    if chosen == "xlsx" and out is None:
        raise InvalidData("--format xlsx needs --out FILE.xlsx (a workbook is not text)")
    bench = tuple(parse_balance(b) for b in balances) or DEFAULT_BALANCES
    sheet = weigh_sheet_for_file(library, file, batch_kg, balances=bench,
                                 evaporation_percent=evaporation_percent)
    rendered = render_sheet(sheet, chosen)
    if out is None:
        assert isinstance(rendered, str)
        click.echo(rendered, nl=False)
        return
    write_report(out, rendered)
    click.echo(f"weigh sheet for {sheet.batch_g / 1000:g} kg of {sheet.formula} written to {out}")


@click.group("price")
def price_group() -> None:
    """Ingredient prices: quotes per kg with currency, supplier and date, kept with history."""


@price_group.command("add")
@click.argument("inci")
@click.option("--per-kg", "price_per_kg", type=float, required=True, help="Price per kg.")
@click.option("--currency", required=True, help="ISO 4217 code, e.g. EUR.")
@click.option("--supplier", required=True, help="Who quoted it.")
@click.option("--date", "quoted_on", type=click.DateTime(formats=["%Y-%m-%d"]),
              help="Date of the quote (default: today).")
@click.option("--note", help="Anything the buyer should know (pack size, incoterm...).")
@with_library
def price_add_cmd(app: AppContext, library: Library, inci: str, price_per_kg: float,
                  currency: str, supplier: str, quoted_on: object, note: str | None) -> None:
    """Record a price quote for ingredient INCI (the earlier quotes stay as its history)."""
    from datetime import datetime

    from formdb.report.prices import price_line
    from formdb.services.bench_work.prices import add_price

    when: date | None = quoted_on.date() if isinstance(quoted_on, datetime) else None
    record = add_price(library, inci, price_per_kg, currency, supplier, user=app.user,
                       quoted_on=when, note=note)
    click.echo("recorded: " + price_line(record))


@price_group.command("list")
@click.argument("inci", required=False)
@with_library
def price_list_cmd(app: AppContext, library: Library, inci: str | None) -> None:
    """Every price quote (of INCI, or of every ingredient), oldest first: the price history."""
    from formdb.report.prices import price_table
    from formdb.services.bench_work.prices import price_history

    click.echo(price_table(price_history(library, inci)), nl=False)
