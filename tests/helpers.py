"""Shared test helpers: a deterministic dump of a library, fresh PostgreSQL databases, and running
the ``formdb`` command in-process exactly as a user would (one ``Error:`` line, exit code)."""

from __future__ import annotations

import os
import shutil
from collections.abc import Collection, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from uuid import uuid4

from click.testing import CliRunner
from sqlalchemy import MetaData, create_engine, func, select, text
from sqlalchemy.engine import Connection, make_url

from formdb.store.db import in_role_catalog_transaction, make_engine
from formdb.store.sealing import FORMS, SEALED_COLUMNS

PG_ENV = "FORMDB_TEST_PG_URL"
HYPOTHESIS_PROFILE_ENV = "FORMDB_HYPOTHESIS_PROFILE"  # ci (default) or deep: tests/conftest.py


def examples(deep: int) -> int:
    """How many examples an expensive hypothesis test draws under the active profile: ``deep``
    under the ``deep`` profile (max_examples 100), a tenth of it, at least one, under ``ci``."""
    from hypothesis import settings

    return max(1, deep * settings.default.max_examples // 100)


def pg_base_url() -> str | None:
    """The test server from the environment, or None (PostgreSQL tests then skip)."""
    return os.environ.get(PG_ENV) or None


def dump_database(url: str, exclude_columns: Collection[str] = (),
                  tables: Collection[str] | None = None) -> str:
    """Every table's columns and rows as text, tables and columns by name (a column a downgrade
    puts back comes last in its table), rows fully ordered.

    Two dumps are equal exactly when the library holds the same rows (the alembic revision
    included). ``exclude_columns`` leaves out columns such as timestamps where a test re-creates
    data on purpose (in a hash-chained table the seals, which cover them, go too); ``tables``
    limits the dump to those tables.
    """
    engine = make_engine(url, must_exist=True)
    try:
        meta = MetaData()
        with engine.connect() as conn:
            meta.reflect(conn)
            lines: list[str] = []
            for name in sorted(meta.tables):
                if tables is not None and name not in tables:
                    continue
                table = meta.tables[name]
                # the server's keyed seal differs per database (its own key): never compared
                left_out = {*exclude_columns, "server_seal"}
                sealed = set(SEALED_COLUMNS.get(name, ())).union(
                    *FORMS.get(name, {}).values())
                if left_out & sealed:  # the seals cover every column
                    left_out |= {"prev_hash", "row_hash"}
                cols = sorted((c for c in table.columns if c.name not in left_out),
                              key=lambda c: c.name)
                lines.append(f"== {name} ({', '.join(c.name for c in cols)})")
                if not cols:
                    count = conn.execute(select(func.count()).select_from(table)).scalar_one()
                    lines.append(f"{count} rows")
                    continue
                rows = conn.execute(select(*cols).order_by(*cols)).all()
                lines.extend(" | ".join(_cell(v) for v in row) for row in rows)
        return "\n".join(lines) + "\n"
    finally:
        engine.dispose()


def _cell(value: object) -> str:
    if isinstance(value, float):
        return repr(value)
    return "NULL" if value is None else repr(value)


@contextmanager
def fresh_pg_database(base_url: str, template: str | None = None) -> Iterator[str]:
    """A new, uniquely named database on the test server (a copy of ``template`` if given),
    dropped afterwards even when connections are still open."""
    base = make_url(base_url)
    name = f"formdb_t_{uuid4().hex[:12]}"
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            copy = f' TEMPLATE "{template}"' if template else ""
            conn.execute(text(f'CREATE DATABASE "{name}"{copy}'))
        try:
            yield base.set(database=name).render_as_string(hide_password=False)
        finally:
            with admin.connect() as conn:
                conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
    finally:
        admin.dispose()


@contextmanager
def fresh_pg_schema(base_url: str) -> Iterator[str]:
    """A new, uniquely named schema in the test database, and a URL whose connections see only
    it (``search_path``); dropped afterwards. Much cheaper than a database per test."""
    base = make_url(base_url)
    name = f"formdb_t_{uuid4().hex[:12]}"
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            conn.execute(text(f'CREATE SCHEMA "{name}"'))
        try:
            url = base.update_query_dict({"options": f"-csearch_path={name}"})
            yield url.render_as_string(hide_password=False)
        finally:
            with admin.connect() as conn:
                conn.execute(text(f'DROP SCHEMA IF EXISTS "{name}" CASCADE'))
                # the server-seal key's own schema (migration 0019_server_seals)
                conn.execute(text(f'DROP SCHEMA IF EXISTS "{name}__seal" CASCADE'))
    finally:
        admin.dispose()


@dataclass
class CliResult:
    exit_code: int
    stdout: str
    stderr: str


def run_formdb(args: Sequence[str], env: Mapping[str, str | None] | None = None) -> CliResult:
    """Run ``formdb ARGS`` through its real entry point (the one error handler included)."""
    from formdb.cli.main import main

    runner = CliRunner()
    code = 0
    with runner.isolation(env=dict(env or {})) as (out, err, _):
        try:
            main(list(args))
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
        stdout, stderr = out.getvalue(), err.getvalue()
    return CliResult(code, stdout.decode(), stderr.decode())


@contextmanager
def os_account(name: str) -> Iterator[None]:
    """Run as if the operating-system account were ``name`` (the identity formdb records on
    SQLite): what logging in as another person on the same machine would give."""
    from unittest import mock

    with mock.patch("formdb.store.identity.os_account", return_value=name):
        yield


def run_as(name: str, args: Sequence[str],
           env: Mapping[str, str | None] | None = None) -> CliResult:
    """``formdb ARGS`` under the operating-system account ``name`` (SQLite libraries; on
    PostgreSQL the identity is the URL's login)."""
    with os_account(name):
        return run_formdb(args, env)


def acting_identity(url: str) -> str:
    """Who formdb records for a command run against ``url`` here and now."""
    from formdb.store.identity import identify_location

    return identify_location(url)[0]


def recorded_as(url: str, name: str) -> str:
    """The name formdb records when ``run_as(name, ...)`` acts on ``url``: ``name`` on SQLite
    (the operating-system account), the URL's own login on PostgreSQL."""
    return name if make_url(_as_sqlalchemy(url)).get_backend_name() == "sqlite" \
        else acting_identity(url)


def _as_sqlalchemy(url: str) -> str:
    return url if "://" in url else f"sqlite:///{url}"


def drop_roles(pg_url: str, prefix: str) -> None:
    """Drop the test's login and group roles (names starting with ``prefix``), queued with
    grant-setup on the shared role catalogs (store.db.in_role_catalog_transaction)."""
    def drop(conn: Connection) -> None:
        roles = conn.execute(text("SELECT rolname FROM pg_roles WHERE rolname LIKE :p"),
                             {"p": f"{prefix}%"}).scalars().all()
        for role in roles:
            conn.execute(text(f'DROP OWNED BY "{role}"'))
        for role in roles:
            conn.execute(text(f'DROP ROLE "{role}"'))

    admin = create_engine(pg_url)
    try:
        in_role_catalog_transaction(admin, drop)
    finally:
        admin.dispose()


def chromium() -> Path:
    """The system Chromium that prints HTML reports to PDF in the print tests.

    Skips the test where it is missing on a contributor's machine; `.ci/run` installs it and sets
    FORMDB_TEST_NEED_CHROMIUM, so in CI a missing Chromium fails instead of skipping silently.
    """
    import pytest

    found = shutil.which("chromium") or "/usr/bin/chromium"
    if Path(found).exists():
        return Path(found)
    if os.environ.get("FORMDB_TEST_NEED_CHROMIUM"):
        pytest.fail("the system Chromium is needed: apt-get install chromium")
    pytest.skip("no system Chromium (apt-get install chromium); CI runs these tests")
