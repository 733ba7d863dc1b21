"""``formdb init [--seed]``: create or upgrade the library, optionally load the bundled data."""

from __future__ import annotations

import click

from formdb.cli.main import AppContext
from formdb.schemas.admin import InitReport
from formdb.services.setup import init_library


def render_init(report: InitReport) -> list[str]:
    """The lines ``init`` prints: where, which revision, and what seeding added or left alone."""
    if report.created:
        lines = [f"Created the library {report.database} at revision {report.revision}."]
    elif report.upgraded:
        lines = [f"Upgraded the library {report.database} from revision "
                 f"{report.revision_before} to {report.revision}."]
    else:
        lines = [f"The library {report.database} is already at revision {report.revision} "
                 "(the newest)."]
    if report.builtin_sources_added:
        lines.append(f"Added {report.builtin_sources_added} built-in sources "
                     "(rule-of-thumb, from-memory).")
    if report.seeded:
        lines.append("Seed library:")
        width = max(len(t) for t in report.seeded)
        for table, counts in report.seeded.items():
            lines.append(f"  {table:<{width}}  {counts.added} added, {counts.changed} changed, "
                         f"{counts.unchanged} unchanged")
    if not report.changed_anything:
        lines.append("Nothing changed.")
    return lines


@click.command("init")
@click.option("--seed", is_flag=True,
              help="Also load the bundled seed library (ingredients with sourced values, limits, "
                   "incompatibilities, soap pairs). Safe to repeat: unchanged rows stay as they "
                   "are.")
@click.pass_obj
def init_cmd(app: AppContext, seed: bool) -> None:
    """Create the library or upgrade it to the newest schema; running it twice changes nothing."""
    report = init_library(app.db, seed=seed, user=app.user)
    for line in render_init(report):
        click.echo(line)
