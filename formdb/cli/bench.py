"""``formdb batch`` (a weigh sheet for a batch) and ``formdb price`` (ingredient prices)."""

from __future__ import annotations

from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import FLOAT, INT, AppContext, force_option, library_files, with_library

if TYPE_CHECKING:
    from formdb.schemas.bench import WeighSheet
    from formdb.store.library import Library


@click.command("batch")
@click.argument("file", type=click.Path(path_type=Path), required=False)
@click.option("--stored", help="Use the formula stored in the library under this name.")
@click.option("--kg", "batch_kg", type=FLOAT, help="Batch size in kg (default: the file's "
              "batch_kg).")
@click.option("--evaporation-percent", type=FLOAT, default=0.0, show_default=True,
              help="Extra water, as % of the batch, to make up for evaporation while hot.")
@click.option("--balance", "balances", multiple=True, metavar="RESOLUTION:CAPACITY",
              help="A balance of the bench, in grams (repeat; default 0.01:200, 0.1:4000, "
                   "1:60000). Each line goes on the finest balance that carries it.")
@click.option("--format", "fmt", type=click.Choice(["text", "csv", "xlsx", "html"]),
              help="Output format (default: from --out's extension, else text).")
@click.option("--out", type=click.Path(path_type=Path), help="Write the sheet to this file.")
@force_option
@with_library
def batch_cmd(app: AppContext, library: Library, file: Path | None, stored: str | None,
              batch_kg: float | None,
              evaporation_percent: float, balances: tuple[str, ...], fmt: str | None,
              out: Path | None, force: bool) -> None:
    """A weigh sheet for a batch of formula FILE (or --stored NAME): lines scaled, rounded per
    balance, grouped by phase in process order, the total checked, the cost from the
    library's prices."""
    from formdb.errors import InvalidData
    from formdb.report.files import check_output, write_report
    from formdb.report.weigh_sheet import format_for, render_sheet
    from formdb.science.weighing import DEFAULT_BALANCES
    from formdb.services.bench_work.weigh_sheets import parse_balance, weigh_sheet_for_file

    inputs = [*([file] if file is not None else []), *library_files(app)]
    if out is not None:
        check_output(out, force=force, inputs=inputs)
    chosen = format_for(str(out) if out else None, fmt)
    if chosen == "xlsx" and out is None:
        raise InvalidData("--format xlsx needs --out FILE.xlsx (a workbook is not text)")
    bench = tuple(parse_balance(b) for b in balances) or DEFAULT_BALANCES
    sheet = weigh_sheet_for_file(library, file, batch_kg, balances=bench,
                                 evaporation_percent=evaporation_percent, stored=stored)
    rendered = render_sheet(sheet, chosen)
    if out is None:
        assert isinstance(rendered, str)
        click.echo(rendered, nl=False)
        return
    write_report(out, rendered, force=force, inputs=inputs)
    click.echo(f"weigh sheet for {sheet.batch_g / 1000:g} kg of {sheet.formula} written to {out}")


@click.group("price")
def price_group() -> None:
    """Ingredient prices: quotes per kg with currency, supplier and date, kept with history."""


@price_group.command("add")
@click.argument("inci")
@click.option("--per-kg", "price_per_kg", type=FLOAT, required=True, help="Price per kg.")
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


@click.group("screen")
def screen_group() -> None:
    """Screening series: find an oil phase's required HLB at the bench."""


@screen_group.command("plan")
@click.argument("name")
@click.option("--oil", "oils", multiple=True, metavar="INCI=SHARE",
              help="A member of the oil phase and its share (repeat; shares are normalised).")
@click.option("--from-formula", type=click.Path(path_type=Path),
              help="Take the oil phase of this formula file instead.")
@click.option("--low", required=True, help="The low-HLB emulsifier of the pair.")
@click.option("--high", required=True, help="The high-HLB emulsifier of the pair.")
@click.option("--from-hlb", "start", type=FLOAT, default=6.0, show_default=True)
@click.option("--to-hlb", "stop", type=FLOAT, default=16.0, show_default=True)
@click.option("--step", type=FLOAT, default=1.0, show_default=True)
@click.option("--oil-percent", type=FLOAT, default=20.0, show_default=True,
              help="% of oil phase in each emulsion.")
@click.option("--emulsifier-percent", type=FLOAT, default=5.0, show_default=True,
              help="% of the emulsifier pair in each emulsion.")
@click.option("--batch-g", type=FLOAT, default=100.0, show_default=True,
              help="Grams of each emulsion (its weigh sheet).")
@click.option("--type", "emulsion_type", type=click.Choice(["O/W", "W/O"]), default="O/W",
              show_default=True)
@click.option("--sheets", type=click.Path(path_type=Path),
              help="Write each blend's weigh sheet (HTML) into this folder.")
@with_library
def screen_plan_cmd(app: AppContext, library: Library, name: str, oils: tuple[str, ...],
                    from_formula: Path | None, low: str, high: str, start: float, stop: float,
                    step: float, oil_percent: float, emulsifier_percent: float, batch_g: float,
                    emulsion_type: str, sheets: Path | None) -> None:
    """Plan and store screening series NAME: one emulsion per HLB step, each weighable."""
    from formdb.report.screening import series_text
    from formdb.schemas.vocab import EmulsionType
    from formdb.services.bench_work.screening import parse_oil, plan_series

    if sheets is not None:
        _check_sheet_folder(sheets)  # before the plan is stored: a bad folder changes nothing
    series = plan_series(
        library, name, user=app.user, oils=[parse_oil(o) for o in oils],
        formula=from_formula, low=low, high=high, start=start, stop=stop, step=step,
        oil_percent=oil_percent, emulsifier_percent=emulsifier_percent, batch_g=batch_g,
        emulsion_type=EmulsionType(emulsion_type))
    click.echo(series_text(series), nl=False)
    if sheets is not None:
        _write_sheets(series.sheets, sheets)


def _check_sheet_folder(folder: Path) -> None:
    """Refuse a --sheets folder that is missing or already holds blend sheets, before any work
    (the sheets are never written over, and a half-written set is never left)."""
    from formdb.errors import InvalidData

    try:
        is_folder = folder.is_dir()
    except OSError as exc:  # a name too long for the file system
        raise InvalidData(f"--sheets {folder}: cannot be used ({exc.strerror or exc})") from None
    if not is_folder:
        raise InvalidData(f"--sheets {folder}: not a folder (create it first)")
    taken = sorted(p.name for p in folder.glob("blend-*.html"))
    if taken:
        raise InvalidData(f"--sheets {folder}: already holds {taken[0]}"
                          f"{f' and {len(taken) - 1} more' if len(taken) > 1 else ''}; "
                          "blend sheets are not written over",
                          hint="give an empty folder")


def _write_sheets(sheets: tuple[WeighSheet, ...], folder: Path, *,
                  to_stderr: bool = False) -> None:
    from formdb.report.files import write_report
    from formdb.report.weigh_sheet import render_html

    for number, sheet in enumerate(sheets, start=1):
        write_report(folder / f"blend-{number:02d}.html", render_html(sheet))
    click.echo(f"{len(sheets)} weigh sheets written to {folder}", err=to_stderr)


@screen_group.command("show")
@click.argument("name")
@click.option("--sheets", type=click.Path(path_type=Path),
              help="Write each blend's weigh sheet (HTML) into this folder.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@with_library
def screen_show_cmd(app: AppContext, library: Library, name: str, sheets: Path | None,
                    fmt: str) -> None:
    """Print series NAME: its blends, what was observed of each and the notes kept with it."""
    from formdb.report.screening import series_json, series_text
    from formdb.services.bench_work.screening import show_series

    if sheets is not None:
        _check_sheet_folder(sheets)
    series = show_series(library, name, with_sheets=sheets is not None)
    click.echo((series_json if fmt == "json" else series_text)(series), nl=False)
    if sheets is not None:  # JSON alone on stdout: the sheets' line goes to stderr
        _write_sheets(series.sheets, sheets, to_stderr=fmt == "json")


@screen_group.command("record")
@click.argument("name")
@click.option("--blend", type=INT, required=True, help="The blend's number in the series.")
@click.option("--stability", type=FLOAT, help="Stability score, 0 (broken) to 10 (unchanged).")
@click.option("--separation-percent", type=FLOAT,
              help="Cream or serum layer, % of the sample's height.")
@click.option("--droplet-um", type=FLOAT, help="Mean droplet diameter, µm.")
@click.option("--after-hours", type=FLOAT, help="Hours since the emulsion was made.")
@click.option("--note", help="What else was seen.")
@with_library
def screen_record_cmd(app: AppContext, library: Library, name: str, blend: int,
                      stability: float | None, separation_percent: float | None,
                      droplet_um: float | None, after_hours: float | None,
                      note: str | None) -> None:
    """Record what the lab saw of one blend of series NAME (earlier records stay)."""
    from formdb.services.bench_work.screening import record_observations

    values = {k: v for k, v in (("stability", stability),
                                ("separation_percent", separation_percent),
                                ("droplet_um", droplet_um)) if v is not None}
    record_observations(library, name, blend, values, user=app.user, after_hours=after_hours,
                        note=note)
    click.echo(f"recorded blend {blend} of {name}: "
               + ", ".join(f"{k} {v:g}" for k, v in values.items())
               + ("; the note is kept (screen show prints it)" if note else ""))


def _measure(ctx: click.Context, param: click.Parameter, value: str) -> str:
    """--measure as screen record spells it (separation-percent), or as stored (_)."""
    key = value.strip().lower().replace("-", "_")
    if key not in ("stability", "separation_percent", "droplet_um"):
        raise click.BadParameter(f"{value!r}: choose stability, separation-percent or "
                                 "droplet-um")
    return key


@screen_group.command("fit")
@click.argument("name")
@click.option("--measure", default="stability", show_default=True, callback=_measure,
              metavar="[stability|separation-percent|droplet-um]",
              help="The reading to fit (named as screen record names it).")
@click.option("--after-hours", type=FLOAT,
              help="Fit the readings taken this many hours after making (default: each "
                   "blend's latest, refused when their ages differ).")
@click.option("--store", is_flag=True,
              help="Keep the fitted value in the library as an in-house measurement.")
@with_library
def screen_fit_cmd(app: AppContext, library: Library, name: str, measure: str,
                   after_hours: float | None, store: bool) -> None:
    """Fit the required HLB of series NAME's oil phase (refused without a clear optimum)."""
    from formdb.report.screening import fit_text
    from formdb.services.bench_work.screening import fit_series

    fit = fit_series(library, name, measure=measure, store=store, user=app.user,
                     after_hours=after_hours)
    click.echo(fit_text(name, fit, store), nl=False)
