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
@click.pass_obj
def init_cmd(app: AppContext, seed: bool) -> None:
    """Create the library or upgrade it to the newest schema; running it twice changes nothing."""
    click.echo(render_init(init_library(app.db, seed=seed, user=app.user)), nl=False)
