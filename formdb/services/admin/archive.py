"""A backup is input like any other: checked whole before a restore writes anything.

A ``.zip`` archive: its size unpacked, the manifest's shape (format, a known revision, a table
name -> row count map), one ``tables/<name>.jsonl`` per table and no other part, the tables
exactly those of formdb's schema at that revision, every line a JSON object of that table's
columns, no primary key twice, and the row counts the manifest states. A SQLite copy: an intact
database whose objects are exactly formdb's at its revision: no trigger, view, table, index or
column that the migrations did not make is carried into the library.

Every refusal is an ``InvalidData`` naming the archive and the part, and nothing is restored.
"""

from __future__ import annotations

import json
import sqlite3
import tempfile
import zipfile
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import date, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import Date, DateTime, MetaData, Table

from formdb.errors import InvalidData

MAX_ARCHIVE_UNPACKED_BYTES = 20_000_000_000  # far above any library; a ZIP bomb is not read
MAX_ARCHIVE_PARTS = 1_000
MAX_LINE_BYTES = 50_000_000  # one row of a table file
_NOTHING = "nothing was restored"


@dataclass(frozen=True)
class Manifest:
    format: str
    revision: str
    tables: dict[str, int]  # table -> rows, in load order


def _refuse(path: Path, text: str) -> InvalidData:
    return InvalidData(f"{path}: {text}.", hint=_NOTHING)


def read_manifest(archive: zipfile.ZipFile, path: Path, expected_format: str,
                  known_revision: Callable[[str], bool]) -> Manifest:
    """The archive's manifest, checked for shape and against the parts the archive holds."""
    parts = archive.infolist()
    if len(parts) > MAX_ARCHIVE_PARTS:
        raise _refuse(path, f"the archive holds {len(parts):,} parts, more than a backup has")
    if sum(p.file_size for p in parts) > MAX_ARCHIVE_UNPACKED_BYTES:
        raise _refuse(path, "the archive unpacks to more than a backup formdb restores")
    try:
        raw = archive.read("manifest.json")
    except KeyError:
        raise InvalidData(f"{path}: not a formdb backup (no manifest.json).",
                          hint="give a file written by `formdb db backup`") from None
    try:
        data = json.loads(raw)
    except (ValueError, RecursionError):
        raise InvalidData(f"{path}: not a formdb backup (manifest.json is not JSON).",
                          hint="give a file written by `formdb db backup`") from None
    if not isinstance(data, dict):
        raise _refuse(path, "manifest.json is not a JSON object")
    fmt, revision, tables = data.get("format"), data.get("revision"), data.get("tables")
    if fmt != expected_format:
        raise InvalidData(f"{path}: backup format {fmt!r} is not {expected_format!r}.",
                          hint="restore it with the formdb that wrote it")
    if not isinstance(revision, str) or not revision:
        raise _refuse(path, "manifest.json names no schema revision")
    if not known_revision(revision):
        raise _refuse(path, f"schema revision {revision[:40]!r} is not one this formdb knows")
    if not isinstance(tables, dict) or not all(
            isinstance(k, str) and isinstance(v, int) and not isinstance(v, bool) and v >= 0
            for k, v in tables.items()):
        raise _refuse(path, "manifest.json's tables must map each table name to its row count")
    expected_parts = {"manifest.json", *(f"tables/{name}.jsonl" for name in tables)}
    names = [p.filename for p in parts]
    present = set(names)
    if len(present) != len(names):
        twice = next(n for n in names if names.count(n) > 1)
        raise _refuse(path, f"the archive holds {twice[:80]!r} twice")
    missing = sorted(expected_parts - present)
    if missing:
        raise _refuse(path, f"the manifest lists {missing[0]}, which the archive lacks")
    extra = sorted(present - expected_parts)
    if extra:
        raise _refuse(path, f"the archive holds {extra[0][:80]!r}, which the manifest does not "
                      "list")
    return Manifest(fmt, revision, dict(tables))


def check_tables(manifest: Manifest, meta: MetaData, path: Path) -> None:
    """The manifest's tables are exactly formdb's at the archive's revision."""
    schema = {name for name in meta.tables if name != "alembic_version"}
    listed = {name for name in manifest.tables if name != "alembic_version"}
    for name in sorted(listed - schema):
        raise _refuse(path, f"table {name[:80]!r} is not in formdb's schema at revision "
                      f"{manifest.revision}")
    for name in sorted(schema - listed):
        raise _refuse(path, f"table {name} of the schema at revision {manifest.revision} is "
                      "missing from the archive")


def _convert(table: Table, row: dict[str, Any], where: str, path: Path) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in row.items():
        col = table.columns.get(key)
        if col is None:
            raise _refuse(path, f"{where} has a column {key[:80]!r} that table {table.name} "
                          "lacks")
        if isinstance(value, dict | list):
            raise _refuse(path, f"{where}, column {key}: a nested value where the table holds "
                          "a plain one")
        try:
            if isinstance(value, str) and isinstance(col.type, DateTime):
                value = datetime.fromisoformat(value)
            elif isinstance(value, str) and isinstance(col.type, Date):
                value = date.fromisoformat(value)
        except ValueError:
            raise _refuse(path, f"{where}, column {key}: {value[:40]!r} is not a date and "
                          "time") from None
        out[key] = value
    return out


def table_rows(archive: zipfile.ZipFile, manifest: Manifest, table: Table,
               path: Path) -> Iterator[dict[str, Any]]:
    """Each row of one table file, converted for insertion; refuses a line that is not a JSON
    object of the table's columns, a primary key seen before, and a count the manifest does not
    state."""
    part = f"tables/{table.name}.jsonl"
    keys = [c.name for c in table.primary_key.columns]
    seen: set[tuple[Any, ...]] = set()
    count = 0
    with archive.open(part) as lines:
        for number, raw in enumerate(iter(lambda: lines.readline(MAX_LINE_BYTES + 1), b""),
                                     start=1):
            where = f"{part} line {number}"
            if len(raw) > MAX_LINE_BYTES:
                raise _refuse(path, f"{where} is longer than a row formdb writes")
            if not raw.strip():
                continue
            try:
                row = json.loads(raw)
            except (ValueError, RecursionError):
                raise _refuse(path, f"{where} is not JSON") from None
            if not isinstance(row, dict):
                raise _refuse(path, f"{where} is not a JSON object")
            converted = _convert(table, row, where, path)
            if keys:
                key = tuple(converted.get(k) for k in keys)
                if key in seen:
                    raise _refuse(path, f"{where} repeats the {'/'.join(keys)} of an earlier "
                                  f"row ({', '.join(map(str, key))[:80]})")
                seen.add(key)
            count += 1
            yield converted
    stated = manifest.tables.get(table.name)
    if stated is not None and stated != count:
        raise _refuse(path, f"{part} holds {count} rows; the manifest says {stated}")


# --- SQLite copies -------------------------------------------------------------------------

def _objects(conn: sqlite3.Connection) -> dict[tuple[str, str], tuple[str, ...]]:
    """(type, name) -> the columns (tables), or () for indexes, triggers and views; SQLite's own
    internal objects (sqlite_*) left out."""
    found: dict[tuple[str, str], tuple[str, ...]] = {}
    rows = conn.execute("SELECT type, name FROM sqlite_master WHERE name NOT LIKE 'sqlite_%'")
    for kind, name in rows.fetchall():
        columns: tuple[str, ...] = ()
        if kind == "table":
            info = conn.execute("SELECT name, hidden FROM pragma_table_xinfo(?)", (name,))
            columns = tuple(f"{n}{'(hidden)' if hidden else ''}" for n, hidden in info)
        found[(kind, name)] = columns
    return found


def _reference_objects(revision: str, upgrade: Callable[[str, str], None]
                       ) -> dict[tuple[str, str], tuple[str, ...]]:
    """The objects formdb's migrations make at ``revision``, in a scratch SQLite file."""
    with tempfile.TemporaryDirectory(prefix="formdb-restore-") as folder:
        scratch = Path(folder) / "reference.sqlite"
        upgrade(f"sqlite:///{scratch}", revision)
        conn = sqlite3.connect(scratch)
        try:
            return _objects(conn)
        finally:
            conn.close()


def check_sqlite_copy(path: Path, known_revision: Callable[[str], bool],
                      upgrade: Callable[[str, str], None]) -> str:
    """The copy's revision, once the copy is an intact formdb library holding nothing else."""
    try:
        conn = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    except sqlite3.Error as exc:
        raise InvalidData(f"{path}: not a formdb SQLite backup ({exc}).",
                          hint="give a file written by `formdb db backup`") from None
    try:
        try:
            verdict = conn.execute("PRAGMA integrity_check").fetchone()
            found = _objects(conn)
            row = conn.execute("SELECT version_num FROM alembic_version").fetchall()
        except sqlite3.Error as exc:
            raise InvalidData(f"{path}: not a formdb SQLite backup ({exc}).",
                              hint="give a file written by `formdb db backup`") from None
    finally:
        conn.close()
    if not verdict or verdict[0] != "ok":
        raise _refuse(path, f"the database is damaged ({str(verdict[0] if verdict else '')[:80]})")
    if len(row) != 1 or not isinstance(row[0][0], str) or not known_revision(row[0][0]):
        raise _refuse(path, "the copy names no schema revision this formdb knows")
    revision = row[0][0]
    expected = _reference_objects(revision, upgrade)
    for key in sorted(set(found) - set(expected)):
        raise _refuse(path, f"the copy holds a {key[0]} {key[1][:80]!r} that formdb's schema "
                      f"at revision {revision} does not have; it is not carried into a library")
    for key in sorted(set(expected) - set(found)):
        raise _refuse(path, f"the copy lacks the {key[0]} {key[1]} of formdb's schema at "
                      f"revision {revision}")
    for key, columns in sorted(found.items()):
        if columns != expected[key]:
            raise _refuse(path, f"table {key[1]} has the columns {', '.join(columns)[:120]}, not "
                          f"those of formdb's schema at revision {revision}")
    return revision
