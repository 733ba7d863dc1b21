"""``formdb label FILE``: the ingredient declaration for the label."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.command("label")
@click.argument("file", type=click.Path(path_type=Path))
@click.option("--jurisdiction", default="EU", show_default=True,
              help="Whose naming and order rules apply.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@with_library
def label_cmd(app: AppContext, library: Library, file: Path, jurisdiction: str, fmt: str) -> None:
    """Print the label's ingredient list of formula FILE: above 1 % by descending weight, then
    the rest, colourants last, allergens above the labelling threshold named."""
    from formdb.report.labels import label_declaration
    from formdb.services.checking.labelling import label_file

    click.echo(label_declaration(label_file(library, file, jurisdiction), fmt), nl=False)
