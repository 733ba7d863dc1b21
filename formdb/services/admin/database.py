"""``formdb db ...``: where the schema is, moving it along the migration chain, and backups.

Two backup forms:
- a SQLite library copied with SQLite's online backup API (``PATH`` not ending in ``.zip``): a
  consistent file even while others write, restored the same way;
- a portable archive (``PATH.zip``, any backend, the only form for PostgreSQL): ``manifest.json``
  (format, revision, tables in load order, row counts) and one JSON-lines file per table.
  Restoring it brings an empty database to the archive's revision and loads every row in one
  transaction, so a failed restore leaves the database as it was.
"""

from __future__ import annotations

import json
import sqlite3
import zipfile
from collections.abc import Callable, Iterable, Iterator
from datetime import UTC, date, datetime
from functools import lru_cache
from pathlib import Path
from typing import Any

from sqlalchemy import (
    Connection,
    Engine,
    MetaData,
    Table,
    func,
    insert,
    inspect,
    select,
    text,
)
from sqlalchemy.exc import DBAPIError, StatementError

from formdb.errors import ConfigError, Forbidden, InvalidData
from formdb.schemas.admin import Action, BackupReport, Plan, RevisionInfo, Status
from formdb.services.admin import archive as archive_check
from formdb.services.admin.access import require_on
from formdb.store import db as store
from formdb.store.sealing import SEALED_COLUMNS

BACKUP_FORMAT = "formdb-backup-1"
_BATCH = 1000


def _engine(url: str) -> Engine:
    return store.make_engine(url, must_exist=True)


@lru_cache(maxsize=1)
def _known() -> dict[str, Any]:
    """Every migration by revision: read once per process (the scripts ship with formdb)."""
    from alembic.script import ScriptDirectory  # alembic loads only when a command needs it

    script = ScriptDirectory.from_config(store.alembic_config())
    return {rev.revision: rev for rev in script.walk_revisions()}


def status(url: str) -> Status:
    engine = _engine(url)
    try:
        return Status(store.display_url(engine.url), store.current_revision(engine),
                      store.head_revision())
    finally:
        engine.dispose()


def history(url: str | None) -> list[RevisionInfo]:
    """Every revision, oldest first; the library's own marked when ``url`` is given."""
    current = status(url).current if url else None
    head = store.head_revision()
    revs = list(_known().values())[::-1]
    return [RevisionInfo(r.revision, r.down_revision, (r.doc or "").strip().splitlines()[0]
                         if r.doc else "", r.revision == current, r.revision == head)
            for r in revs]


def _is_known(revision: str) -> bool:
    return revision in _known()


def _upgrade_scratch(url: str, revision: str) -> None:
    """A scratch SQLite library at ``revision`` (the reference a SQLite copy is held to)."""
    engine = store.make_engine(url)
    try:
        store.upgrade(engine, revision)
    finally:
        engine.dispose()


def _check_target(revision: str) -> None:
    if revision in ("head", "base"):
        return
    known = _known()
    if revision not in known:
        raise InvalidData(f"no migration revision {revision!r}; formdb knows "
                          f"{', '.join(sorted(known))} (and base, head).",
                          hint="`formdb db history` lists them")


def move(url: str, revision: str, *, down: bool) -> tuple[str | None, str | None]:
    """Upgrade the library to ``revision`` in one transaction; (before, after). Downgrades
    go through :func:`downgrade` (admin role, plan, confirmation)."""
    if down:
        raise ValueError("a downgrade goes through database.downgrade")
    _check_target(revision)
    engine = _engine(url)
    try:
        before = store.current_revision(engine)
        if before != revision:
            verify_before_upgrade(engine)
        store.upgrade(engine, revision)
        return before, store.current_revision(engine)
    finally:
        engine.dispose()


def verify_before_upgrade(engine: Engine) -> None:
    """Recompute the audit chains before an upgrade and stop if one is broken, so no
    migration ever converts or seals (launders) rows that were altered. Each table is read as
    it is at the library's revision: its rows are hashed in the canonical form their columns
    belong to (an older form of ``sealing.FORMS``, or the newest without the columns added
    since, which ``ADDED_LATER`` leaves out while empty)."""
    with engine.connect() as conn:
        present = set(inspect(conn).get_table_names())
        for table in SEALED_COLUMNS:
            if table in present:
                problem = _first_break(conn, table)
                if problem is not None:
                    raise ConfigError(
                        f"the audit trail of {store.display_url(engine.url)} is broken "
                        f"({problem} in {table}): the upgrade stopped, so no migration seals "
                        "altered rows.",
                        hint="run `formdb audit verify`, and restore the last good backup")


def _form_of(table: str, columns: set[str]) -> int | None:
    """The canonical form a table's columns belong to: None for the newest (or a table
    without forms), an older form's number when its columns are those present."""
    from formdb.store.sealing import FORMS

    if {*SEALED_COLUMNS[table]} <= columns or table not in FORMS:
        return None
    older = [n for n, cols in FORMS[table].items() if set(cols) <= columns]
    return max(older) if older else None


def _first_break(conn: Connection, table: str) -> str | None:
    """The first altered or unlinked sealed row of ``table`` as it stands, or None."""
    from formdb.store.sealing import GENESIS, canonical, row_hash

    reflected = Table(table, MetaData(), autoload_with=conn)
    columns = {c.name for c in reflected.columns}
    if "row_hash" not in columns or "prev_hash" not in columns:
        return None
    form = _form_of(table, columns)
    previous: str | None = None
    stmt = select(reflected).order_by(reflected.c.id).execution_options(yield_per=1000)
    for row in conn.execute(stmt).mappings():
        values = dict(row)
        stored = values.get("row_hash")
        if stored is None:  # unsealed: `audit verify` reports it; never sealed here
            previous = None
            continue
        if form is not None:
            values["form"] = form
        if row_hash(values.get("prev_hash") or "", canonical(table, values)) != stored:
            return f"row {values['id']} was altered"
        if previous is not None and values.get("prev_hash") != previous:
            return f"row {values['id']} does not link to the row before it"
        if previous is None and values.get("prev_hash") not in (GENESIS, None) \
                and values["id"] == 1:
            return f"row {values['id']} does not start the chain"
        previous = stored
    return None


def _sealed_rows(shape: store.TableShape, engine: Engine) -> dict[str, int]:
    """Rows of each sealed table that carry a seal (the change log may hold unsealed rows)."""
    counts: dict[str, int] = {}
    with engine.connect() as conn:
        for table in SEALED_COLUMNS:
            if table not in shape:
                continue
            columns, rows = shape[table]
            if "row_hash" in columns:
                rows = int(conn.execute(text(
                    f'SELECT count(*) FROM "{table}" WHERE row_hash IS NOT NULL')).scalar_one())
            if rows:
                counts[table] = rows
    return counts


def downgrade(url: str, revision: str, *, user: str, confirm: bool,
              discard_sealed_history: bool = False, backup_to: Path | None = None,
              write_backup: Callable[[], object] | None = None) -> Plan:
    """Step the schema down to ``revision``: admin only, planned first, confirmed.

    The plan comes from rehearsing the downgrade in a transaction that is rolled back, so it
    names every table and column that would go with its row count. A downgrade that would
    remove sealed audit rows (the change log's seals, review runs, signatures) is refused
    while they exist, unless ``discard_sealed_history`` is given together with ``backup_to``:
    then a full backup is written first, and the downgrade runs only once it is complete.
    ``write_backup`` writes it (the CLI's, through its safe output file); by default
    ``backup(url, backup_to)``."""
    _check_target(revision)
    engine = _engine(url)
    try:
        before = store.current_revision(engine)
        shown = store.display_url(engine.url)
        if before is None:
            raise ConfigError(f"{shown} has no formdb schema to step down from.",
                              hint="nothing was changed")
        require_on(engine, user, Action.DOWNGRADE)
        old, new = store.rehearse(engine, "downgrade", revision)
        changes = _shape_changes(old, new)
        sealed = _sealed_rows(old, engine)
        lost = {t: n for t, n in sealed.items()
                if t not in new or "row_hash" not in new[t][0] or new[t][1] < old[t][1]}
        if lost:
            what = ", ".join(f"{n} sealed rows of {t}" for t, n in lost.items())
            if not (discard_sealed_history and backup_to is not None):
                raise Forbidden(
                    f"downgrading {shown} to {revision} would destroy {what}: refused while "
                    "sealed audit records exist.",
                    hint="if the history must go, an admin adds --discard-sealed-history "
                         "--backup PATH.zip (the backup is written first)")
            changes.insert(0, f"discard {what} (written to {backup_to} first)")
        elif backup_to is not None:
            changes.insert(0, f"back up the library to {backup_to} first")
        action = f"downgrade {shown} from {before} to {revision}"
        if not confirm:
            return Plan(action, tuple(changes), False)
        if write_backup is not None:
            write_backup()
        elif backup_to is not None:
            backup(url, backup_to)
        trace = _discard_trace(user, revision, what, backup_to) \
            if lost and backup_to is not None else None
        store.downgrade(engine, revision, then=trace)
        return Plan(action, tuple(changes), True)
    finally:
        engine.dispose()


def _discard_trace(user: str, revision: str, what: str,
                   backup_to: Path) -> Callable[[Connection], None]:
    """A change-log row saying that sealed history was discarded, by whom, and where its backup
    is (with the backup's SHA-256), written in the downgrade's transaction in the change log's
    older, unsealed form; the next upgrade seals it with the rest, so discarded history is
    never silent. Skipped where the change log keeps its seals (an unsealed row there would
    break the chain): what goes then is the review or policy tables, not the log's seals."""
    import hashlib

    digest = hashlib.sha256(backup_to.read_bytes()).hexdigest()
    note = f"sealed history discarded: {what}; backup {backup_to.name} sha256 {digest}"

    def write(conn: Connection) -> None:
        if "change_log" not in inspect(conn).get_table_names():
            return
        log = Table("change_log", MetaData(), autoload_with=conn)
        if "row_hash" in log.c:
            return
        row = {"at": datetime.now(UTC), "user": user, "entity": "database",
               "entity_key": revision, "action": "discard", "reason": note}
        conn.execute(log.insert().values({k: v for k, v in row.items() if k in log.c}))
    return write


def _shape_changes(old: store.TableShape, new: store.TableShape) -> list[str]:
    lines: list[str] = []
    for table, (columns, rows) in sorted(old.items()):
        if table == "alembic_version":
            continue
        if table not in new:
            lines.append(f"remove table {table} ({rows} rows)")
            continue
        gone = [c for c in columns if c not in new[table][0]]
        if gone:
            lines.append(f"remove from {table} the columns {', '.join(gone)} ({rows} rows)")
        if new[table][1] != rows:
            lines.append(f"{table}: {rows} rows -> {new[table][1]}")
    lines += [f"create table {table}" for table in sorted(set(new) - set(old))]
    return lines or ["change the recorded revision only (no table or column goes)"]


# --- backup -------------------------------------------------------------------------------------

def _jsonable(value: Any) -> Any:
    if isinstance(value, datetime | date):
        return value.isoformat()
    return value


def _table_rows(conn: Connection,
                meta: MetaData) -> Iterator[tuple[str, Iterator[dict[str, Any]]]]:
    for table in meta.sorted_tables:
        order = list(table.primary_key.columns) or list(table.columns)
        result = conn.execution_options(yield_per=_BATCH).execute(
            select(table).order_by(*order))
        yield table.name, (dict(row._mapping) for row in result)


def backup(url: str, path: Path) -> BackupReport:
    """Copy the whole library to ``path`` (a new file); see the module docstring for forms."""
    if path.exists():
        raise ConfigError(f"{path} already exists; a backup never overwrites a file.",
                          hint="give a new file name")
    if not path.parent.is_dir():
        raise ConfigError(f"cannot write {path}: the folder {path.parent} does not exist.",
                          hint="create the folder or give another path")
    engine = _engine(url)
    try:
        shown = store.display_url(engine.url)
        if path.suffix.lower() == ".zip":
            return _backup_zip(engine, shown, path)
        source = store.sqlite_path(url)
        if source is None:
            raise ConfigError(f"{shown} is a PostgreSQL library: back it up to a .zip archive.",
                              hint=f"formdb db backup {path.with_suffix('.zip')}")
        try:
            src, dst = sqlite3.connect(source), sqlite3.connect(path)
            try:
                src.backup(dst)  # consistent even while others write
            finally:
                src.close()
                dst.close()
        except sqlite3.Error as exc:
            path.unlink(missing_ok=True)
            raise ConfigError(f"cannot back up {shown} to {path}: {exc}.",
                              hint="nothing was written") from exc
        return BackupReport(shown, path, store.current_revision(engine), _counts(url))
    finally:
        engine.dispose()


def _counts(url: str) -> dict[str, int]:
    engine = _engine(url)
    try:
        with engine.connect() as conn:
            meta = MetaData()
            meta.reflect(conn)
            return {t.name: conn.execute(select(func.count()).select_from(t)).scalar_one()
                    for t in meta.sorted_tables}
    finally:
        engine.dispose()


def _backup_zip(engine: Engine, shown: str, path: Path) -> BackupReport:
    counts: dict[str, int] = {}
    partial = path.with_name(path.name + ".partial")
    try:
        # one read transaction: every table from the same moment
        with engine.connect() as conn, conn.begin(), \
                zipfile.ZipFile(partial, "w", zipfile.ZIP_DEFLATED) as archive:
            if engine.dialect.name == "postgresql":
                conn.execute(text("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ READ ONLY"))
            meta = MetaData()
            meta.reflect(conn)
            revision = conn.execute(text("SELECT version_num FROM alembic_version")).scalar()
            for name, rows in _table_rows(conn, meta):
                n = 0
                with archive.open(f"tables/{name}.jsonl", "w") as out:
                    for row in rows:
                        out.write((json.dumps({k: _jsonable(v) for k, v in row.items()},
                                              ensure_ascii=False) + "\n").encode())
                        n += 1
                counts[name] = n
            archive.writestr("manifest.json", json.dumps(
                {"format": BACKUP_FORMAT, "revision": revision, "tables": counts}, indent=1))
        partial.replace(path)
    except BaseException:
        partial.unlink(missing_ok=True)
        raise
    return BackupReport(shown, path, revision, counts)


# --- restore ------------------------------------------------------------------------------------

def _refuse_non_empty(conn: Connection, shown: str) -> str | None:
    meta = MetaData()
    meta.reflect(conn)
    for table in meta.sorted_tables:
        if table.name == "alembic_version":
            continue
        if conn.execute(select(func.count()).select_from(table)).scalar_one():
            raise ConfigError(f"{shown} already holds data (table {table.name}); restore only "
                              "fills an empty database.",
                              hint="create a new database (or give a new SQLite file) and "
                                   "restore into it")
    return conn.execute(text("SELECT version_num FROM alembic_version")).scalar() \
        if "alembic_version" in meta.tables else None


def _reset_sequences(conn: Connection, meta: MetaData) -> None:
    """After rows arrive with their ids, PostgreSQL's id counters must move past them."""
    for table in meta.sorted_tables:
        for col in table.primary_key.columns:
            seq = conn.execute(text("SELECT pg_get_serial_sequence(:t, :c)"),
                               {"t": table.name, "c": col.name}).scalar()
            if seq:
                conn.execute(text(f'SELECT setval(:s, COALESCE((SELECT max("{col.name}") '
                                  f'FROM "{table.name}"), 0) + 1, false)'), {"s": seq})


class _RollBack(Exception):
    """Ends an unconfirmed restore: every loaded row is rolled back."""


def _audit_restored(conn: Connection) -> list[str]:
    """Problems of the restored chains (first per table), ready to show; [] when intact.
    A table whose columns are not those of this formdb's canonical form is named as not
    verifiable."""
    from formdb.services.review.audit import verify_table
    from formdb.store.sealing import LibrarySession

    inspector = inspect(conn)
    found: list[str] = []
    with LibrarySession(bind=conn) as session:
        for table in SEALED_COLUMNS:
            if table not in inspector.get_table_names():
                continue
            columns = {c["name"] for c in inspector.get_columns(table)}
            if not {*SEALED_COLUMNS[table], "row_hash"} <= columns:
                continue  # an older form: its migration keeps the hashes (see upgrade)
            report = verify_table(session, table)
            if report.problems:
                more = len(report.problems) - 1 + report.more_problems
                found.append(f"{table}: {report.problems[0].detail}"
                             + (f" (and {more} more problems)" if more else ""))
    return found


# migrations/versions/0009_users_roles.py made a user of each author already in the change log,
# with these roles, before users were logged; every later user change is a change-log entry
_MIGRATED_BY = "migration 0009_users_roles"
_MIGRATED_ROLES = frozenset({"admin", "editor", "formulator"})


def _users_unrecorded(conn: Connection) -> list[str]:
    """The restored users and roles that the (sealed) change log does not account for: a user
    or an admin role written into the archive's tables by hand is a forgery the chains alone
    do not show. [] when every user, role and active flag is the log's replay."""
    from formdb.services.admin.access import ENTITY
    from formdb.store.change_log import changes_of

    tables = inspect(conn).get_table_names()
    if not {"users", "user_roles", "change_log"} <= set(tables):
        return []
    held: dict[str, tuple[bool, frozenset[str]]] = {}
    roles: dict[int, set[str]] = {}
    for user_id, role in conn.execute(text("SELECT user_id, role FROM user_roles")):
        roles.setdefault(user_id, set()).add(role)
    migrated: set[str] = set()
    for user_id, name, active, created_by in conn.execute(
            text("SELECT id, name, active, created_by FROM users")):
        held[name] = (bool(active), frozenset(roles.get(user_id, ())))
        if created_by == _MIGRATED_BY:
            migrated.add(name)
    authors = set(conn.scalars(text('SELECT DISTINCT "user" FROM change_log')))
    replay: dict[str, tuple[bool, set[str]]] = {
        name: (True, set(_MIGRATED_ROLES)) for name in migrated & authors}
    for name, action, payload in conn.execute(text(
            "SELECT entity_key, action, payload FROM change_log WHERE entity = :entity "
            "ORDER BY id"), {"entity": ENTITY}):
        active, granted = replay.get(name, (True, set()))
        if action == "add":
            active, granted = True, set()
        for change in changes_of(payload):
            field, old, new = change.get("field"), change.get("old"), change.get("new")
            if field == "roles" and isinstance(new, list):
                granted |= {str(r) for r in new}
            elif field == "role":
                granted |= {str(new)} if new else set()
                granted -= {str(old)} if old and not new else set()
            elif field == "active":
                active = bool(new)
        replay[name] = (active, granted)
    problems: list[str] = []
    for name in sorted(held.keys() | replay.keys()):
        if name not in replay:
            problems.append(f"users: {name!r} is not in the change log")
        elif name not in held:
            problems.append(f"users: {name!r}, added in the change log, is missing")
        elif held[name] != (replay[name][0], frozenset(replay[name][1])):
            problems.append(f"users: {name!r} holds {_user_state(*held[name])}; the change log "
                            f"records {_user_state(*replay[name])}")
    return problems


def _user_state(active: bool, roles: Iterable[str]) -> str:
    shown = ", ".join(sorted(roles)) or "no role"
    return f"the roles {shown}" + ("" if active else " (inactive)")


def _restorer_may(conn: Connection, user: str) -> None:
    """Only an admin of the library in the archive (or anyone, if it is still open) may
    restore it: the archive's users decide, as the target database is empty."""
    from formdb.services.admin.access import is_open, roles_of
    from formdb.store.sealing import LibrarySession

    if "users" not in inspect(conn).get_table_names():
        return
    with LibrarySession(bind=conn) as session:
        if is_open(session) or "admin" in roles_of(session, user):
            return
    raise Forbidden(f"{user} may not restore a backup: that needs the role admin (in the "
                    "library the backup holds).",
                    hint="ask one of the backup's admins to restore it")


def restore(url: str, path: Path, *, user: str, confirm: bool = True,
            accept_broken_chains: bool = False) -> Plan:
    """Fill an empty database from a backup made by :func:`backup`, all or nothing.

    Admin only (of the library in the archive); the chains of the change log and review
    records are verified before anything is kept, and a broken or forged archive is refused
    unless ``accept_broken_chains``. Unconfirmed, the whole restore runs and is rolled back,
    and the plan says what it would restore."""
    if not path.is_file():
        raise ConfigError(f"no backup file {path}.", hint="give the file `formdb db backup` wrote")
    if not zipfile.is_zipfile(path):
        return _restore_sqlite_copy(url, path, user=user, confirm=confirm,
                                    accept_broken_chains=accept_broken_chains)
    engine = store.make_engine(url)
    shown = store.display_url(engine.url)
    plan: Plan | None = None
    try:
        with zipfile.ZipFile(path) as archive:
            manifest = archive_check.read_manifest(archive, path, BACKUP_FORMAT, _is_known)
            revision = manifest.revision
            counts: dict[str, int] = {}
            try:
                with engine.connect() as conn, conn.begin():
                    current = _refuse_non_empty(conn, shown)
                    if current is None:
                        from alembic import command

                        command.upgrade(store.alembic_config(conn), revision)
                    elif current != revision:
                        raise ConfigError(f"{shown} is at revision {current}; the backup is at "
                                          f"{revision}.",
                                          hint="restore into a new, empty database")
                    meta = MetaData()
                    meta.reflect(conn)
                    archive_check.check_tables(manifest, meta, path)
                    for name in manifest.tables:
                        if name == "alembic_version":
                            continue
                        counts[name] = _load_table(conn, meta.tables[name], manifest, archive,
                                                   path)
                    if engine.dialect.name == "postgresql":
                        _reset_sequences(conn, meta)
                    plan = _restore_plan(conn, shown, path, revision, counts, user, confirm,
                                         accept_broken_chains)
                    if not plan.done:
                        raise _RollBack
            except _RollBack:
                pass
            assert plan is not None
            return plan
    except zipfile.BadZipFile as exc:
        raise InvalidData(f"{path}: the archive is damaged ({exc}).",
                          hint="nothing was restored") from exc
    finally:
        engine.dispose()


def _restore_plan(conn: Connection, shown: str, path: Path, revision: str | None,
                  counts: dict[str, int], user: str, confirm: bool,
                  accept_broken_chains: bool) -> Plan:
    """Check the users of what was loaded against its change log, who restores (by those
    users), and the chains; the plan (done = confirm)."""
    forged_users = _users_unrecorded(conn)
    if forged_users:  # never restored as they are: they decide who may do what
        raise InvalidData.of([f"{path}: the users in the backup are not those its change log "
                              f"records: {line}" for line in forged_users],
                             hint="nothing was restored; restore an earlier backup")
    _restorer_may(conn, user)
    broken = _audit_restored(conn)
    if broken and not accept_broken_chains:
        raise InvalidData.of(
            [f"{path}: the audit trail in the backup is broken or forged: {line}"
             for line in broken],
            hint="nothing was restored; restore an earlier backup, or add "
                 "--accept-broken-chains to restore it as it is (audit verify will report it)")
    changes = [f"restore {sum(counts.values())} rows in {len(counts)} tables at revision "
               f"{revision} into {shown}"]
    changes += [f"{table}: {rows} rows" for table, rows in counts.items() if rows]
    changes += ([f"audit chains broken, restored as they are: {line}" for line in broken]
                or ["audit chains verified: intact"])
    return Plan(f"restore {path.name}", tuple(changes), confirm)


def _load_table(conn: Connection, table: Table, manifest: archive_check.Manifest,
                archive: zipfile.ZipFile, path: Path) -> int:
    """Insert one table's rows in batches; a row the database refuses (a type, a constraint)
    is the archive's fault: one line naming the table, and the transaction rolls back."""
    batch: list[dict[str, Any]] = []
    n = 0

    def flush() -> None:
        try:
            with conn.begin_nested():
                conn.execute(insert(table), batch)
        except (DBAPIError, StatementError) as exc:
            reason = str(getattr(exc, "orig", exc)).splitlines()[0][:160]
            raise InvalidData(f"{path}: tables/{table.name}.jsonl holds rows the table refuses "
                              f"({reason}).", hint="nothing was restored") from None

    for row in archive_check.table_rows(archive, manifest, table, path):
        batch.append(row)
        if len(batch) >= _BATCH:
            flush()
            n += len(batch)
            batch = []
    if batch:
        flush()
        n += len(batch)
    return n


def _restore_sqlite_copy(url: str, path: Path, *, user: str, confirm: bool,
                         accept_broken_chains: bool) -> Plan:
    target = store.sqlite_path(url)
    if target is None:
        raise ConfigError(f"{path} is a SQLite copy; it restores into a SQLite library only.",
                          hint="back the library up to a .zip to move it to PostgreSQL")
    revision = archive_check.check_sqlite_copy(path, _is_known, _upgrade_scratch)
    engine = store.make_engine(url)
    shown = store.display_url(engine.url)
    try:
        with engine.connect() as conn:
            _refuse_non_empty(conn, shown)
    finally:
        engine.dispose()
    # check the copy read-only, through its own engine on a throwaway duplicate (opening a
    # SQLite file with formdb's settings may write its journal mode)
    import shutil
    import tempfile

    with tempfile.TemporaryDirectory() as scratch:
        probe = Path(scratch) / "probe.sqlite"
        shutil.copyfile(path, probe)
        source = store.make_engine(str(probe), must_exist=True)
        try:
            with source.connect() as conn:
                counts = {name: rows for name, (_c, rows) in store.table_shapes(conn).items()
                          if name != "alembic_version"}
                plan = _restore_plan(conn, shown, path, revision, counts, user, confirm,
                                     accept_broken_chains)
        finally:
            source.dispose()
    if not plan.done:
        return plan
    src = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    dst = sqlite3.connect(target)
    try:
        src.backup(dst)  # page by page under the target's lock; replaces the whole file at once
    finally:
        src.close()
        dst.close()
    return plan
