"""``formdb user add / list / grant``: the library's users and their roles."""

from __future__ import annotations

from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("user")
def user_group() -> None:
    """Users and roles (admin, editor, formulator, reviewer). With no admin yet, the library is
    open: everyone may do everything until the first admin is added."""


@user_group.command("add")
@click.argument("name")
@click.option("--role", "roles", multiple=True, help="A role to grant (repeat for several).")
@with_library
def add_cmd(app: AppContext, library: Library, name: str, roles: tuple[str, ...]) -> None:
    """Add user NAME with --role ROLE ...; only an admin may, once there is one."""
    from formdb.report.admin import user_added
    from formdb.services.admin.access import add_user

    with library.write() as session:
        info = add_user(session, name, list(roles), actor=app.user)
    click.echo(user_added(info), nl=False)


@user_group.command("grant")
@click.argument("name")
@click.argument("role")
@with_library
def grant_cmd(app: AppContext, library: Library, name: str, role: str) -> None:
    """Give user NAME the role ROLE."""
    from formdb.report.admin import user_granted
    from formdb.services.admin.access import grant

    with library.write() as session:
        info = grant(session, name, role, actor=app.user)
    click.echo(user_granted(info), nl=False)


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
