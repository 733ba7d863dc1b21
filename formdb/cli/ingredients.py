"""``formdb ingredient ...``: the shared ingredient library from the command line.

Thin: each command parses its options, calls one function of ``formdb.services.library.ingredients``
inside one unit of work, and renders the result. A file or edit with several problems prints every
one of them (one ``Error:`` line each) and exits 2.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, Number, force_option, library_files, with_library
from formdb.report.library import record_changes

if TYPE_CHECKING:
    from formdb.store.library import Library





def _width() -> int | None:
    """The terminal's width for tables; None (160 columns) into a pipe or file."""
    import shutil

    return shutil.get_terminal_size().columns if sys.stdout.isatty() else None


def _assignments(values: Sequence[str]) -> list[tuple[str, str]]:
    out = []
    for item in values:
        field, sep, value = item.partition("=")
        if not sep or not field.strip():
            raise click.BadParameter(f"{item!r} is not field=value (for example hlb=15)",
                                     param_hint="--set")
        out.append((field.strip(), value))
    return out


@click.group("ingredient")
def ingredient_group() -> None:
    """The shared ingredient library: list, show, add, edit, retire, history, import, export."""


_SET = click.option("--set", "sets", multiple=True, metavar="FIELD=VALUE[@SOURCE]",
                    help="A field and its value, e.g. hlb=15@supplier-x-tds-2025 or "
                         "density='0.92 g/cm3' (repeatable; an empty value clears it; @KEY "
                         "gives this value its own source).")
_ACCEPT = click.option("--accept-unusual", "accept_unusual", is_flag=True,
                       help="Write values the plausibility checks find unusual (HLB against "
                            "solubility, required HLB, density, use range above the legal "
                            "maximum, CAS or look-alike name of another substance).")
_SOURCE = click.option("--source", help="Source key of the values given with --set "
                       "(a key of the sources table, or rule-of-thumb / from-memory).")


@ingredient_group.command("list")
@click.option("--role", help="Only ingredients with this role (e.g. emulsifier).")
@click.option("--format", "fmt", type=click.Choice(["table", "csv", "json"]), default="table",
              show_default=True)
@click.option("--include-retired", is_flag=True, help="Also list retired ingredients.")
@with_library
def list_cmd(app: AppContext, library: Library, role: str | None, fmt: str,
             include_retired: bool) -> None:
    """List the library's ingredients with their main emulsion properties."""
    from formdb.report.library import ingredient_list
    from formdb.services.library.ingredients import list_ingredients

    with library.read() as session:
        records = list_ingredients(session, role=role, include_retired=include_retired)
    click.echo(ingredient_list(records, fmt, include_retired=include_retired,
                               width=_width()), nl=False)


@ingredient_group.command("show")
@click.argument("name")
@with_library
def show_cmd(app: AppContext, library: Library, name: str) -> None:
    """Every property of NAME with its value, unit, source, evidence and citation."""
    from formdb.report.library import ingredient_detail
    from formdb.report.lists import ingredient_entries_text
    from formdb.services.library.ingredients import show_ingredient
    from formdb.services.lists.reading import entries_for_record

    with library.read() as session:
        detail = show_ingredient(session, name)
        origin, entries = entries_for_record(session, detail.record)
    click.echo(ingredient_detail(detail, width=_width()), nl=False)
    click.echo(ingredient_entries_text(origin, entries), nl=False)


@ingredient_group.command("add")
@click.argument("name")
@_SET
@_SOURCE
@click.option("--synonym", "synonyms", multiple=True, help="Another name (repeatable).")
@click.option("--cas", "cas", multiple=True, help="A CAS number (repeatable).")
@click.option("--role", "roles", multiple=True, help="A role such as emulsifier (repeatable).")
@click.option("--reason", help="Why it is added (kept in the change log).")
@_ACCEPT
@with_library
def add_cmd(app: AppContext, library: Library, name: str, sets: tuple[str, ...], source: str | None,
            synonyms: tuple[str, ...], cas: tuple[str, ...], roles: tuple[str, ...],
            reason: str | None, accept_unusual: bool) -> None:
    """Add ingredient NAME (its INCI name) to the library."""
    from formdb.services.library.ingredients import add_ingredient

    with library.write() as session:
        report = add_ingredient(session, name, _assignments(sets), user=app.user, source=source,
                                synonyms=synonyms, cas=cas, roles=roles, reason=reason,
                                confirm=accept_unusual)
    click.echo(record_changes(report, "added"), nl=False)


@ingredient_group.command("edit")
@click.argument("name")
@_SET
@_SOURCE
@click.option("--reason", help="Why it changes (required for published values).")
@click.option("--expect-version", type=Number(int, 1, 2**31 - 1),
              help="The version you read; refused if someone changed it since.")
@_ACCEPT
@with_library
def edit_cmd(app: AppContext, library: Library, name: str, sets: tuple[str, ...],
             source: str | None, reason: str | None, expect_version: int | None,
             accept_unusual: bool) -> None:
    """Change fields of ingredient NAME: --set hlb=15 --source KEY --reason '...'."""
    from formdb.services.library.ingredients import edit_ingredient

    with library.write() as session:
        report = edit_ingredient(session, name, _assignments(sets), user=app.user, reason=reason,
                                 source=source, expect_version=expect_version,
                                 confirm=accept_unusual)
    click.echo(record_changes(report, "changed"), nl=False)


@ingredient_group.command("verify")
@click.argument("name")
@click.option("--value", "values", multiple=True, required=True, metavar="PROPERTY",
              help="A property whose value the source confirms (repeatable), e.g. hlb.")
@click.option("--source", required=True, help="Key of the source that confirms the values.")
@click.option("--note", help="Where in the source (table, page); replaces the values' notes.")
@click.option("--reason", help="Why (kept in the change log; required for published values).")
@click.option("--expect-version", type=Number(int, 1, 2**31 - 1),
              help="The version you read; refused if someone changed it since.")
@with_library
def verify_cmd(app: AppContext, library: Library, name: str, values: tuple[str, ...],
               source: str, note: str | None, reason: str | None,
               expect_version: int | None) -> None:
    """Attach a source to values of NAME without retyping them; their grade becomes the
    source's."""
    from formdb.services.library.ingredients import verify_ingredient

    with library.write() as session:
        report = verify_ingredient(session, name, values, source, user=app.user, reason=reason,
                                   note=note, expect_version=expect_version)
    click.echo(record_changes(report, "verified"), nl=False)


@ingredient_group.command("retire")
@click.argument("name")
@click.option("--reason", required=True, help="Why it is taken out of use.")
@with_library
def retire_cmd(app: AppContext, library: Library, name: str, reason: str) -> None:
    """Take NAME out of use (kept, with its history, for old formulas)."""
    from formdb.services.library.ingredients import retire_ingredient

    with library.write() as session:
        report = retire_ingredient(session, name, user=app.user, reason=reason)
    click.echo(record_changes(report, "retired"), nl=False)


@ingredient_group.command("restore")
@click.argument("name")
@click.option("--reason", required=True, help="Why it comes back into use.")
@with_library
def restore_cmd(app: AppContext, library: Library, name: str, reason: str) -> None:
    """Bring a retired ingredient back into use."""
    from formdb.services.library.ingredients import restore_ingredient

    with library.write() as session:
        report = restore_ingredient(session, name, user=app.user, reason=reason)
    click.echo(record_changes(report, "restored"), nl=False)


@ingredient_group.command("history")
@click.argument("name")
@with_library
def history_cmd(app: AppContext, library: Library, name: str) -> None:
    """Who changed NAME, when, what (old -> new) and why."""
    from formdb.report.library import ingredient_history as history_text
    from formdb.services.library.ingredients import ingredient_history

    with library.read() as session:
        entries = ingredient_history(session, name)
    click.echo(history_text(entries, width=_width(), dialect=library.dialect), nl=False)


@ingredient_group.command("import")
@click.argument("file", type=click.Path(path_type=Path))
@click.option("--dry-run", is_flag=True, help="Report what would change; write nothing.")
@click.option("--reason", help="Why the table is imported (kept in the change log).")
@click.option("--impact", "show_impact", is_flag=True,
              help="Then re-check the stored formulas and signed runs the changed rows touch.")
@_ACCEPT
@with_library
def import_cmd(app: AppContext, library: Library, file: Path, dry_run: bool, reason: str | None,
               show_impact: bool, accept_unusual: bool) -> None:
    """Import a CSV or XLSX ingredient table, all rows or none."""
    from formdb.report.library import import_summary
    from formdb.services.library.ingredients import import_table

    with library.write() as session:
        report = import_table(session, file, user=app.user, reason=reason, dry_run=dry_run,
                              confirm=accept_unusual)
    click.echo(import_summary(report), nl=False)
    if show_impact and report.changed and not dry_run:
        from formdb.cli.impact import show_impacts

        show_impacts(library, list(report.changed))


@ingredient_group.command("export")
@click.argument("file", type=click.Path(path_type=Path))
@click.option("--role", help="Only ingredients with this role.")
@click.option("--include-retired", is_flag=True, help="Also export retired ingredients.")
@force_option
@with_library
def export_cmd(app: AppContext, library: Library, file: Path, role: str | None,
               include_retired: bool, force: bool) -> None:
    """Write the library to FILE (.csv or .xlsx) in the columns `import` reads."""
    from formdb.report.files import output_file
    from formdb.services.library.ingredients import export_table

    with output_file(file, force=force, inputs=library_files(app)) as partial, \
            library.read() as session:
        count = export_table(session, partial, role=role, include_retired=include_retired)
    click.echo(f"wrote {count} ingredient(s) to {file}")
