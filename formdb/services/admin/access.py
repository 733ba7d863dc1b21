"""Who may do what: users and their roles are rows of the library, checked here.

- admin: adds, deactivates and reactivates users, grants and revokes roles, and runs the
  commands that destroy or overwrite (``db downgrade``, ``db restore``, ``init --seed`` on an
  existing library);
- editor: changes the ingredient library (add, edit, retire, restore, import);
- formulator: stores formulas;
- reviewer: signs checked runs.

Open mode: while no active user holds ``admin`` (a new library, or one whose change log was
empty when it was upgraded), every action is allowed, so a lone formulator never has to set up
users. The first admin created closes the library: from then on every guarded action checks the
acting user's roles. A refused action raises Forbidden and leaves one ``refused`` row in the
change log (entity ``access``), committed on its own so the refusal is kept while the action's
own writes are rolled back.

Who acts is the authenticated identity (formdb.store.identity), never a typed name. On
PostgreSQL a user is a database login with the group roles of its duties (services.admin.logins),
so the server refuses what these checks refuse. Every change here is planned first: without
``confirm`` the functions only return the Plan (nothing is written). Users are never deleted:
a deactivated user keeps every row of history and cannot log in (PostgreSQL) or act.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import Engine, inspect, select
from sqlalchemy.exc import DBAPIError, IntegrityError
from sqlalchemy.orm import Session, selectinload

from formdb.errors import Conflict, Forbidden, InvalidData, NotFound, quoted
from formdb.schemas.admin import Action, Duty, Plan, UserInfo
from formdb.services.admin import logins
from formdb.store.change_log import log_entry
from formdb.store.db import refusal_of
from formdb.store.models import User, UserRole

ENTITY = "user"


NEEDS: dict[Action, Duty] = {
    Action.CHANGE_LIBRARY: Duty.EDITOR,
    Action.STORE_FORMULAS: Duty.FORMULATOR,
    Action.SIGN_RUNS: Duty.REVIEWER,
    Action.MANAGE_USERS: Duty.ADMIN,
    Action.DOWNGRADE: Duty.ADMIN,
    Action.RESTORE: Duty.ADMIN,
    Action.RESEED: Duty.ADMIN,
}


def parse_duty(text: str) -> Duty:
    try:
        return Duty(text.strip().lower())
    except ValueError:
        raise InvalidData(f"{text!r} is not a role; roles are "
                          f"{', '.join(d.value for d in Duty)}.",
                          hint="give one of the roles listed") from None


def is_open(session: Session) -> bool:
    """True while no active user is an admin (see the module docstring)."""
    admin = session.scalar(select(UserRole.user_id).join(User, User.id == UserRole.user_id)
                           .where(UserRole.role == Duty.ADMIN.value, User.active.is_(True))
                           .limit(1))
    return admin is None


def admins(session: Session) -> list[str]:
    """Names of the active admins."""
    return list(session.scalars(select(User.name).join(UserRole, User.id == UserRole.user_id)
                                .where(UserRole.role == Duty.ADMIN.value, User.active.is_(True))
                                .order_by(User.name)))


def roles_of(session: Session, user: str) -> set[str]:
    return set(session.scalars(select(UserRole.role).join(User, User.id == UserRole.user_id)
                               .where(User.name == user, User.active.is_(True))))


def require(session: Session, user: str, action: Action) -> None:
    """Allow ``action`` for ``user`` or refuse it: Forbidden, and the refusal logged."""
    if is_open(session):
        return
    needed = NEEDS[action]
    if needed.value in roles_of(session, user):
        return
    session.rollback()  # nothing of the refused action is kept; the refusal is
    session.add(log_entry(at=datetime.now(UTC), user=user, entity="access", entity_key=user,
                          entity_version=None, action="refused", attempted=action.value,
                          reason=f"needs role {needed.value}"))
    try:
        session.commit()
    except DBAPIError as exc:
        # a login with no duty may not even append to the log (PostgreSQL after grant-setup):
        # the server refused the record of the refusal; the refusal itself still stands
        if not isinstance(refusal_of(exc), Forbidden):
            raise
        session.rollback()
    raise _refusal(user, action)


def require_on(engine: Engine, user: str, action: Action) -> None:
    """``require`` for administration commands that hold an engine at any revision (downgrade,
    restore, seeding). Before users existed (revision < 0009) the library is open. The refusal
    is logged only at the newest schema, where the change log has the shape the ORM writes."""
    from formdb.store.db import current_revision, head_revision, unit_of_work

    if not inspect(engine).has_table(User.__tablename__):
        return
    if current_revision(engine) == head_revision():
        with unit_of_work(engine, write=True) as session:
            require(session, user, action)
        return
    with unit_of_work(engine) as session:
        if is_open(session) or NEEDS[action].value in roles_of(session, user):
            return
    raise _refusal(user, action)


def _refusal(user: str, action: Action) -> Forbidden:
    needed = NEEDS[action]
    return Forbidden(f"{user} may not {action.value}: that needs the role {needed.value}.",
                     hint=f"ask an admin: formdb user grant {user} {needed.value} --yes")


def _log(session: Session, actor: str, name: str, action: str, field: str,
         new: str | bool | list[str] | None, old: str | bool | None = None) -> None:
    """One change-log entry for one change of a user (its field as data)."""
    change = {"field": field, "old": old, "new": new}
    session.add(log_entry(at=datetime.now(UTC), user=actor, entity=ENTITY, entity_key=name,
                          entity_version=None, action=action, changes=[change], reason=None))


def _user(session: Session, name: str) -> User:
    found = session.scalar(select(User).where(User.name == name)
                           .options(selectinload(User.roles)))
    if found is None:
        raise NotFound(f"no user {quoted(name)}.", hint="`formdb user list` shows the users")
    return found


def _info(user: User) -> UserInfo:
    return UserInfo(user.name, user.active, tuple(sorted(r.role for r in user.roles)))


def _check_prefix(prefix: str) -> None:
    from formdb.services.admin.grants import check_prefix

    check_prefix(prefix)


def _server(session: Session, server_login: bool | None) -> bool:
    return logins.on_server(session) if server_login is None else server_login


def add_user(session: Session, name: str, roles: list[str], *, actor: str,
             confirm: bool = True, prefix: str = "formdb", password: str | None = None,
             server_login: bool | None = None) -> Plan:
    """Add a user with roles; in open mode anyone may (that is how the first admin arrives).

    On PostgreSQL (``server_login`` None or True) the user is the database login ``name``:
    created (or adopted when it exists) and made a member of ``PREFIX_<duty>`` for each role."""
    require(session, actor, Action.MANAGE_USERS)
    name = name.strip()
    if not name or len(name) > 100 or any(not c.isprintable() for c in name):
        raise InvalidData(f"user name {name!r}: give 1-100 printable characters.",
                          hint="use the login name the person works under")
    duties = sorted({parse_duty(r).value for r in roles})
    server = _server(session, server_login)
    if server:
        logins.check_login_name(name)
        _check_prefix(prefix)
        logins.require_groups(session, prefix, [logins.READER, *duties])
    if session.scalar(select(User.id).where(User.name == name)) is not None:
        raise Conflict(f"user {name!r} already exists.",
                       hint=f"formdb user grant {name} ROLE --yes adds a role")
    changes = [f"add user {name} with roles {', '.join(duties) or '(none)'}"]
    if server:
        exists = logins.login_exists(session, name)
        if exists and password is not None:
            raise InvalidData(f"the database login {name} exists and keeps its password: "
                              "formdb sets the password of a login it creates only.",
                              hint="leave out --password-stdin; the person changes their own "
                                   "password with \\password in psql")
        verb = "adopt the existing database login" if exists else "create the database login"
        changes.append(f"{verb} {name}"
                       + (" with a SCRAM password" if password is not None else
                          " (no password: log in by certificate or as pg_hba.conf says)"))
        changes += [f"make {name} a member of {logins.group(prefix, d)}"
                    for d in (logins.READER, *duties)]
    info = UserInfo(name, True, tuple(duties))
    if not confirm:
        return Plan("add user", tuple(changes), False, user=info)
    user = User(name=name, active=True, created_at=datetime.now(UTC), created_by=actor)
    user.roles = [UserRole(role=d) for d in duties]
    session.add(user)
    try:
        session.flush()
    except IntegrityError:  # another admin added the same name a moment ago
        raise Conflict(f"user {name!r} already exists.",
                       hint=f"formdb user grant {name} ROLE --yes adds a role") from None
    if server:
        logins.create_or_adopt(session, name, password)
        for duty in (logins.READER, *duties):
            logins.grant_duty(session, name, prefix, duty)
    _log(session, actor, name, "add", "roles", list(duties))
    return Plan("add user", tuple(changes), True, user=info)


def grant(session: Session, name: str, role: str, *, actor: str, confirm: bool = True,
          prefix: str = "formdb", server_login: bool | None = None) -> Plan:
    """Give ``name`` the role (and on PostgreSQL the membership of its group role)."""
    require(session, actor, Action.MANAGE_USERS)
    duty = parse_duty(role).value
    user = _user(session, name)
    server = _server(session, server_login)
    if server:
        _check_prefix(prefix)
        logins.require_groups(session, prefix, [duty])
    if duty in {r.role for r in user.roles}:
        return Plan("grant a role", (), True, user=_info(user))
    changes = [f"give {name} the role {duty}"]
    if not user.active:
        changes.append(f"({name} is inactive: the role takes effect once reactivated)")
    if server and user.active:
        changes.append(f"make {name} a member of {logins.group(prefix, duty)}")
    if not confirm:
        return Plan("grant a role", tuple(changes), False, user=_info(user))
    user.roles.append(UserRole(role=duty))
    session.flush()
    if server and user.active:
        logins.grant_duty(session, name, prefix, duty)
    _log(session, actor, name, "grant", "role", duty)
    return Plan("grant a role", tuple(changes), True, user=_info(user))


def _refuse_last_admin(session: Session, user: User, what: str) -> None:
    if user.active and Duty.ADMIN.value in {r.role for r in user.roles} \
            and admins(session) == [user.name]:
        raise Forbidden(f"{user.name} is the last active admin: {what} would open the library "
                        "to everyone (open mode).",
                        hint="add or grant another admin first")


def revoke(session: Session, name: str, role: str, *, actor: str, confirm: bool = True,
           prefix: str = "formdb", server_login: bool | None = None) -> Plan:
    """Take a role away from ``name``; the grant and the revocation stay in the change log."""
    require(session, actor, Action.MANAGE_USERS)
    duty = parse_duty(role).value
    user = _user(session, name)
    held = {r.role for r in user.roles}
    if duty not in held:
        raise NotFound(f"{name} does not have the role {duty} (roles: "
                       f"{', '.join(sorted(held)) or 'none'}).",
                       hint="`formdb user list` shows every user's roles")
    if duty == Duty.ADMIN.value:
        _refuse_last_admin(session, user, "revoking its admin role")
    server = _server(session, server_login)
    if server:
        _check_prefix(prefix)
    changes = [f"take the role {duty} from {name}"]
    if server:
        changes.append(f"revoke {name}'s membership of {logins.group(prefix, duty)}")
    if not confirm:
        return Plan("revoke a role", tuple(changes), False, user=_info(user))
    user.roles = [r for r in user.roles if r.role != duty]
    session.flush()
    if server and logins.login_exists(session, name):
        logins.revoke_duty(session, name, prefix, duty)
    _log(session, actor, name, "revoke", "role", None, old=duty)
    return Plan("revoke a role", tuple(changes), True, user=_info(user))


def set_active(session: Session, name: str, active: bool, *, actor: str, confirm: bool = True,
               prefix: str = "formdb", server_login: bool | None = None) -> Plan:
    """Deactivate (or reactivate) ``name``. A deactivated user keeps every row of history, may
    not act, and on PostgreSQL cannot log in; reactivating restores the roles it kept."""
    require(session, actor, Action.MANAGE_USERS)
    user = _user(session, name)
    what = "reactivate a user" if active else "deactivate a user"
    if user.active == active:
        return Plan(what, (), True, user=_info(user))
    if not active:
        _refuse_last_admin(session, user, "deactivating it")
    server = _server(session, server_login)
    if server:
        _check_prefix(prefix)
    duties = sorted(r.role for r in user.roles)
    if active:
        changes = [f"reactivate {name} with the roles it kept: {', '.join(duties) or 'none'}"]
        if server:
            changes.append(f"let the login {name} log in again and restore its memberships")
    else:
        changes = [f"deactivate {name}: it may no longer act; its history stays"]
        if server:
            changes.append(f"make the login {name} NOLOGIN and revoke its memberships "
                           f"({', '.join(logins.group(prefix, d) for d in duties) or 'none'})")
    if not confirm:
        return Plan(what, tuple(changes), False, user=_info(user))
    user.active = active
    session.flush()
    if server:
        if active:
            logins.require_groups(session, prefix, duties)
            logins.enable(session, name, prefix, duties)
        else:
            logins.disable(session, name, prefix, duties)
    _log(session, actor, name, "reactivate" if active else "deactivate", "active", active,
         old=not active)
    return Plan(what, tuple(changes), True, user=_info(user))


def list_users(session: Session) -> list[UserInfo]:
    users = session.scalars(select(User).options(selectinload(User.roles)).order_by(User.name))
    return [_info(u) for u in users]
