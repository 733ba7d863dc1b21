"""``formdb db current / upgrade / downgrade / history / backup / restore``."""

from __future__ import annotations

from pathlib import Path

import click

from formdb.cli.main import AppContext
from formdb.errors import FormdbError
from formdb.report import admin as report
from formdb.services.admin import database


@click.group("db")
def db_group() -> None:
    """The library's schema revision, migrations, backups and restores."""


@db_group.command("current")
@click.pass_obj
def current_cmd(app: AppContext) -> None:
    """Show the library's revision and the newest this formdb knows."""
    click.echo(report.db_status(database.status(app.db)), nl=False)


@db_group.command("history")
@click.pass_obj
def history_cmd(app: AppContext) -> None:
    """List every migration revision, oldest first, marking the library's own."""
    try:
        revisions = database.history(app.db)
    except FormdbError:  # no library here: still list the chain
        revisions = database.history(None)
    click.echo(report.db_history(revisions), nl=False)


@db_group.command("upgrade")
@click.argument("revision", default="head")
@click.pass_obj
def upgrade_cmd(app: AppContext, revision: str) -> None:
    """Move the library's schema up to REVISION (default: the newest)."""
    before, after = database.move(app.db, revision, down=False)
    click.echo(report.db_moved(before, after, down=False), nl=False)


@db_group.command("downgrade")
@click.argument("revision")
@click.pass_obj
def downgrade_cmd(app: AppContext, revision: str) -> None:
    """Step the schema down to REVISION ("base" removes every table); back up first."""
    before, after = database.move(app.db, revision, down=True)
    click.echo(report.db_moved(before, after, down=True), nl=False)


@db_group.command("backup")
@click.argument("path", type=click.Path(path_type=Path, dir_okay=False))
@click.pass_obj
def backup_cmd(app: AppContext, path: Path) -> None:
    """Copy the whole library to PATH: a SQLite file, or PATH.zip (portable, any backend)."""
    click.echo(report.db_backed_up(database.backup(app.db, path)), nl=False)


@db_group.command("restore")
@click.argument("path", type=click.Path(path_type=Path, dir_okay=False))
@click.pass_obj
def restore_cmd(app: AppContext, path: Path) -> None:
    """Fill an empty database (--db) from a backup PATH, all rows or none."""
    click.echo(report.db_restored(database.restore(app.db, path)), nl=False)


@db_group.command("grant-setup")
@click.option("--prefix", default="formdb", show_default=True,
              help="Start of the role names (PREFIX_editor, PREFIX_reviewer, ...).")
@click.pass_obj
def grant_setup_cmd(app: AppContext, prefix: str) -> None:
    """On PostgreSQL, create one database role per duty with matching grants; give a person's
    login a duty with `GRANT PREFIX_editor TO login` (see formdb.services.admin.grants)."""
    from formdb.services.admin.grants import grant_setup

    click.echo(report.db_grants(grant_setup(app.db, prefix), prefix), nl=False)
