"""``formdb mixture ...``: declare what a mixture or supplier blend is made of, so the label,
the limits, the allergens and the margin of safety see its substances."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, force_option, library_files, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("mixture")
def mixture_group() -> None:
    """Mixtures and supplier blends: their constituents, with the HLB and solubility computed
    from them."""


@mixture_group.command("set")
@click.argument("name")
@click.option("--part", "parts", multiple=True, metavar="INCI=PERCENT[@SOURCE]",
              help="A constituent and its % in the mixture (repeatable), e.g. "
                   "'Cetearyl Alcohol=80@supplier-x-coa-2025'.")
@click.option("--source", help="Source key of the parts that name none.")
@click.option("--partial", is_flag=True,
              help="The declaration covers part of the mixture only (an allergen "
                   "certificate); otherwise the parts must add up to 100 %.")
@click.option("--reason", help="Why (kept in the change log).")
@with_library
def set_cmd(app: AppContext, library: Library, name: str, parts: tuple[str, ...],
            source: str | None, partial: bool, reason: str | None) -> None:
    """Declare the whole composition of mixture NAME (replaces the earlier one)."""
    from formdb.report.records import mixture_changes
    from formdb.services.library.mixtures import declare, parse_part

    if not parts:
        raise click.BadParameter("give at least one --part (or use `mixture clear`)",
                                 param_hint="--part")
    given = [parse_part(p, source) for p in parts]
    with library.write() as session:
        report = declare(session, name, given, user=app.user, partial=partial, reason=reason)
    click.echo(mixture_changes(report), nl=False)


@mixture_group.command("clear")
@click.argument("name")
@click.option("--reason", required=True, help="Why (kept in the change log).")
@with_library
def clear_cmd(app: AppContext, library: Library, name: str, reason: str) -> None:
    """Remove the declared constituents of NAME."""
    from formdb.report.records import mixture_changes
    from formdb.services.library.mixtures import declare

    with library.write() as session:
        report = declare(session, name, [], user=app.user, partial=True, reason=reason)
    click.echo(mixture_changes(report), nl=False)


@mixture_group.command("show")
@click.argument("name")
@with_library
def show_cmd(app: AppContext, library: Library, name: str) -> None:
    """The constituents of NAME and the HLB and solubility computed from them."""
    from formdb.report.records import mixture_detail
    from formdb.services.library.mixtures import show_mixture

    with library.read() as session:
        view = show_mixture(session, name)
    click.echo(mixture_detail(view), nl=False)


@mixture_group.command("list")
@with_library
def list_cmd(app: AppContext, library: Library) -> None:
    """Every mixture with declared constituents."""
    from formdb.report.records import mixture_list
    from formdb.services.library.mixtures import list_mixtures

    with library.read() as session:
        views = list_mixtures(session)
    click.echo(mixture_list(views), nl=False)


@mixture_group.command("history")
@click.argument("name")
@with_library
def history_cmd(app: AppContext, library: Library, name: str) -> None:
    """Who declared which constituents of NAME, when and why."""
    from formdb.report.records import record_history
    from formdb.services.library.mixtures import mixture_history

    with library.read() as session:
        entries = mixture_history(session, name)
    click.echo(record_history(entries, dialect=library.dialect), nl=False)


@mixture_group.command("import")
@click.argument("file", type=click.Path(path_type=Path))
@click.option("--dry-run", is_flag=True, help="Report what would change; write nothing.")
@click.option("--reason", help="Why (kept in the change log).")
@with_library
def import_cmd(app: AppContext, library: Library, file: Path, dry_run: bool,
               reason: str | None) -> None:
    """Import a table (mixture_inci, constituent_inci, percent, source[, partial]): each
    mixture it names gets exactly its rows, all or none."""
    from formdb.report.records import mixture_changes
    from formdb.services.library.mixtures import import_mixtures

    with library.write() as session:
        report = import_mixtures(session, file, user=app.user, reason=reason, dry_run=dry_run)
    click.echo(mixture_changes(report), nl=False)


@mixture_group.command("export")
@click.argument("file", type=click.Path(path_type=Path))
@force_option
@with_library
def export_cmd(app: AppContext, library: Library, file: Path, force: bool) -> None:
    """Write every declared constituent to FILE (.csv or .xlsx) in the columns import reads."""
    from formdb.report.files import output_file
    from formdb.services.library.mixtures import export_mixtures

    with output_file(file, force=force, inputs=library_files(app)) as partial, \
            library.read() as session:
        count = export_mixtures(session, partial)
    click.echo(f"wrote {count} constituent(s) to {file}")
