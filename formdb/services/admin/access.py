"""Who may do what: users and their roles are rows of the library, checked here.

- admin: adds users and grants or revokes roles;
- editor: changes the ingredient library (add, edit, retire, restore, import);
- formulator: stores formulas;
- reviewer: signs checked runs.

Open mode: while no active user holds ``admin`` (a new library, or one whose change log was
empty when it was upgraded), every action is allowed, so a lone formulator never has to set up
users. The first admin created closes the library: from then on every guarded action checks the
acting user's roles. A refused action raises Forbidden and leaves one ``refused`` row in the
change log (entity ``access``), committed on its own so the refusal is kept while the action's
own writes are rolled back.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from formdb.errors import Conflict, Forbidden, InvalidData, NotFound
from formdb.schemas.admin import Action, Duty, UserInfo
from formdb.store.models import ChangeLogEntry, User, UserRole

ENTITY = "user"


NEEDS: dict[Action, Duty] = {
    Action.CHANGE_LIBRARY: Duty.EDITOR,
    Action.STORE_FORMULAS: Duty.FORMULATOR,
    Action.SIGN_RUNS: Duty.REVIEWER,
    Action.MANAGE_USERS: Duty.ADMIN,
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
    session.add(ChangeLogEntry(at=datetime.now(UTC), user=user, entity="access",
                               entity_key=user[:200], entity_version=None, action="refused",
                               field=action.value[:60], old_value=None, new_value=None,
                               reason=f"needs role {needed.value}"))
    session.commit()
    raise Forbidden(f"{user} may not {action.value}: that needs the role {needed.value}.",
                    hint=f"ask an admin: formdb user grant {user} {needed.value}")


def _log(session: Session, actor: str, name: str, action: str, field: str | None,
         new: str | None) -> None:
    session.add(ChangeLogEntry(at=datetime.now(UTC), user=actor, entity=ENTITY,
                               entity_key=name[:200], entity_version=None, action=action,
                               field=field, old_value=None, new_value=new, reason=None))


def _user(session: Session, name: str) -> User:
    found = session.scalar(select(User).where(User.name == name)
                           .options(selectinload(User.roles)))
    if found is None:
        raise NotFound(f"no user {name!r}.", hint="`formdb user list` shows the users")
    return found


def add_user(session: Session, name: str, roles: list[str], *, actor: str) -> UserInfo:
    """Add a user with roles; in open mode anyone may (that is how the first admin arrives)."""
    require(session, actor, Action.MANAGE_USERS)
    name = name.strip()
    if not name or len(name) > 100 or any(not c.isprintable() for c in name):
        raise InvalidData(f"user name {name!r}: give 1-100 printable characters.",
                          hint="use the login name the person works under")
    duties = sorted({parse_duty(r).value for r in roles})
    if session.scalar(select(User.id).where(User.name == name)) is not None:
        raise Conflict(f"user {name!r} already exists.",
                       hint=f"formdb user grant {name} ROLE adds a role")
    user = User(name=name, active=True, created_at=datetime.now(UTC), created_by=actor)
    user.roles = [UserRole(role=d) for d in duties]
    session.add(user)
    session.flush()
    _log(session, actor, name, "add", "roles", ", ".join(duties) or None)
    return UserInfo(name, True, tuple(duties))


def grant(session: Session, name: str, role: str, *, actor: str) -> UserInfo:
    require(session, actor, Action.MANAGE_USERS)
    duty = parse_duty(role).value
    user = _user(session, name)
    if duty not in {r.role for r in user.roles}:
        user.roles.append(UserRole(role=duty))
        session.flush()
        _log(session, actor, name, "grant", "role", duty)
    return UserInfo(user.name, user.active, tuple(sorted(r.role for r in user.roles)))


def list_users(session: Session) -> list[UserInfo]:
    users = session.scalars(select(User).options(selectinload(User.roles)).order_by(User.name))
    return [UserInfo(u.name, u.active, tuple(sorted(r.role for r in u.roles))) for u in users]
