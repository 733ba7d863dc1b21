"""On PostgreSQL a formdb user IS a database login: ``user add`` creates the login role (or
adopts one a database administrator made, e.g. for certificate logins) and makes it a member
of the group roles of its duties (``PREFIX_editor``... from ``formdb db grant-setup``), so the
server enforces what the services check, and of ``PREFIX_reader`` (reading needs no role).
Revoking a duty revokes the membership; deactivating a user makes the login NOLOGIN and drops
its memberships. Everything runs inside the caller's transaction (role changes are
transactional on PostgreSQL), so a refused or failed change
leaves no half-made login.

Passwords (SCRAM): the verifier is computed on the client (libpq's PQencryptPasswordConn) and
only the ``SCRAM-SHA-256$...`` verifier is sent, so the clear password never reaches the server
or its logs. A certificate login needs no password: ``pg_hba.conf`` maps the certificate's CN to
the login (see the README's team section).

Every change goes through the server function ``formdb_login`` (store.server_audit, installed
by grant-setup), which checks that the caller is an admin and records the change with
``session_user``. Admin logins get no CREATEROLE: with it, on PostgreSQL 15, an admin could set
another person's password and log in as them, or grant itself any role, and nothing would
record it.
"""

from __future__ import annotations

import re

from sqlalchemy import text
from sqlalchemy.orm import Session

from formdb.errors import ConfigError, InvalidData

READER = "reader"  # every login reads the library (reading needs no formdb role)
LOGIN_NAME = re.compile(r"^[a-z_][a-z0-9_.@-]{0,62}$")


def on_server(session: Session) -> bool:
    return session.get_bind().dialect.name == "postgresql"


def check_login_name(name: str) -> None:
    if not LOGIN_NAME.match(name):
        raise InvalidData(f"user name {name!r}: on PostgreSQL a user is a database login; use "
                          "lower-case letters, digits and _ . @ - (at most 63, starting with a "
                          "letter or _).", hint="for example a.reviewer or ana_lopez")


def group(prefix: str, duty: str) -> str:
    return f"{prefix}_{duty}"


def _role_exists(session: Session, role: str) -> bool:
    return session.execute(text("SELECT 1 FROM pg_roles WHERE rolname = :r"),
                           {"r": role}).scalar() is not None


def require_groups(session: Session, prefix: str, duties: list[str]) -> None:
    missing = [group(prefix, d) for d in duties if not _role_exists(session, group(prefix, d))]
    if missing:
        raise ConfigError(f"the database has no group role {', '.join(missing)}: the duties' "
                          "roles are made by `formdb db grant-setup`.",
                          hint=f"run formdb db grant-setup --prefix {prefix} first")


def login_exists(session: Session, name: str) -> bool:
    return _role_exists(session, name)


def _call(session: Session, op: str, name: str, group_role: str | None = None,
          verifier: str | None = None) -> None:
    """One change of a login through the server's ``formdb_login`` (see the module docstring)."""
    present = session.execute(text("SELECT to_regprocedure('formdb_login(text, text, text, "
                                   "text)')")).scalar()
    if present is None:
        raise ConfigError("this database has no formdb_login function: logins are managed "
                          "through the functions `formdb db grant-setup` installs.",
                          hint="the database owner runs formdb db grant-setup")
    session.execute(text("SELECT formdb_login(:op, :who, :grp, :verifier)"),
                    {"op": op, "who": name, "grp": group_role, "verifier": verifier})


def create_or_adopt(session: Session, name: str, password: str | None) -> bool:
    """Make the login ``name`` (True) or adopt the role that exists (False); a new login gets
    the password verifier when one is given (an existing one keeps its own password)."""
    made = not login_exists(session, name)
    verifier = _verifier(session, name, password) if password is not None else None
    _call(session, "create", name, verifier=verifier)
    return made


def _verifier(session: Session, name: str, password: str) -> str:
    """The SCRAM-SHA-256 verifier of ``password``, computed by libpq on this side."""
    raw = session.connection().connection.driver_connection
    pgconn = getattr(raw, "pgconn", None)
    if pgconn is None:  # pragma: no cover - psycopg 3 is the only PostgreSQL driver formdb uses
        raise ConfigError("this database driver cannot hash a password on the client.",
                          hint="use psycopg 3 (postgresql+psycopg://)")
    verifier = pgconn.encrypt_password(password.encode(), name.encode(), b"scram-sha-256")
    text_value = bytes(verifier).decode("ascii")
    if "'" in text_value:  # pragma: no cover - a verifier is base64 and $:
        raise ConfigError("unexpected password verifier.", hint="report this with --debug")
    return text_value


def grant_duty(session: Session, name: str, prefix: str, duty: str) -> None:
    _call(session, "grant", name, group(prefix, duty))


def revoke_duty(session: Session, name: str, prefix: str, duty: str) -> None:
    if _role_exists(session, group(prefix, duty)):
        _call(session, "revoke", name, group(prefix, duty))


def disable(session: Session, name: str, prefix: str, duties: list[str]) -> None:
    """NOLOGIN and no duty's membership: the person can neither log in nor act."""
    if login_exists(session, name):
        _call(session, "disable", name)


def enable(session: Session, name: str, prefix: str, duties: list[str]) -> None:
    _call(session, "enable", name)
    for duty in (READER, *duties):
        grant_duty(session, name, prefix, duty)
