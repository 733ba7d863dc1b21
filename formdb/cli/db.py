"""``formdb db current / upgrade / downgrade / history / backup / restore``."""

from __future__ import annotations

from pathlib import Path

import click

from formdb.cli.main import AppContext
from formdb.errors import FormdbError
from formdb.services import database


@click.group("db")
def db_group() -> None:
    """The library's schema revision, migrations, backups and restores."""


@db_group.command("current")
@click.pass_obj
def current_cmd(app: AppContext) -> None:
    """Show the library's revision and the newest this formdb knows."""
    s = database.status(app.db)
    if s.current is None:
        click.echo(f"{s.database}: no formdb schema yet (newest is {s.head}). "
                   "Run `formdb db upgrade` or `formdb init`.")
    elif s.current == s.head:
        click.echo(f"{s.database}: revision {s.current} (the newest).")
    else:
        click.echo(f"{s.database}: revision {s.current}; the newest is {s.head}. "
                   "Run `formdb db upgrade`.")


@db_group.command("history")
@click.pass_obj
def history_cmd(app: AppContext) -> None:
    """List every migration revision, oldest first, marking the library's own."""
    try:
        revisions = database.history(app.db)
    except FormdbError:  # no library here: still list the chain
        revisions = database.history(None)
    for r in revisions:
        marks = [m for m, on in (("current", r.is_current), ("head", r.is_head)) if on]
        tag = f"  ({', '.join(marks)})" if marks else ""
        click.echo(f"{r.revision}  <- {r.down_revision or 'base'}  {r.title}{tag}")


@db_group.command("upgrade")
@click.argument("revision", default="head")
@click.pass_obj
def upgrade_cmd(app: AppContext, revision: str) -> None:
    """Move the library's schema up to REVISION (default: the newest)."""
    before, after = database.move(app.db, revision, down=False)
    if before == after:
        click.echo(f"Already at revision {after}; nothing changed.")
    else:
        click.echo(f"Upgraded from revision {before or 'base'} to {after}.")


@db_group.command("downgrade")
@click.argument("revision")
@click.pass_obj
def downgrade_cmd(app: AppContext, revision: str) -> None:
    """Step the schema down to REVISION ("base" removes every table); back up first."""
    before, after = database.move(app.db, revision, down=True)
    click.echo(f"Downgraded from revision {before} to {after or 'base'}.")


@db_group.command("backup")
@click.argument("path", type=click.Path(path_type=Path, dir_okay=False))
@click.pass_obj
def backup_cmd(app: AppContext, path: Path) -> None:
    """Copy the whole library to PATH: a SQLite file, or PATH.zip (portable, any backend)."""
    report = database.backup(app.db, path)
    click.echo(f"Backed up {report.database} (revision {report.revision}, "
               f"{sum(report.tables.values())} rows in {len(report.tables)} tables) to "
               f"{report.path}.")


@db_group.command("restore")
@click.argument("path", type=click.Path(path_type=Path, dir_okay=False))
@click.pass_obj
def restore_cmd(app: AppContext, path: Path) -> None:
    """Fill an empty database (--db) from a backup PATH, all rows or none."""
    report = database.restore(app.db, path)
    click.echo(f"Restored {sum(report.tables.values())} rows in {len(report.tables)} tables "
               f"into {report.database} (revision {report.revision}).")


@db_group.command("grant-setup")
@click.option("--prefix", default="formdb", show_default=True,
              help="Start of the role names (PREFIX_editor, PREFIX_reviewer, ...).")
@click.pass_obj
def grant_setup_cmd(app: AppContext, prefix: str) -> None:
    """On PostgreSQL, create one database role per duty with matching grants; give a person's
    login a duty with `GRANT PREFIX_editor TO login` (see formdb.services.grants)."""
    from formdb.services.grants import grant_setup

    report = grant_setup(app.db, prefix)
    click.echo(f"Roles on {report.database}: {prefix}_reader (reads every table).")
    for role, tables in report.roles.items():
        click.echo(f"  {role}: writes {', '.join(tables) or '(no table yet)'}; "
                   "appends to change_log")
