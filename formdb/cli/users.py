"""``formdb user add / grant / revoke / deactivate / reactivate / list``: the library's users
and their roles. Every change needs the admin role (once there is one), shows what it will
change, and is made only with ``--yes``. On PostgreSQL a user is a database login."""

from __future__ import annotations

from collections.abc import Callable
from functools import wraps
from typing import TYPE_CHECKING, Any

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.schemas.admin import Plan
    from formdb.store.library import Library


@click.group("user")
def user_group() -> None:
    """Users and roles (admin, editor, formulator, reviewer). With no admin yet, the library is
    open: everyone may do everything until the first admin is added. On PostgreSQL a user is
    a database login, made a member of the group roles of `formdb db grant-setup`."""


def _change_options(command: Callable[..., Any]) -> Callable[..., Any]:
    """``--yes`` and ``--prefix``, shared by every command that changes users or roles."""

    @click.option("--yes", is_flag=True,
                  help="Make the change. Without it the command shows what it would change "
                       "and changes nothing (exit 2).")
    @click.option("--prefix", default="formdb", show_default=True,
                  help="PostgreSQL: start of the group role names of `db grant-setup`.")
    @wraps(command)
    def run(*args: Any, **kwargs: Any) -> Any:
        return command(*args, **kwargs)

    return run


def _finish(plan: Plan) -> None:
    """Print the plan (or what was done); an unconfirmed plan ends with exit 2."""
    from formdb.errors import Unconfirmed
    from formdb.report.admin import plan_text

    click.echo(plan_text(plan), nl=False)
    if not plan.done:
        raise Unconfirmed(f"{plan.action}: nothing was changed without {plan.confirm_option}.",
                          hint=f"rerun the same command with {plan.confirm_option}")


@user_group.command("add")
@click.argument("name")
@click.option("--role", "roles", multiple=True, help="A role to grant (repeat for several).")
@click.option("--password-stdin", is_flag=True,
              help="PostgreSQL: read the login's password from the first line of standard "
                   "input (stored as a SCRAM-SHA-256 verifier made on this side). Leave it out "
                   "for certificate logins.")
@_change_options
@with_library
def add_cmd(app: AppContext, library: Library, name: str, roles: tuple[str, ...],
            password_stdin: bool, yes: bool, prefix: str) -> None:
    """Add user NAME with --role ROLE ...; only an admin may, once there is one. On PostgreSQL
    this creates the database login NAME (or adopts an existing one)."""
    from formdb.services.admin.access import add_user

    password = _read_password() if password_stdin else None
    with library.write() as session:
        plan = add_user(session, name, list(roles), actor=app.user, confirm=yes,
                        prefix=prefix, password=password)
    _finish(plan)


def _read_password() -> str:
    import sys

    from formdb.errors import InvalidData

    line = str(sys.stdin.readline()).rstrip("\r\n")
    if len(line) < 8:
        raise InvalidData("--password-stdin: the first line of standard input must hold the "
                          "password (at least 8 characters).",
                          hint="pipe it in, e.g. from a password manager")
    return line


@user_group.command("grant")
@click.argument("name")
@click.argument("role")
@_change_options
@with_library
def grant_cmd(app: AppContext, library: Library, name: str, role: str, yes: bool,
              prefix: str) -> None:
    """Give user NAME the role ROLE."""
    from formdb.services.admin.access import grant

    with library.write() as session:
        plan = grant(session, name, role, actor=app.user, confirm=yes, prefix=prefix)
    _finish(plan)


@user_group.command("revoke")
@click.argument("name")
@click.argument("role")
@_change_options
@with_library
def revoke_cmd(app: AppContext, library: Library, name: str, role: str, yes: bool,
               prefix: str) -> None:
    """Take the role ROLE away from user NAME (the last active admin keeps theirs)."""
    from formdb.services.admin.access import revoke

    with library.write() as session:
        plan = revoke(session, name, role, actor=app.user, confirm=yes, prefix=prefix)
    _finish(plan)


@user_group.command("deactivate")
@click.argument("name")
@_change_options
@with_library
def deactivate_cmd(app: AppContext, library: Library, name: str, yes: bool,
                   prefix: str) -> None:
    """Stop user NAME acting (on PostgreSQL: logging in). The user stays in the history."""
    from formdb.services.admin.access import set_active

    with library.write() as session:
        plan = set_active(session, name, False, actor=app.user, confirm=yes, prefix=prefix)
    _finish(plan)


@user_group.command("reactivate")
@click.argument("name")
@_change_options
@with_library
def reactivate_cmd(app: AppContext, library: Library, name: str, yes: bool,
                   prefix: str) -> None:
    """Let a deactivated user NAME act again, with the roles it kept."""
    from formdb.services.admin.access import set_active

    with library.write() as session:
        plan = set_active(session, name, True, actor=app.user, confirm=yes, prefix=prefix)
    _finish(plan)


@user_group.command("list")
@with_library
def list_cmd(app: AppContext, library: Library) -> None:
    """Every user with their roles, and whether the library is still open."""
    from formdb.report.admin import user_list
    from formdb.services.admin.access import is_open, list_users

    with library.read() as session:
        users = list_users(session)
        open_mode = is_open(session)
    click.echo(user_list(users, open_mode), nl=False)
