"""``formdb init [--seed]``: create or upgrade the library, optionally load the bundled data."""

from __future__ import annotations

import click

from formdb.cli.main import AppContext
from formdb.report.admin import render_init
from formdb.services.seed.setup import init_library


@click.command("init")
@click.option("--seed", is_flag=True,
              help="Also load the bundled seed library (ingredients with sourced values, limits, "
                   "incompatibilities, soap pairs). Safe to repeat: unchanged rows stay as they "
                   "are.")
@click.option("--yes", is_flag=True,
              help="With --seed on a library that exists: add what is missing. Without it the "
                   "command shows what seeding would add and changes nothing (exit 2). Needs the "
                   "admin role; values the library holds are never replaced.")
@click.pass_obj
def init_cmd(app: AppContext, seed: bool, yes: bool) -> None:
    """Create the library or upgrade it to the newest schema; running it twice changes nothing."""
    from formdb.errors import Unconfirmed

    report = init_library(app.db, seed=seed, user=app.user, confirm=yes)
    click.echo(render_init(report), nl=False)
    if not report.done:
        raise Unconfirmed("seeding an existing library: nothing was changed without --yes.",
                          hint="rerun the same command with --yes")
