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
  review policy (``key_enrolments``, ``policy_versions``);
and every writer may append to ``change_log`` (insert only: history is never rewritten); the
review runs and signatures are insert-only too (they are hash-chained like the log, see
formdb.store.sealing).
A person's login gets a duty with ``GRANT PREFIX_editor TO their_login``. Run it again after
``formdb db upgrade`` so new tables are covered. All in one transaction.
"""

from __future__ import annotations

import re

from sqlalchemy import inspect, text

from formdb.errors import ConfigError, InvalidData
from formdb.schemas.admin import GrantReport
from formdb.store import db as store

FORMULA_TABLES = frozenset({"formulas"})
ADMIN_TABLES = frozenset({"users", "user_roles", "key_enrolments", "policy_versions"})
LOG_TABLE = "change_log"
APPEND_ONLY = frozenset({"review_runs", "review_signatures", "key_enrolments",
                         "policy_versions"})  # and LOG_TABLE
NOT_LIBRARY = FORMULA_TABLES | ADMIN_TABLES | {LOG_TABLE, "alembic_version"}
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
        with engine.begin() as conn:
            tables = sorted(inspect(conn).get_table_names())
            database = conn.execute(text("SELECT current_database()")).scalar_one()
            schema = conn.execute(text("SELECT current_schema()")).scalar_one()
            writes = {
                "editor": [t for t in tables if t not in NOT_LIBRARY and not _is_review(t)],
                "formulator": [t for t in tables if t in FORMULA_TABLES],
                "reviewer": [t for t in tables if _is_review(t)],
                "admin": [t for t in tables if t in ADMIN_TABLES],
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
                    rights = "INSERT" if table in APPEND_ONLY else "INSERT, UPDATE, DELETE"
                    conn.execute(text(f'GRANT {rights} ON "{schema}"."{table}" TO "{role}"'))
                conn.execute(text(f'GRANT INSERT ON "{schema}"."{LOG_TABLE}" TO "{role}"'))
                conn.execute(text(f'GRANT USAGE ON ALL SEQUENCES IN SCHEMA "{schema}" TO "{role}"'))
        return GrantReport(shown, {f"{prefix}_{d}": t for d, t in writes.items()})
    finally:
        engine.dispose()
