"""``formdb db grant-setup``: PostgreSQL group roles mirroring formdb's duties, so the server
itself refuses what the service layer refuses (defence in depth for a shared library).

Creates (or refreshes) one NOLOGIN role per duty, named ``PREFIX_reader``, ``PREFIX_editor``,
``PREFIX_formulator``, ``PREFIX_reviewer`` and ``PREFIX_admin``:
- reader: connect, and read every table;
- editor: reader + write the library tables (ingredients and their rows, sources, limits and
  every other reference table);
- formulator: reader + write ``formulas``;
- reviewer: reader + write the review and sign-off tables (names starting ``review`` or
  ``sign``);
- admin: reader + write ``users`` and ``user_roles``, and append to the signing keys and
  review policy (``key_enrolments``, ``policy_versions``); logins are changed only through
  ``formdb_login`` (admin logins hold no CREATEROLE: grant-setup takes it away);
No duty may INSERT, UPDATE or DELETE the sealed tables (``change_log``, review runs and
signatures, key enrolments, policy versions) nor ``server_change_log``: rows reach the sealed
tables only through the server function ``formdb_append``, which checks the caller's duty,
and a trigger checks that each row names the login that writes it; statement triggers record
every change to the library tables, plain SQL included, with ``session_user``
(formdb.store.server_audit).
A person's login gets a duty with ``GRANT PREFIX_editor TO their_login``. Run it again after
``formdb db upgrade`` so new tables are covered. All in one transaction.
"""

from __future__ import annotations

import re

from sqlalchemy import Connection, inspect, text

from formdb.errors import ConfigError, InvalidData
from formdb.schemas.admin import GrantReport
from formdb.store import db as store
from formdb.store.sealing import SEALED_COLUMNS
from formdb.store.server_audit import CHANGE_TABLE, install

FORMULA_TABLES = frozenset({"formulas"})
ADMIN_TABLES = frozenset({"users", "user_roles", "key_enrolments", "policy_versions"})
LOG_TABLE = "change_log"
SERVER_WRITTEN = frozenset({*SEALED_COLUMNS, CHANGE_TABLE})  # via functions and triggers only
NOT_LIBRARY = FORMULA_TABLES | ADMIN_TABLES | SERVER_WRITTEN | {"alembic_version"}
_NAME = re.compile(r"^[a-z][a-z0-9_]{0,40}$")


def _is_review(table: str) -> bool:
    return table.startswith(("review", "sign"))


def check_prefix(prefix: str) -> None:
    if not _NAME.match(prefix):
        raise InvalidData(f"--prefix {prefix!r}: use lower-case letters, digits and _ "
                          "(starting with a letter).", hint="for example --prefix formdb")


def grant_setup(url: str, prefix: str = "formdb") -> GrantReport:
    check_prefix(prefix)
    engine = store.open_library(url)
    shown = store.display_url(engine.url)
    try:
        if engine.dialect.name != "postgresql":
            raise ConfigError(f"{shown} is a SQLite file: database roles exist on PostgreSQL "
                              "only.", hint="a SQLite library is protected by file permissions")
        return store.in_role_catalog_transaction(engine, lambda conn: _grant(conn, shown, prefix))
    finally:
        engine.dispose()


def _grant(conn: Connection, shown: str, prefix: str) -> GrantReport:
    """One attempt, inside the caller's role-catalog transaction."""
    tables = sorted(inspect(conn).get_table_names())
    database = conn.execute(text("SELECT current_database()")).scalar_one()
    schema = conn.execute(text("SELECT current_schema()")).scalar_one()
    writes = {
        "editor": [t for t in tables if t not in NOT_LIBRARY and not _is_review(t)],
        "formulator": [t for t in tables if t in FORMULA_TABLES],
        "reviewer": [t for t in tables if _is_review(t) and t not in SERVER_WRITTEN],
        "admin": [t for t in tables if t in ADMIN_TABLES and t not in SERVER_WRITTEN],
    }
    roles = [f"{prefix}_{d}" for d in ("reader", *writes)]
    for role in roles:
        exists = conn.execute(text("SELECT 1 FROM pg_roles WHERE rolname = :r"),
                              {"r": role}).scalar()
        if not exists:
            conn.execute(text(f'CREATE ROLE "{role}" NOLOGIN'))
        conn.execute(text(f'GRANT CONNECT ON DATABASE "{database}" TO "{role}"'))
        conn.execute(text(f'GRANT USAGE ON SCHEMA "{schema}" TO "{role}"'))
        conn.execute(text(f'REVOKE ALL ON ALL TABLES IN SCHEMA "{schema}" FROM "{role}"'))
        conn.execute(text(f'GRANT SELECT ON ALL TABLES IN SCHEMA "{schema}" TO "{role}"'))
    for duty, owned in writes.items():
        role = f"{prefix}_{duty}"
        for table in owned:
            if table not in SERVER_WRITTEN:
                conn.execute(text(f'GRANT INSERT, UPDATE, DELETE ON '
                                  f'"{schema}"."{table}" TO "{role}"'))
        conn.execute(text(f'GRANT USAGE ON ALL SEQUENCES IN SCHEMA "{schema}" TO "{role}"'))
    install(conn, schema, prefix, [f"{prefix}_{d}" for d in writes])
    return GrantReport(shown, {f"{prefix}_{d}": t for d, t in writes.items()},
                       _take_createrole(conn, f"{prefix}_admin"))


def _take_createrole(conn: Connection, admin_group: str) -> tuple[str, ...]:
    """NOCREATEROLE for the admin group's logins (an earlier formdb gave it to them): on
    PostgreSQL 15 a CREATEROLE login may set any other login's password and grant itself any
    role unrecorded; logins now change only through formdb_login. The login running
    grant-setup (it owns that function) and superusers are left as they are."""
    held = conn.execute(text(
        "SELECT m.rolname FROM pg_auth_members a JOIN pg_roles m ON m.oid = a.member "
        "JOIN pg_roles g ON g.oid = a.roleid WHERE g.rolname = :g AND m.rolcreaterole "
        "AND NOT m.rolsuper AND m.rolname <> current_user ORDER BY 1"),
        {"g": admin_group}).scalars().all()
    for login in held:
        conn.execute(text(f'ALTER ROLE "{login}" NOCREATEROLE'))
    return tuple(held)
