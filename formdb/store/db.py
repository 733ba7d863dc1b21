"""Opening the library: engines, the migration chain, and one unit of work per command.

A plain path (or ``sqlite:///...``) is a SQLite file; ``postgresql+psycopg://...`` a team server.
SQLite gets foreign keys, WAL and a busy timeout on every connection, and its own BEGIN so that
DDL and savepoints are transactional (the SQLAlchemy recipe for pysqlite): a failed migration or
import leaves the file as it was. Alembic is configured here in code, so the installed wheel needs
no ``alembic.ini``.
"""

from __future__ import annotations

import ast
import re
import sqlite3
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

from sqlalchemy import Engine, create_engine, event, inspect, text
from sqlalchemy.engine import URL, Connection, make_url
from sqlalchemy.exc import ArgumentError, DBAPIError, NoSuchModuleError, OperationalError
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError
from sqlalchemy.pool import StaticPool

from formdb.errors import ConfigError, Conflict, FormdbError, SchemaOutdated
from formdb.resources import migrations_dir
from formdb.store.sealing import LibrarySession

if TYPE_CHECKING:  # alembic is imported where a command migrates, not to open a library
    from alembic.config import Config

T = TypeVar("T")

BUSY_TIMEOUT_MS = 10_000
_URL_HINT = ("give a SQLite file path such as formdb.sqlite or a "
             "postgresql+psycopg://user@host/db URL")
_PASSWORD_RE = re.compile(r"(://[^:/@]*:)[^@]*@")


def _parse(url_or_path: str) -> URL:
    """The SQLAlchemy URL for what the user typed; ConfigError when it is neither backend."""
    given = url_or_path.strip()
    if not given:
        raise ConfigError("no database given", hint=_URL_HINT)
    if "://" not in given:
        return URL.create("sqlite", database=given)
    scheme, rest = given.split("://", 1)
    if scheme in ("postgres", "postgresql"):
        given = f"postgresql+psycopg://{rest}"
    try:
        url = make_url(given)
    except (ArgumentError, ValueError) as exc:  # ValueError: a port that is not a number
        masked = _PASSWORD_RE.sub(r"\1***@", given)
        raise ConfigError(f"cannot read the database URL {masked!r}.", hint=_URL_HINT) from exc
    if url.get_backend_name() not in ("sqlite", "postgresql"):
        raise ConfigError(
            f"cannot open database {display_url(url)}: formdb keeps its library in SQLite or "
            "PostgreSQL only.", hint=_URL_HINT)
    return url


def display_url(url: str | URL) -> str:
    """The URL as it may be shown to a user: password hidden; a SQLite file as its path."""
    if isinstance(url, str):
        try:
            url = _parse(url)
        except ConfigError:
            return "<unreadable URL>"
    if url.get_backend_name() == "sqlite" and url.database:
        return url.database
    return url.render_as_string(hide_password=True)


def sqlite_path(url_or_path: str) -> Path | None:
    """The file behind a SQLite URL, or None for PostgreSQL and in-memory SQLite."""
    url = _parse(url_or_path)
    if url.get_backend_name() != "sqlite" or url.database in (None, "", ":memory:"):
        return None
    return Path(url.database)


def _sqlite_connect_settings(dbapi_connection: Any, _record: Any) -> None:
    # isolation_level None stops pysqlite issuing its own BEGIN/COMMIT; "begin" below emits ours
    dbapi_connection.isolation_level = None
    cursor = dbapi_connection.cursor()
    try:
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
        _use_write_ahead_log(cursor)
    finally:
        cursor.close()


def _use_write_ahead_log(cursor: Any) -> None:
    """Switch the file to WAL once (the mode persists in the file), waiting out a lock.

    Changing the journal mode needs an exclusive lock, and SQLite may answer "database is locked"
    at once instead of calling the busy handler when another connection (a second ``init`` on a
    fresh file) holds one; so the switch is retried until the busy timeout has passed.
    """
    deadline = time.monotonic() + BUSY_TIMEOUT_MS / 1000
    while True:
        try:
            mode = cursor.execute("PRAGMA journal_mode").fetchone()[0]
            if str(mode).lower() in ("wal", "memory"):
                return
            cursor.execute("PRAGMA journal_mode=WAL")
            return
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc) and "busy" not in str(exc):
                raise
            if time.monotonic() >= deadline:
                raise
            time.sleep(0.05)


WRITE_LOCK = "formdb_write_lock"  # execution option: take the write lock at BEGIN
# one number for pg_advisory_xact_lock, so two `formdb init` runs against one server queue up
_MIGRATION_LOCK_ID = 0x666F726D6462  # "formdb"


def _sqlite_begin(conn: Connection) -> None:
    # BEGIN IMMEDIATE takes the write lock up front: a second writer waits (busy timeout) instead
    # of failing halfway when the first one commits
    immediate = conn.get_execution_options().get(WRITE_LOCK, False)
    conn.exec_driver_sql("BEGIN IMMEDIATE" if immediate else "BEGIN")


def new_engine(url: URL, **kwargs: Any) -> Engine:
    """A SQLAlchemy engine for ``url`` with formdb's connection settings (SQLite: foreign keys,
    busy timeout, write-ahead log, our own BEGIN), not yet connected. One place, so that the
    tests can hand a command the engine an earlier command of the same test used (its compiled
    statements kept: tests.helpers.run_formdb)."""
    engine = create_engine(url, **kwargs)
    if url.get_backend_name() == "sqlite":
        event.listen(engine, "connect", _sqlite_connect_settings)
        event.listen(engine, "begin", _sqlite_begin)
    return engine


def make_engine(url_or_path: str, *, must_exist: bool = False) -> Engine:
    """An engine for the library at ``url_or_path``, tried once so a bad URL fails here.

    ``must_exist``: for a SQLite file, refuse to create it (commands other than ``init`` must not
    leave an empty file behind); a missing file is reported as "not a formdb library yet".
    """
    url = _parse(url_or_path)
    shown = display_url(url)
    kwargs: dict[str, Any] = {}
    if url.get_backend_name() == "sqlite":
        path = sqlite_path(url_or_path)
        if path is None:
            kwargs["poolclass"] = StaticPool  # one in-memory database shared by the session
        elif path.is_dir():
            raise ConfigError(f"cannot open database {shown}: it is a folder, not a file.",
                              hint="give a file name such as formdb.sqlite")
        elif not path.parent.is_dir():
            raise ConfigError(f"cannot open database {shown}: the folder {path.parent} does not "
                              "exist.", hint="create the folder or give another path")
        elif must_exist and not path.exists():
            raise SchemaOutdated(f"{shown} is not a formdb library yet (no such file).",
                                 hint="run `formdb init` (add --seed for the bundled library)")
        kwargs["connect_args"] = {"timeout": BUSY_TIMEOUT_MS / 1000}
    else:
        kwargs["pool_pre_ping"] = True
        kwargs["connect_args"] = {"connect_timeout": 10}
    try:
        engine = new_engine(url, **kwargs)
    except (NoSuchModuleError, ArgumentError, ImportError) as exc:
        raise ConfigError(f"cannot open database {shown}: {exc}", hint=_URL_HINT) from exc
    try:
        with engine.connect() as conn:
            conn.execute(text("SELECT 1" if url.get_backend_name() != "sqlite"
                              else "SELECT count(*) FROM sqlite_master"))
    except DBAPIError as exc:
        engine.dispose()
        reason = " ".join(str(exc.orig or exc).split()).rstrip(".")
        raise ConfigError(f"cannot open database {shown}: {reason}.",
                          hint="check the path or URL, that the server is running and that you "
                               "may log in") from exc
    return engine


# --- migrations -------------------------------------------------------------------------------

def alembic_config(connection: Connection | None = None,
                   script_location: Path | None = None) -> Config:
    """Alembic's Config built in code: the bundled migrations, and our connection if given."""
    from alembic.config import Config

    cfg = Config()
    location = str(script_location or migrations_dir())
    cfg.set_main_option("script_location", location.replace("%", "%%"))
    cfg.attributes["connection"] = connection
    return cfg


def head_revision(script_location: Path | None = None) -> str:
    from alembic.script import ScriptDirectory

    head = ScriptDirectory.from_config(alembic_config(script_location=script_location)) \
        .get_current_head()
    if head is None:  # pragma: no cover - the package always ships a revision
        raise ConfigError("formdb's migrations folder holds no revision.",
                          hint="reinstall formdb")
    return head


def current_revision(engine: Engine) -> str | None:
    """The revision the database is at; None for an empty or never-migrated database. A
    library this login may not read is neither: Forbidden (see _library_hidden_from_login)."""
    from alembic.runtime.migration import MigrationContext

    try:
        with engine.connect() as conn:
            found = MigrationContext.configure(conn).get_current_revision()
    except DBAPIError as exc:
        if _sqlstate(exc) == "42501":
            _refuse_hidden_library(engine, display_url(engine.url))
        raise
    if found is None:
        _refuse_hidden_library(engine, display_url(engine.url))
    return found


# Opening a library needs only "is it at head?". Answering that without importing alembic
# (about a third of `formdb check FILE`'s start-up) reads the version row with plain SQL and the
# head from the revision files' literal `revision`/`down_revision` assignments; anything
# unusual (branches, merges, dependencies, several rows) is left to alembic itself.
# tests/bench/test_lean_start.py checks both answers against alembic's.
_ALEMBIC_VERSION_TABLE = "alembic_version"


def stored_revision_plain(engine: Engine) -> tuple[bool, str | None]:
    """(answered, revision) read with plain SQL; answered is False when alembic must decide."""
    with engine.connect() as conn:
        if not inspect(conn).has_table(_ALEMBIC_VERSION_TABLE):
            return True, None
        rows = conn.execute(text(f"SELECT version_num FROM {_ALEMBIC_VERSION_TABLE}")).all()
    if len(rows) > 1:
        return False, None
    return True, (rows[0][0] if rows else None)


_ASSIGNMENTS: dict[Path, tuple[tuple[int, int], dict[str, object]]] = {}


def _literal_assignments(file: Path) -> dict[str, object]:
    """Module-level ``name = <literal>`` (or ``name: T = <literal>``) of a revision file, the
    four revision identifiers among them (``_parse_literal_assignments``); parsed once per
    version of the file (its modification time and size), as a process that opens many
    libraries (the API, the tests) would otherwise parse every revision file each time."""
    stat = file.stat()
    version = (stat.st_mtime_ns, stat.st_size)
    known = _ASSIGNMENTS.get(file)
    if known is not None and known[0] == version:
        return known[1]
    values = _parse_literal_assignments(file)
    _ASSIGNMENTS[file] = (version, values)
    return values


# the first top-level function or class of a revision file, and a revision identifier assigned
# at the start of a line after it
_FIRST_DEFINITION = re.compile(r"^(?:def |async def |class |@)", re.MULTILINE)
_IDENTIFIER_LATER = re.compile(r"^(?:revision|down_revision|branch_labels|depends_on)\b",
                               re.MULTILINE)


def _parse_literal_assignments(file: Path) -> dict[str, object]:
    """Alembic writes the revision identifiers above ``upgrade()``: only the text before the
    first top-level function or class is parsed (the functions are most of a file, and parsing
    every revision file in full was a noticeable part of opening a library), unless a line
    further down assigns an identifier again or the cut falls inside a string; then the whole
    file is."""
    text = file.read_text(encoding="utf-8")
    first = _FIRST_DEFINITION.search(text)
    if first is not None and _IDENTIFIER_LATER.search(text, first.start()) is None:
        try:
            return _assignments_in(text[:first.start()])
        except SyntaxError:
            pass
    return _assignments_in(text)


def _assignments_in(source: str) -> dict[str, object]:
    values: dict[str, object] = {}
    target: ast.expr
    value: ast.expr | None
    for node in ast.parse(source).body:
        if isinstance(node, ast.AnnAssign):
            target, value = node.target, node.value
        elif isinstance(node, ast.Assign) and len(node.targets) == 1:
            target, value = node.targets[0], node.value
        else:
            continue
        if isinstance(target, ast.Name) and isinstance(value, ast.Constant):
            values[target.id] = value.value
        elif isinstance(target, ast.Name):
            values[target.id] = value  # not a literal: head_from_files gives up on it
    return values


def head_from_files(script_location: Path | None = None) -> str | None:
    """The head of a plain linear chain of revision files, or None to ask alembic."""
    folder = (script_location or migrations_dir()) / "versions"
    revisions: set[str] = set()
    parents: set[str] = set()
    for file in sorted(folder.glob("*.py")):
        values = _literal_assignments(file)
        revision, parent = values.get("revision"), values.get("down_revision")
        if (not isinstance(revision, str) or not (parent is None or isinstance(parent, str))
                or values.get("branch_labels") or values.get("depends_on")):
            return None
        if revision in revisions:
            return None
        revisions.add(revision)
        if parent is not None:
            parents.add(parent)
    heads = revisions - parents
    return heads.pop() if len(heads) == 1 and parents <= revisions else None


@contextmanager
def _migration_connection(engine: Engine) -> Iterator[Connection]:
    """One connection in one transaction for schema changes (and data written with them).

    On SQLite, foreign keys are switched off while it runs: batch mode rebuilds a table by
    dropping it, and with foreign keys on, the drop would cascade-delete every child row. The
    keys are checked before the commit (``PRAGMA foreign_key_check``) and switched back on.
    """
    sqlite = engine.dialect.name == "sqlite"
    with engine.connect() as conn:
        conn.execution_options(**{WRITE_LOCK: True})
        raw = conn.connection.driver_connection if sqlite else None
        if raw is not None:
            raw.execute("PRAGMA foreign_keys=OFF")  # outside any transaction, or it is ignored
        try:
            with conn.begin():
                if engine.dialect.name == "postgresql":
                    conn.execute(text("SELECT pg_advisory_xact_lock(:id)"),
                                 {"id": _MIGRATION_LOCK_ID})
                yield conn
                if sqlite:
                    broken = conn.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
                    if broken:
                        raise ConfigError(
                            f"changing {display_url(engine.url)} would break {len(broken)} "
                            f"references (first: table {broken[0][0]}).",
                            hint="nothing was changed; report this with --debug")
        finally:
            if raw is not None:
                raw.execute("PRAGMA foreign_keys=ON")


@contextmanager
def _owner_only(engine: Engine) -> Iterator[None]:
    """A schema change the server refused for lack of privilege (PostgreSQL: only the owner
    of the tables may alter them, whatever formdb role the login has) as one line saying so,
    rather than naming the duty of whichever table the migration touched first."""
    try:
        yield
    except DBAPIError as exc:
        if _sqlstate(exc) != "42501" or "formdb: " in str(getattr(exc, "orig", "")):
            raise
        from formdb.errors import Forbidden
        from formdb.store.identity import identity_of

        login = identity_of(engine)
        raise Forbidden(f"your login {login} may not change the schema of "
                        f"{display_url(engine.url)}: migrations run as the login that owns "
                        "its tables.", hint="run the command logged in as the owner (a formdb "
                        "admin too: see the README's team section); nothing was changed"
                        ) from None


def _migrate(engine: Engine, direction: str, revision: str,
             script_location: Path | None = None) -> None:
    from alembic import command

    run = command.upgrade if direction == "upgrade" else command.downgrade
    with _owner_only(engine), _migration_connection(engine) as conn:
        run(alembic_config(conn, script_location), revision)


class _Rehearsed(Exception):
    """Rolls back a rehearsed migration."""


TableShape = dict[str, tuple[tuple[str, ...], int]]  # table -> (columns, rows)


def table_shapes(conn: Connection) -> TableShape:
    """Every table with its columns and row count, as one connection sees them."""
    found: TableShape = {}
    inspector = inspect(conn)
    for name in inspector.get_table_names():
        columns = tuple(c["name"] for c in inspector.get_columns(name))
        rows = conn.execute(text(f'SELECT count(*) FROM "{name}"')).scalar_one()
        found[name] = (columns, int(rows))
    return found


def rehearse(engine: Engine, direction: str, revision: str) -> tuple[TableShape, TableShape]:
    """Run a migration in a transaction that is always rolled back: the tables before and
    after, so a destructive command can show exactly what it would remove."""
    from alembic import command

    run = command.upgrade if direction == "upgrade" else command.downgrade
    shapes: list[TableShape] = []
    try:
        with _owner_only(engine), _migration_connection(engine) as conn:
            shapes.append(table_shapes(conn))
            run(alembic_config(conn), revision)
            shapes.append(table_shapes(conn))
            raise _Rehearsed
    except _Rehearsed:
        pass
    return shapes[0], shapes[1]


def upgrade_to_head(engine: Engine, script_location: Path | None = None) -> str:
    """Create or upgrade the schema to the newest revision; returns that revision."""
    _migrate(engine, "upgrade", "head", script_location)
    return head_revision(script_location)


def downgrade(engine: Engine, revision: str, script_location: Path | None = None,
              then: Callable[[Connection], None] | None = None) -> None:
    """Step the schema down to ``revision`` ("base" removes every table); ``then`` runs on the
    same connection afterwards, in the same transaction."""
    from alembic import command

    with _owner_only(engine), _migration_connection(engine) as conn:
        command.downgrade(alembic_config(conn, script_location), revision)
        if then is not None:
            then(conn)


def upgrade(engine: Engine, revision: str, script_location: Path | None = None) -> None:
    _migrate(engine, "upgrade", revision, script_location)


def _library_hidden_from_login(engine: Engine) -> tuple[str, str] | None:
    """(login, schema) when a schema of the login's search path holds a formdb library the
    login may not read (PostgreSQL: no role from grant-setup), else None: such a library looks
    empty or refuses a read, and "run formdb init" or "needs the editor role" would be the
    wrong advice."""
    if engine.dialect.name != "postgresql":
        return None
    with engine.connect() as conn:
        found = conn.execute(text(
            "SELECT session_user::text, n.nspname::text FROM pg_namespace n "
            "JOIN pg_class c ON c.relnamespace = n.oid WHERE c.relname = 'alembic_version' "
            "AND NOT (has_schema_privilege(n.oid, 'USAGE') AND has_table_privilege(c.oid, "
            "'SELECT')) AND n.nspname = ANY(string_to_array("
            "replace(replace(current_setting('search_path'), '\"', ''), ' ', ''), ',')) "
            "LIMIT 1")).first()
    return (str(found[0]), str(found[1])) if found is not None else None


def _refuse_hidden_library(engine: Engine, shown: str) -> None:
    hidden = _library_hidden_from_login(engine)
    if hidden is not None:
        from formdb.errors import Forbidden

        raise Forbidden(f"your login {hidden[0]} may not read the library in {shown} "
                        f"(schema {hidden[1]}): it has no formdb role there.",
                        hint=f"ask an admin to give {hidden[0]} a role (formdb user add, "
                             "or user grant)")


def open_library(url: str) -> Engine:
    """An engine for a library that is at the newest migration, or SchemaOutdated saying why."""
    engine = make_engine(url, must_exist=True)
    shown = display_url(engine.url)
    try:
        try:
            answered, current = stored_revision_plain(engine)
        except DBAPIError as exc:
            if _sqlstate(exc) != "42501":
                raise
            _refuse_hidden_library(engine, shown)
            raise
        if answered and current is not None and current == head_from_files():
            return engine  # the everyday case, without importing alembic
        from alembic.script import ScriptDirectory

        current = current_revision(engine)
        head = head_revision()
        if current == head:
            return engine
        if current is None:
            _refuse_hidden_library(engine, shown)
            raise SchemaOutdated(f"{shown} is not a formdb library yet.",
                                 hint="run `formdb init` (add --seed for the bundled library)")
        known = {rev.revision for rev in
                 ScriptDirectory.from_config(alembic_config()).walk_revisions()}
        if current not in known:
            raise SchemaOutdated(
                f"{shown} is at revision {current}, which this formdb does not know (a newer "
                f"formdb made it; this one stops at {head}).",
                hint="upgrade formdb to the version your team uses")
        raise SchemaOutdated(f"{shown} is at revision {current}; this formdb needs {head}.",
                             hint="run `formdb init` to upgrade")
    except BaseException:
        engine.dispose()
        raise


# --- unit of work -------------------------------------------------------------------------------

# tables written by one duty only (services.admin.grants); every other table is the editor's
_DUTY_OF_TABLE = {"formulas": "formulator", "users": "admin", "user_roles": "admin"}
_DENIED = re.compile(r"permission denied for (table|relation|sequence|function|schema) "
                     r"\"?([A-Za-z0-9_.]+)")


def duty_for_table(table: str) -> str:
    """The formdb duty whose database role writes ``table`` (see ``db grant-setup``)."""
    if table.startswith(("review", "sign")):
        return "reviewer"
    return _DUTY_OF_TABLE.get(table, "editor")


def _sqlstate(exc: BaseException) -> str | None:
    orig = getattr(exc, "orig", None)
    return getattr(orig, "sqlstate", None) or getattr(orig, "pgcode", None)


def refusal_of(exc: BaseException) -> FormdbError | None:
    """A server refusal as one clean line: a privilege error names the duty's role, a unique
    violation (two people adding the same record at once), a deadlock or a serialization
    failure is a Conflict. Never the SQL, the parameters or the formula text."""
    from formdb.errors import Forbidden

    state = _sqlstate(exc)
    if state == "42501" and "formdb: " in str(getattr(exc, "orig", "")):
        said = str(getattr(exc, "orig", "")).split("formdb: ", 1)[1].splitlines()[0]
        return Forbidden(f"the database refused: {said}.",
                         hint="nothing was changed; ask an admin for the role")
    if state == "42501":  # insufficient_privilege
        orig = getattr(exc, "orig", None)
        found = _DENIED.search(str(orig or ""))
        kind, thing = found.groups() if found else ("object", "?")
        if kind in ("table", "relation"):
            duty = duty_for_table(thing.split(".")[-1])
            need = (f"that needs the role {duty} (its database role, PREFIX_{duty}, comes "
                    "from `formdb db grant-setup`)")
            hint = (f"ask an admin to give your login the role {duty} (formdb user grant "
                    f"LOGIN {duty} --yes); nothing was changed")
        else:
            need = "that needs the admin role (or a formdb server function)"
            hint = "ask an admin; nothing was changed"
        return Forbidden(f"the database refused your login permission on {kind} {thing}: {need}.",
                         hint=hint)
    if state in ("40P01", "40001"):  # deadlock_detected, serialization_failure
        return Conflict("someone else was changing the same records at the same moment, and "
                        "the database stopped one of the two changes.",
                        hint="nothing was changed; look again and repeat your change")
    if state == "23505":  # unique_violation
        diag = getattr(getattr(exc, "orig", None), "diag", None)
        table = getattr(diag, "table_name", None) or "the library"
        return Conflict(f"someone else added the same record to {table} at the same moment; "
                        "names there are unique.", hint="nothing was changed; look it up and "
                        "repeat your change if it is still needed")
    return None


def translate_failure(exc: BaseException, engine: Engine | None) -> FormdbError | None:
    """The FormdbError a database failure that is not a bug stands for, or None."""
    if isinstance(exc, StaleDataError):
        return Conflict("someone else changed this record while you were working on it.",
                        hint="read it again and repeat your change")
    refused = refusal_of(exc)
    if refused is not None:
        return refused
    if isinstance(exc, OperationalError) and engine is None:
        reason = " ".join(str(exc.orig or exc).split()).rstrip(".")
        return ConfigError(f"the library could not be used: {reason}.",
                           hint=f"{_next_step(reason)}; nothing was changed")
    if isinstance(exc, OperationalError) and engine is not None:
        reason = " ".join(str(exc.orig or exc).split()).rstrip(".")
        return ConfigError(f"the library {display_url(engine.url)} could not be written: "
                           f"{reason}.", hint=f"{_next_step(reason)}; nothing was changed")
    return None


def _next_step(reason: str) -> str:
    """What to do about a database failure: waiting helps a busy library, not a read-only file,
    a full disk or a path that is no SQLite file (a device, say)."""
    said = reason.casefold()
    if "readonly" in said or "read-only" in said or "permission" in said:
        return "ask for write access to the library file and its folder"
    if "disk i/o" in said or "disk is full" in said or "unable to open" in said \
            or "not a database" in said:
        return ("check that --db names a SQLite file (or a new one in a writable folder) on a "
                "disk with room, or a PostgreSQL URL")
    return "try again"


@contextmanager
def unit_of_work(engine: Engine, *, write: bool = False) -> Iterator[Session]:
    """One transaction on an engine the caller owns (administration and tests), run by the
    Library's own unit: ``write`` takes the write lock up front, as ``Library.write()`` does;
    without it, a plain transaction that may still write (no read-only snapshot)."""
    from formdb.store.library import Library

    with Library(engine, owns_engine=False)._unit(write=write, snapshot=False) as session:
        yield session


@contextmanager
def upgraded_unit_of_work(engine: Engine) -> Iterator[Session]:
    """Upgrade to head and yield a session in the same transaction, so the schema change and
    the data written after it (``init --seed``) are committed together or not at all."""
    try:
        from alembic import command

        with _migration_connection(engine) as conn:
            command.upgrade(alembic_config(conn), "head")
            session = LibrarySession(bind=conn, expire_on_commit=False)
            try:
                yield session
                session.flush()
            finally:
                session.close()
    except FormdbError:
        raise
    except BaseException as exc:
        problem = translate_failure(exc, engine)
        if problem is not None:
            raise problem from exc
        raise


_ROLE_CATALOG_LOCK = "SELECT pg_advisory_xact_lock(hashtext('formdb grant-setup'))"
_ROLE_CATALOG_ATTEMPTS = 5


def in_role_catalog_transaction(engine: Engine, work: Callable[[Connection], T]) -> T:
    """Run ``work`` in one transaction that changes roles or database privileges (PostgreSQL).

    Those live in catalogs every database of the server shares, where two concurrent GRANTs or a
    DROP OWNED BY on one row fail with 'tuple concurrently updated' instead of waiting. An
    advisory lock queues formdb's own role changes; a clash with one in another database is
    retried a few times.
    """
    for attempt in range(_ROLE_CATALOG_ATTEMPTS):
        try:
            with engine.begin() as conn:
                conn.execute(text(_ROLE_CATALOG_LOCK))
                return work(conn)
        except DBAPIError as exc:
            if "tuple concurrently updated" not in str(exc.orig) or \
                    attempt == _ROLE_CATALOG_ATTEMPTS - 1:
                raise
    raise AssertionError("unreachable")
