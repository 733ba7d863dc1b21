"""``formdb lists ...``: import the Commission's annex exports, see what is in force."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("lists")
def lists_group() -> None:
    """Regulatory lists: the EU annex exports as dated snapshots."""


@lists_group.command("import")
@click.argument("files", nargs=-1, required=True,
                type=click.Path(path_type=Path, dir_okay=False))
@click.option("--dry-run", is_flag=True, help="Show what would change; write nothing.")
@click.option("--allow-older", is_flag=True,
              help="Put an export in force that is older than the one in force.")
@click.option("--all-unparsed", is_flag=True, help="List every part not structured.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@with_library
def import_cmd(app: AppContext, library: Library, files: tuple[Path, ...], dry_run: bool,
               allow_older: bool, all_unparsed: bool, fmt: str) -> None:
    """Import annex exports (COSING_Annex_II_v2.txt ... VI), all of them or none. A newer export
    replaces the one in force and lists what changed, old -> new, and the stored formulas and
    signed review runs it touches. A reference number the export repeats for another substance,
    or for the same one under another amending act, is kept as its own entry; the same number for
    the same substance under the same act (a file concatenated or damaged) is refused."""
    from formdb.report.lists import import_json, import_text
    from formdb.services.lists.importing import import_lists

    result = import_lists(library, files, user=app.user, dry_run=dry_run,
                          allow_older=allow_older)
    if fmt == "json":
        click.echo(import_json(result), nl=False)
    else:
        click.echo(import_text(result, show_unparsed=10**9 if all_unparsed else 40), nl=False)


@lists_group.command("status")
@with_library
def status_cmd(app: AppContext, library: Library) -> None:
    """The snapshots in force: annex, the export's dates, entries, file hash."""
    from formdb.report.lists import snapshots_text
    from formdb.services.lists.reading import lists_in_force

    click.echo(snapshots_text(lists_in_force(library)), nl=False)


@lists_group.command("show")
@click.argument("reference")
@with_library
def show_cmd(app: AppContext, library: Library, reference: str) -> None:
    """One entry in force, structured: e.g. `formdb lists show III/98`."""
    from formdb.report.lists import entry_text
    from formdb.services.lists.reading import show_entry

    click.echo("\n".join(entry_text(e) for e in show_entry(library, reference)), nl=False)
