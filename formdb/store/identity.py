"""Who is acting: the identity something outside formdb vouches for, never a typed name.

- PostgreSQL: the database login the server authenticated (``session_user``: password by SCRAM,
  a client certificate, or whatever ``pg_hba.conf`` demands). A login cannot change it inside
  its session (``SET ROLE`` changes ``current_user`` only).
- SQLite: the operating-system account that runs the process, read from the kernel's effective
  user id (not from ``$USER`` or ``$LOGNAME``, which anyone may set). The file is a personal
  library: whoever can write the file can write anything in it, so this names who ran formdb,
  and proves nothing about edits made with other tools.

A claimed name (``--user``, ``FORMDB_USER``, an API caller's ``user=``) is accepted only when it
is the same identity; otherwise it is refused (``ClaimRefused``).
"""

from __future__ import annotations

import os

from sqlalchemy import Engine, text
from sqlalchemy.engine import Connection

from formdb.errors import Forbidden


class ClaimRefused(Forbidden):
    """A typed user name that is not the authenticated identity."""


def os_account() -> str:
    """The operating-system account of the effective user id."""
    try:
        import pwd

        return pwd.getpwuid(os.geteuid()).pw_name
    except (ImportError, KeyError):  # no passwd entry (some containers) or not POSIX
        import getpass

        uid = getattr(os, "geteuid", lambda: None)()
        return f"uid-{uid}" if uid is not None else getpass.getuser()


def identity_of(bind: Engine | Connection) -> str:
    """The authenticated identity behind ``bind`` (see the module docstring)."""
    if bind.dialect.name != "postgresql":
        return os_account()
    if isinstance(bind, Connection):
        return str(bind.execute(text("SELECT session_user")).scalar_one())
    with bind.connect() as conn:
        return str(conn.execute(text("SELECT session_user")).scalar_one())


def identify_location(url: str) -> tuple[str, str]:
    """(authenticated identity, dialect) for the library at ``url``; on SQLite no file is
    opened (the operating-system account needs none), on PostgreSQL one connection asks."""
    from formdb.store.db import make_engine, sqlite_path

    given = url.strip()
    if not given.startswith(("postgres://", "postgresql")) or sqlite_path(given) is not None:
        return os_account(), "sqlite"
    engine = make_engine(given)
    try:
        return identity_of(engine), "postgresql"
    finally:
        engine.dispose()


def what_vouches(dialect: str) -> str:
    """Words for the authority behind an identity, for messages."""
    return ("the database login" if dialect == "postgresql"
            else "the operating-system account")


def accept_claim(actual: str, claimed: str | None, dialect: str) -> str:
    """``actual``, after refusing a ``claimed`` name that differs from it."""
    if claimed is None or claimed.strip() == "" or claimed.strip() == actual:
        return actual
    raise ClaimRefused(
        f"you are {actual} ({what_vouches(dialect)}), not {claimed.strip()}: formdb records "
        "the identity that was authenticated, never a typed name.",
        hint="leave out --user and FORMDB_USER (or log in as that person)")


__all__ = ["ClaimRefused", "accept_claim", "identify_location", "identity_of", "os_account",
           "what_vouches"]
