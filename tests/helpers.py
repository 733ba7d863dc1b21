"""Shared test helpers: a deterministic dump of a library, fresh PostgreSQL databases, and running
the ``formdb`` command in-process exactly as a user would (one ``Error:`` line, exit code)."""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import threading
from collections import OrderedDict
from collections.abc import Callable, Collection, Iterator, Mapping, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from uuid import uuid4

import click
import psycopg
import pytest
from click.testing import CliRunner
from sqlalchemy import MetaData, Select, create_engine, func, select, text
from sqlalchemy.engine import URL, Connection, Engine, make_url
from sqlalchemy.exc import DBAPIError

from formdb.store import db as store_db
from formdb.store.db import in_role_catalog_transaction, make_engine
from formdb.store.sealing import FORMS, SEALED_COLUMNS, seal

PG_ENV = "FORMDB_TEST_PG_URL"
# the tablespace the test databases are made in (`.ci/run` makes one in /dev/shm); unset: the
# server's default
PG_TABLESPACE_ENV = "FORMDB_TEST_PG_TABLESPACE"
HYPOTHESIS_PROFILE_ENV = "FORMDB_HYPOTHESIS_PROFILE"  # ci (default) or deep: tests/conftest.py


def examples(deep: int) -> int:
    """How many examples an expensive hypothesis test draws under the active profile: ``deep``
    under the ``deep`` profile (max_examples 100), a tenth of it, at least one, under ``ci``."""
    from hypothesis import settings

    return max(1, deep * settings.default.max_examples // 100)


def fuzz_examples(count: int) -> int:
    """How many examples a fuzz-suite test draws: its ``count`` in CI (the ``ci`` profile: the
    suite's 3,550 run there in full), three times it under ``deep``."""
    from hypothesis import settings

    return count * (3 if settings.default.max_examples >= 100 else 1)


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

    Speed (it runs before and after most refused commands): the reflected tables are reused for
    any database whose schema reads the same (``_schema_text``: every table, column and type),
    and the engine is kept per URL so SQLAlchemy compiles each table's SELECT once. A SQLite
    file's connection is closed after each dump; a PostgreSQL one stays open until the test
    ends (``dispose_kept_engines``), so the dumps of a test share one server backend instead of
    starting one each.
    """
    def rows(conn: Connection, query: Select[Any], _name: str) -> list[str]:
        return [" | ".join(_cell(v) for v in row) for row in conn.execute(query).all()]

    return _per_table(url, exclude_columns, tables, rows)


def library_state(url: str, exclude_columns: Collection[str] = (),
                  tables: Collection[str] | None = None) -> str:
    """What ``dump_database`` shows, with each table's rows as a count and a hash: the
    "library unchanged" check (state before a command == state after). A difference names its
    table. Cheap where the dump is not: on PostgreSQL the server hashes each table in one
    statement (md5 of its rows' text, ordered by every column) and no row crosses the wire; on
    SQLite the rows are hashed as the driver reads them (sha256 of their repr), unconverted.

    Equal states are equal dumps and more: the values as stored, not as SQLAlchemy converts
    them, so compare states of one library over time, and dumps of two libraries (a restore,
    a copy). tests/store/test_library_state.py shows that a changed cell, a deleted row and
    an added row each change the state, on both backends.

    A SQLite state is remembered by the bytes of the file and its write-ahead log (sha256,
    about 1 ms for the seeded library against 11 ms for reading and hashing its rows): equal
    bytes are the same rows, so a library whose bytes are those of one already read (a fresh
    copy of a template, a file a refused command left as it was) has that state, and any
    change of a byte is read and hashed row by row as before.
    """
    key = _sqlite_bytes_key(url, exclude_columns, tables)
    if key is not None and key in _SQLITE_STATES:
        _SQLITE_STATES.move_to_end(key)
        return _SQLITE_STATES[key]

    def hashed(conn: Connection, query: Select[Any], name: str) -> list[str]:
        quote = conn.dialect.identifier_preparer.quote
        cols = ", ".join(quote(c.name) for c in query.selected_columns)
        if conn.dialect.name == "postgresql":
            count, digest = conn.exec_driver_sql(
                f"SELECT count(*), md5(coalesce(string_agg(ROW({cols})::text, "
                f"E'\\n' ORDER BY {cols}), '')) FROM {quote(name)}").one()
        else:
            rows = conn.exec_driver_sql(
                f"SELECT {cols} FROM {quote(name)} ORDER BY {cols}").fetchall()
            count = len(rows)
            digest = hashlib.sha256(repr([tuple(r) for r in rows]).encode()).hexdigest()
        return [f"{count} rows, {digest}"]

    state = _per_table(url, exclude_columns, tables, hashed)
    if key is not None:
        _SQLITE_STATES[key] = state
        while len(_SQLITE_STATES) > 64:
            _SQLITE_STATES.popitem(last=False)
    return state


_SQLITE_STATES: OrderedDict[tuple[bytes, frozenset[str], frozenset[str] | None], str] = \
    OrderedDict()


def _sqlite_bytes_key(url: str, exclude_columns: Collection[str],
                      tables: Collection[str] | None
                      ) -> tuple[bytes, frozenset[str], frozenset[str] | None] | None:
    """The sha256 of a SQLite library's file and write-ahead log (with what the state leaves
    out), or None for PostgreSQL, in-memory SQLite and a missing file (refused as before)."""
    from formdb.store.db import sqlite_path

    path = sqlite_path(url) if "://" in url else None
    if path is None:
        return None
    digest = hashlib.sha256()
    try:
        digest.update(path.read_bytes())
    except FileNotFoundError:
        return None
    wal = path.with_name(path.name + "-wal")
    if wal.exists():
        digest.update(b"\0wal\0" + wal.read_bytes())
    return (digest.digest(), frozenset(exclude_columns),
            None if tables is None else frozenset(tables))


def _per_table(url: str, exclude_columns: Collection[str], tables: Collection[str] | None,
               rows: Callable[[Connection, Select[Any], str], list[str]]) -> str:
    """Each table's heading, then ``rows`` of its query (a table whose columns are all left out:
    its row count): the one walk of ``dump_database`` and ``library_state``."""
    engine = _dump_engine(url)
    try:
        with engine.connect() as conn:
            meta = _reflected(conn)
            lines: list[str] = []
            for name in sorted(meta.tables):
                if tables is not None and name not in tables:
                    continue
                heading, query = _table_query(meta, name, frozenset(exclude_columns))
                lines.append(heading)
                if query is None:
                    count = conn.execute(
                        select(func.count()).select_from(meta.tables[name])).scalar_one()
                    lines.append(f"{count} rows")
                    continue
                lines.extend(rows(conn, query, name))
        return "\n".join(lines) + "\n"
    finally:
        if engine.dialect.name == "sqlite":
            engine.dispose()  # no connection keeps the file (and its write-ahead log) open


_DUMP_ENGINES: OrderedDict[str, Engine] = OrderedDict()
_REFLECTED: dict[tuple[str, str], MetaData] = {}


def _dump_engine(url: str) -> Engine:
    """The engine kept for ``url`` (the last 16 URLs), or a new one; a missing SQLite file is
    refused as ``make_engine(must_exist=True)`` refuses it."""
    from formdb.store.db import sqlite_path

    engine = _DUMP_ENGINES.pop(url, None)
    path = sqlite_path(url) if "://" in url else None
    if engine is None or (path is not None and not path.exists()):
        if engine is not None:
            engine.dispose()
        engine = make_engine(url, must_exist=True)
    _DUMP_ENGINES[url] = engine
    while len(_DUMP_ENGINES) > 16:
        _DUMP_ENGINES.popitem(last=False)[1].dispose()
    return engine


def _reflected(conn: Connection) -> MetaData:
    key = (conn.dialect.name, _schema_text(conn))
    meta = _REFLECTED.get(key)
    if meta is None:
        meta = MetaData()
        meta.reflect(conn)
        _REFLECTED[key] = meta
    return meta


_QUERIES: dict[tuple[int, str, frozenset[str]], tuple[str, Select[Any] | None]] = {}


def _table_query(meta: MetaData, name: str, exclude_columns: frozenset[str]
                 ) -> tuple[str, Select[Any] | None]:
    """A table's heading line and the SELECT of its rows (None when no column is left)."""
    key = (id(meta), name, exclude_columns)
    found = _QUERIES.get(key)
    if found is None:
        table = meta.tables[name]
        # the server's keyed seal differs per database (its own key): never compared
        left_out = {*exclude_columns, "server_seal"}
        sealed = set(SEALED_COLUMNS.get(name, ())).union(*FORMS.get(name, {}).values())
        if left_out & sealed:  # the seals cover every column
            left_out |= {"prev_hash", "row_hash"}
        cols = sorted((c for c in table.columns if c.name not in left_out),
                      key=lambda c: c.name)
        heading = f"== {name} ({', '.join(c.name for c in cols)})"
        found = _QUERIES[key] = (heading, select(*cols).order_by(*cols) if cols else None)
    return found


def _schema_text(conn: Connection) -> str:
    """Every table (and view, index, trigger) with its columns and their types, as text: two
    databases with the same text reflect to the same tables."""
    if conn.dialect.name == "sqlite":
        rows = conn.execute(text(
            "SELECT type, name, tbl_name, coalesce(sql, '') FROM sqlite_master "
            "ORDER BY type, name")).all()
    else:
        rows = conn.execute(text(
            "SELECT c.relkind, c.relname, a.attnum, a.attname, "
            "format_type(a.atttypid, a.atttypmod), a.attnotnull "
            "FROM pg_attribute a JOIN pg_class c ON c.oid = a.attrelid "
            "JOIN pg_namespace n ON n.oid = c.relnamespace "
            "WHERE n.nspname = current_schema() AND a.attnum > 0 AND NOT a.attisdropped "
            "ORDER BY c.relname, a.attnum")).all()
    return "\n".join("\t".join(str(v) for v in row) for row in rows)


def _cell(value: object) -> str:
    if isinstance(value, float):
        return repr(value)
    return "NULL" if value is None else repr(value)


@contextmanager
def fresh_pg_database(base_url: str, template: str | None = None,
                      name: str | None = None) -> Iterator[str]:
    """A new, uniquely named database on the test server (a copy of ``template`` if given),
    dropped afterwards even when connections are still open.

    It is made in the tablespace named by FORMDB_TEST_PG_TABLESPACE when that is set: a
    database is about 450 files, and on a disk file system making and deleting them for every
    test costs the server more CPU than most tests do (DEVELOPERS.md, "Test speed"). There, a
    copy is made by copying the files (STRATEGY FILE_COPY, PostgreSQL 15 and later), not block
    by block through the write-ahead log (WAL_LOG, 15's default): 20 ms of server CPU and 40 ms
    of wall time per copy and drop of the seeded library instead of 30 and 65 ms. FILE_COPY
    checkpoints the server, which costs little only where durability is off and the files are
    in memory, as `.ci/run` sets them up; elsewhere the default stays.

    ``name``: the database's name instead of a new one (a test that makes copy after copy at
    one URL, each dropped before the next, so its commands keep their engine)."""
    base = make_url(base_url)
    name = name or f"formdb_t_{uuid4().hex[:12]}"
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            space = os.environ.get(PG_TABLESPACE_ENV)
            copy = f' TEMPLATE "{template}"' if template else ""
            if template and space and conn.dialect.server_version_info >= (15,):
                copy += " STRATEGY FILE_COPY"
            where = f' TABLESPACE "{space}"' if space else ""
            conn.execute(text(f'CREATE DATABASE "{name}"{copy}{where}'))
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


def cli_commands() -> list[tuple[tuple[str, ...], click.Command]]:
    """(path, command) for formdb itself (path ``()``), every group and every command of the
    CLI, walked from its root, so a test over all of them covers a new one."""
    from formdb.cli.main import cli

    found: list[tuple[tuple[str, ...], click.Command]] = []
    stack: list[tuple[tuple[str, ...], click.Command]] = [((), cli)]
    while stack:
        path, command = stack.pop(0)
        found.append((path, command))
        if isinstance(command, click.Group):
            context = click.Context(command)
            for name in command.list_commands(context):
                sub = command.get_command(context, name)
                if sub is not None:
                    stack.append(((*path, name), sub))
    return found


def run_formdb(args: Sequence[str], env: Mapping[str, str | None] | None = None) -> CliResult:
    """Run ``formdb ARGS`` through its real entry point (the one error handler included).

    The command makes and checks its engine as a process would (``store.db.make_engine``: the
    path, the probe, the revision), but is handed the engine object an earlier command of the
    same test made for the same URL and options (``command_engine``)."""
    from formdb.cli.main import main

    runner = CliRunner()
    code = 0
    in_command = _IN_COMMAND.set(True)
    try:
        with runner.isolation(env=dict(env or {})) as (out, err, _):
            try:
                main(list(args))
            except SystemExit as exc:
                code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
            stdout, stderr = out.getvalue(), err.getvalue()
    finally:
        _IN_COMMAND.reset(in_command)
    return CliResult(code, stdout.decode(), stderr.decode())


# --- engines kept across a test's commands ----------------------------------------------------
# A command in its own process makes one engine, compiles each statement once and opens one
# connection. Run in-process, command after command, that start-up was most of a short
# command's cost: SQLAlchemy's statement cache and the dialect's first-connect queries belong
# to the engine, so every command compiled every statement again (client CPU on SQLite:
# ingredient show 34 -> 24 ms, list 21 -> 17 ms, a refused edit 16 -> 8.5 ms when the engine is
# shared), and on PostgreSQL every command started a server backend and warmed its catalog
# caches (about 10 ms of server CPU). Within one test, a command is handed the
# engine an earlier command made for the same URL and options; on PostgreSQL its connections
# also stay open (the pool's pre-ping replaces one the server ended), on SQLite they are closed
# when the command disposes its engine, as before (a library file may be replaced or copied
# between commands, and an open connection would keep its write-ahead log). Everything is
# disposed after each test (``dispose_kept_engines``, tests/conftest.py).

_REAL_NEW_ENGINE = store_db.new_engine
_IN_COMMAND: ContextVar[bool] = ContextVar("formdb_test_in_command", default=False)
_KEPT_ENGINES: dict[tuple[str, str], Engine] = {}
_KEPT_LOCK = threading.Lock()


def check_findings(url: str, formula: Path, *options: str) -> list[dict[str, Any]]:
    """The findings of ``formdb check FORMULA --format json`` (extra ``options`` before it), the
    command ending as a check does (0 or 1)."""
    result = run_formdb(["--db", url, "check", str(formula), *options, "--format", "json"])
    assert result.exit_code in (0, 1), result.stderr
    return list(json.loads(result.stdout)["findings"])


def command_engine(url: URL, **kwargs: Any) -> Engine:
    """``store.db.new_engine`` while the tests run (installed by tests/conftest.py): inside
    ``run_formdb`` the engine kept for (URL, options), else a new one. An in-memory SQLite
    library (StaticPool) is never kept: each command has its own."""
    if not _IN_COMMAND.get() or "poolclass" in kwargs:
        return _REAL_NEW_ENGINE(url, **kwargs)
    key = (url.render_as_string(hide_password=False), repr(sorted(kwargs.items())))
    with _KEPT_LOCK:
        engine = _KEPT_ENGINES.get(key)
        if engine is None:
            engine = _KEPT_ENGINES[key] = _REAL_NEW_ENGINE(url, **kwargs)
            if url.get_backend_name() != "sqlite":
                _keep_connections(engine)
        elif url.get_backend_name() != "sqlite" and not _login_still_admitted(engine):
            Engine.dispose(engine)  # this command logs in anew, and is refused as it would be
    return engine


def _keep_connections(engine: Engine) -> None:
    """The command's ``dispose()`` leaves the pool as it is: its connections serve the test's
    next command (``dispose_kept_engines`` closes them)."""
    def dispose(close: bool = True) -> None:
        return None

    engine.dispose = dispose  # type: ignore[method-assign]


# What the server checks only when a session starts: the login may log in (LOGIN, VALID UNTIL)
# and connect to this database (CONNECT). A session already open outlives a NOLOGIN, a revoked
# CONNECT or a dropped role, so a kept connection is given to a command only while a new one
# would be admitted; everything else (roles, memberships, grants) the server checks per
# statement, on old sessions as on new.
_ADMITTED = ("SELECT r.rolcanlogin AND (r.rolvaliduntil IS NULL OR r.rolvaliduntil > now()) "
             "AND has_database_privilege(r.oid, current_database(), 'CONNECT') "
             "FROM pg_roles r WHERE r.rolname = session_user")


def _login_still_admitted(engine: Engine) -> bool:
    """Asked on the driver's own connection, so a test counting a command's statements
    (``before_cursor_execute``) does not count it."""
    try:
        raw = engine.raw_connection()
    except DBAPIError:  # the kept connections are gone (the server ended them)
        return False
    try:
        cursor = raw.cursor()
        cursor.execute(_ADMITTED)
        row = cursor.fetchone()
        cursor.close()
        return bool(row and row[0])
    except psycopg.Error:  # the session was ended under it: a new login decides
        return False
    finally:
        raw.close()


@contextmanager
def commands_share_engines() -> Iterator[None]:
    """Install ``command_engine`` as ``store.db.new_engine`` (for the whole test session)."""
    store_db.new_engine = command_engine
    try:
        yield
    finally:
        store_db.new_engine = _REAL_NEW_ENGINE
        dispose_kept_engines()


def dispose_kept_engines() -> None:
    """Close what the test's commands and dumps kept open (after each test)."""
    with _KEPT_LOCK:
        engines = list(_KEPT_ENGINES.values())
        _KEPT_ENGINES.clear()
    for url, engine in list(_DUMP_ENGINES.items()):
        if engine.dialect.name != "sqlite":
            del _DUMP_ENGINES[url]
            engines.append(engine)
    for engine in engines:
        Engine.dispose(engine)


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


# The Commission's annex exports, read-only beside the repository (never copied into it).
ANNEX_EXPORTS = Path(__file__).resolve().parents[2] / "shared" / "regulatory" / \
    "eu-cosing-annexes-2025-10-31"
if not ANNEX_EXPORTS.is_dir():  # a worktree sits one level deeper than the main checkout
    ANNEX_EXPORTS = Path("/work/shared/regulatory/eu-cosing-annexes-2025-10-31")


def needs_annex_exports() -> pytest.MarkDecorator:
    """Skip where the exports are not on the machine (they are never in the repository)."""
    return pytest.mark.skipif(
        not ANNEX_EXPORTS.is_dir(), reason="the Commission's annex exports (../shared/regulatory/"
        "eu-cosing-annexes-2025-10-31) are not on this machine")


def forge_logged_user(archive: Path, forged: Path) -> None:
    """Copy a backup archive with its second change-log row rewritten to name someone else:
    the forgery a restore must refuse."""
    import json
    import zipfile

    with zipfile.ZipFile(archive) as src, zipfile.ZipFile(forged, "w") as dst:
        for item in src.infolist():
            data = src.read(item)
            if item.filename == "tables/change_log.jsonl":
                rows = [json.loads(line) for line in data.decode().splitlines()]
                rows[1]["user"] = "Dr. Head of QA"  # a row naming someone else
                data = "".join(json.dumps(r) + "\n" for r in rows).encode()
            dst.writestr(item, data)


def chain_rows(conn: Connection, table: str) -> list[dict[str, Any]]:
    """Every row of a sealed table, in chain order, as dicts."""
    from formdb.store.models import Base

    model = Base.metadata.tables[table]
    return [dict(r) for r in conn.execute(select(model).order_by(model.c.id)).mappings()]


def reseal(conn: Connection, table: str, first_id: int, change: Mapping[str, Any], *,
           also: Mapping[str, Any] | None = None) -> None:
    """Change row ``first_id`` of ``table`` and recompute the public hash of it and of every row
    after it, as someone with UPDATE on the table and the (public) canonical form would;
    ``also`` is written into every row rewritten (a forged server seal, say)."""
    from formdb.store.models import Base

    model = Base.metadata.tables[table]
    rows = chain_rows(conn, table)
    at = next(i for i, r in enumerate(rows) if r["id"] == first_id)
    prev = rows[at]["prev_hash"]
    for n, row in enumerate(rows[at:]):
        if n == 0:
            row.update(change)
        prev = seal(table, [row], [row["id"]], prev)
        conn.execute(model.update().where(model.c.id == row["id"]).values(
            {**(change if n == 0 else {}), "prev_hash": row["prev_hash"],
             "row_hash": row["row_hash"], **(also or {})}))
