"""``formdb impact INGREDIENT``: which stored formulas and signed runs a library change touches."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.command("impact")
@click.argument("ingredients", nargs=-1, required=True)
@click.option("--since", default=None, metavar="VERSION|RUN",
              help="Compare with the ingredient at this version, or as this review run used "
                   "it (default: each formula's latest review run, else the version before the "
                   "ingredient's latest change).")
@click.option("--profile", default=None, help="Profile for the re-check (default: default; a "
                                              "review run is re-checked with its own).")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@with_library
def impact_cmd(app: AppContext, library: Library, ingredients: tuple[str, ...], since: str | None,
               profile: str | None, fmt: str) -> None:
    """Re-check every stored formula that uses each INGREDIENT (by name, synonym or inside a
    mixture) and list those whose verdict or findings changed, and the signed review runs now
    stale. Give several names after an import (`formdb ingredient import --impact` does it).
    Exit 0 when nothing changed, 1 when something did, 2 when it could not be worked out."""
    touched = show_impacts(library, ingredients, since=since, profile=profile, fmt=fmt)
    click.get_current_context().exit(1 if touched else 0)


def show_impacts(library: Library, ingredients: Sequence[str], *, since: str | None = None,
                 profile: str | None = None, fmt: str = "text") -> bool:
    """Print the impact of each ingredient; True when any formula or signed run is touched."""
    from formdb.report.impact import render_impacts
    from formdb.services.review.impact import impact_of

    with library.read():  # every ingredient's impact from one state of the library
        reports = [impact_of(library, name, since=since, profile=profile)
                   for name in ingredients]
    click.echo(render_impacts(reports, fmt), nl=False)
    return any(report.changed or report.stale_runs for report in reports)
