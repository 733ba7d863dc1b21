"""``formdb db current / upgrade / downgrade / history / backup / restore``."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import click

from formdb.cli.main import AppContext, force_option, library_files
from formdb.errors import FormdbError, Unconfirmed
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
@click.option("--yes", is_flag=True,
              help="Make the downgrade. Without it the command shows what would be removed "
                   "(rehearsed and rolled back) and changes nothing (exit 2).")
@click.option("--backup", "backup_to", type=click.Path(path_type=Path, dir_okay=False),
              default=None, help="Write a full backup (PATH.zip) before stepping down.")
@click.option("--discard-sealed-history", is_flag=True,
              help="Allow a downgrade that destroys sealed audit records (needs --backup).")
@click.pass_obj
def downgrade_cmd(app: AppContext, revision: str, yes: bool, backup_to: Path | None,
                  discard_sealed_history: bool) -> None:
    """Step the schema down to REVISION ("base" removes every table). Admin only; shows what
    goes and needs --yes; refused while it would destroy sealed audit records."""
    from formdb.report.files import check_output, output_file

    def write_backup() -> None:
        assert backup_to is not None
        with output_file(backup_to, inputs=library_files(app)) as partial:
            database.backup(app.db, partial)

    if backup_to is not None:  # refused before anything is planned, like every output
        check_output(backup_to, inputs=library_files(app))
    plan = database.downgrade(app.db, revision, user=app.user, confirm=yes,
                              discard_sealed_history=discard_sealed_history,
                              backup_to=backup_to,
                              write_backup=write_backup if backup_to is not None else None)
    click.echo(report.plan_text(plan), nl=False)
    if not plan.done:
        raise Unconfirmed("db downgrade: nothing was changed without --yes.",
                          hint="rerun the same command with --yes")


@db_group.command("backup")
@click.argument("path", type=click.Path(path_type=Path, dir_okay=False))
@force_option
@click.pass_obj
def backup_cmd(app: AppContext, path: Path, force: bool) -> None:
    """Copy the whole library to PATH: a SQLite file, or PATH.zip (portable, any backend)."""
    from formdb.report.files import output_file

    with output_file(path, force=force, inputs=library_files(app)) as partial:
        made = database.backup(app.db, partial)
    click.echo(report.db_backed_up(dataclasses.replace(made, path=path)), nl=False)


@db_group.command("restore")
@click.argument("path", type=click.Path(path_type=Path, dir_okay=False))
@click.option("--yes", is_flag=True,
              help="Keep the restored rows. Without it the restore runs, is rolled back, and "
                   "the command shows what it would restore (exit 2).")
@click.option("--accept-broken-chains", is_flag=True,
              help="Restore a backup whose audit chains do not verify, as it is.")
@click.pass_obj
def restore_cmd(app: AppContext, path: Path, yes: bool, accept_broken_chains: bool) -> None:
    """Fill an empty database (--db) from a backup PATH, all rows or none. Only an admin of
    the library in the backup may; its audit chains are verified first."""
    plan = database.restore(app.db, path, user=app.user, confirm=yes,
                            accept_broken_chains=accept_broken_chains)
    click.echo(report.plan_text(plan), nl=False)
    if not plan.done:
        raise Unconfirmed("db restore: nothing was restored without --yes.",
                          hint="rerun the same command with --yes")


@db_group.command("grant-setup")
@click.option("--prefix", default="formdb", show_default=True,
              help="Start of the role names (PREFIX_editor, PREFIX_reviewer, ...).")
@click.pass_obj
def grant_setup_cmd(app: AppContext, prefix: str) -> None:
    """On PostgreSQL, create one database role per duty with matching grants; give a person's
    login a duty with `GRANT PREFIX_editor TO login` (see formdb.services.admin.grants)."""
    from formdb.services.admin.grants import grant_setup

    click.echo(report.db_grants(grant_setup(app.db, prefix), prefix), nl=False)
