"""``formdb formula import/list/show/export``: formulas kept in the library as TOML."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, force_option, library_files, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("formula")
def formula_group() -> None:
    """Stored formulas: TOML files in, TOML out."""


@formula_group.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path(path_type=Path))
@click.option("--reason", help="Why these formulas are stored or changed (kept in the change log).")
@with_library
def import_cmd(app: AppContext, library: Library, files: tuple[Path, ...],
               reason: str | None) -> None:
    """Store formula FILES (all or none); every ingredient must be in the library."""
    from formdb.services.library.formulas import import_formulas

    report = import_formulas(library, list(files), user=app.user, reason=reason)
    for label, names in (("added", report.added), ("changed", report.changed),
                         ("unchanged", report.unchanged)):
        for name in names:
            click.echo(f"{label}: {name}")
    click.echo(f"{len(report.added)} added, {len(report.changed)} changed, "
               f"{len(report.unchanged)} unchanged")


@formula_group.command("list")
@with_library
def list_cmd(app: AppContext, library: Library) -> None:
    """List stored formulas with version, lines and last change."""
    from formdb.report.library import formula_list
    from formdb.services.library.formulas import list_formulas

    click.echo(formula_list(list_formulas(library)), nl=False)


@formula_group.command("show")
@click.argument("name")
@with_library
def show_cmd(app: AppContext, library: Library, name: str) -> None:
    """Print a stored formula's TOML exactly as imported."""
    from formdb.services.library.formulas import formula_text

    click.echo(formula_text(library, name), nl=False)


@formula_group.command("export")
@click.argument("name")
@click.argument("file", type=click.Path(path_type=Path))
@force_option
@with_library
def export_cmd(app: AppContext, library: Library, name: str, file: Path, force: bool) -> None:
    """Write a stored formula to FILE (TOML, byte for byte as imported)."""
    from formdb.report.files import check_output, write_output
    from formdb.services.library.formulas import formula_text

    check_output(file, force=force, inputs=library_files(app))
    text = formula_text(library, name)
    write_output(file, text, force=force, inputs=library_files(app))
    click.echo(f"wrote {file}")
