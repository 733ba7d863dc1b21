"""Many rows into one table with one ``executemany`` of the driver, and the ids they get.

On SQLite each statement of that ``executemany`` inserts up to ``ROWS_PER_STATEMENT`` rows
(``INSERT ... VALUES (...), (...)``, the rows in their order). SQLAlchemy's own
``session.execute(insert(table), rows)`` builds and processes the parameters of every row in
Python (several microseconds a row); a large import writes half a million rows.
``insert_rows`` writes the same values: each column's bind processor for the dialect is applied
(a timestamp becomes the text SQLite stores, a yes/no an integer), and every column the rows do
not name gets its scalar Python default, as a Core INSERT gives it. A table whose missing column
has a default computed in Python is written through SQLAlchemy's statement instead.

It bypasses the ORM's ``do_orm_execute`` hooks on purpose, so it is for tables the caller may
write: ``formdb.store.sealing.append_rows`` uses it for rows it has sealed itself, the ingredient
import for its own tables. The caller's session must already hold what the hooks would have
done first (the flush of pending ORM rows, the writer's lock: ``sealing.lock_for_write``).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from itertools import chain
from operator import itemgetter
from typing import Any

from sqlalchemy import Float, Table, func, insert, select, text
from sqlalchemy.engine import Dialect
from sqlalchemy.orm import Session

_MARKERS = {"qmark": "?", "format": "%s", "pyformat": "%s"}


def sequence_ids(session: Session, table: str, count: int) -> list[int]:
    """The next ``count`` values of the PostgreSQL sequence behind ``table.id``, ascending:
    the ids its serial default would give ``count`` rows inserted one after another."""
    values = session.connection().execute(
        text("SELECT nextval(pg_get_serial_sequence(:t, 'id')) FROM generate_series(1, :n)"),
        {"t": table, "n": count}).scalars().all()
    return sorted(int(v) for v in values)


def new_ids(session: Session, table: Table, count: int) -> list[int]:
    """The ids ``count`` new rows of ``table`` get when inserted in order without one: its
    sequence's next values on PostgreSQL; on SQLite the largest id plus 1, 2, ... (a rowid
    table without AUTOINCREMENT numbers new rows so)."""
    if session.get_bind().dialect.name == "postgresql":
        return sequence_ids(session, table.name, count)
    last = session.connection().execute(select(func.max(table.c.id))).scalar()
    start = int(last or 0) + 1
    return list(range(start, start + count))


def insert_rows(session: Session, table: Table, columns: Sequence[str],
                rows: Sequence[tuple[Any, ...]]) -> None:
    """INSERT ``rows`` (tuples in the order of ``columns``) into ``table``."""
    if not rows:
        return
    connection = session.connection()
    dialect = connection.dialect
    marker = _MARKERS.get(dialect.paramstyle)
    if marker is None:  # a driver with another parameter style
        _through_sqlalchemy(session, table, columns, rows)
        return
    defaults: list[tuple[str, Any]] = []
    for column in table.columns:
        if column.key in columns or column.default is None:
            continue
        if not column.default.is_scalar:
            _through_sqlalchemy(session, table, columns, rows)
            return
        defaults.append((column.key, column.default.arg))  # type: ignore[attr-defined]
    names = [*columns, *(name for name, _value in defaults)]
    constants = tuple(value for _name, value in defaults)
    processing = [(index, process) for index, (name, process) in
                  enumerate((name, _processor(table, name, dialect)) for name in names)
                  if process is not None and not _passes(table.c[name].type, index, rows)]
    values: Sequence[tuple[Any, ...]] = rows
    if processing:
        values = _processed(rows, constants, processing)
    elif constants:
        values = [(*row, *constants) for row in rows]
    prepare = dialect.identifier_preparer
    head = (f"INSERT INTO {prepare.format_table(table)} "
            f"({', '.join(prepare.quote(name) for name in names)}) VALUES ")
    one = f"({', '.join([marker] * len(names))})"
    per = _rows_per_statement(dialect, len(names))
    if per == 1:
        connection.exec_driver_sql(head + one, list(values))
        return
    # SQLite: ``per`` rows in each statement (INSERT ... VALUES (...), (...), ...), the rows in
    # their order, so a rowid column numbers them as one row per statement would
    full = len(values) - len(values) % per
    if full:
        connection.exec_driver_sql(head + ", ".join([one] * per), [
            tuple(chain.from_iterable(values[start:start + per]))
            for start in range(0, full, per)])
    if full < len(values):
        rest = values[full:]
        connection.exec_driver_sql(head + ", ".join([one] * len(rest)),
                                   tuple(chain.from_iterable(rest)))


# SQLite steps one statement of many rows for much less than as many one-row statements (the
# property rows of a 50,000-row import: 0.47-0.49 s of CPU at 100 rows a statement against
# 0.70-0.73 s one row a statement, plain sqlite3; no gain beyond about 100). A statement stays
# within 999 parameters, the lowest limit a SQLite build has had (SQLITE_MAX_VARIABLE_NUMBER).
ROWS_PER_STATEMENT = 100
_SQLITE_PARAMETERS = 999


def _rows_per_statement(dialect: Dialect, columns: int) -> int:
    """Rows in one INSERT: 1 but on SQLite (psycopg already sends a pipeline of statements)."""
    if dialect.name != "sqlite":
        return 1
    return max(1, min(ROWS_PER_STATEMENT, _SQLITE_PARAMETERS // columns))


def insert_dicts(session: Session, table: Table, rows: Sequence[Mapping[str, Any]]) -> None:
    """INSERT ``rows`` (dicts with the same keys) into ``table``."""
    if not rows:
        return
    keys = rows[0].keys()
    if any(row.keys() != keys for row in rows):  # rows of several shapes: SQLAlchemy's way
        session.connection().execute(insert(table), [dict(row) for row in rows])
        return
    columns = list(keys)
    if len(columns) == 1:
        insert_rows(session, table, columns, [(row[columns[0]],) for row in rows])
        return
    insert_rows(session, table, columns, list(map(itemgetter(*columns), rows)))  # tuples, in C


def _processor(table: Table, name: str, dialect: Dialect) -> Callable[[Any], Any] | None:
    column_type = table.c[name].type
    return column_type.dialect_impl(dialect).bind_processor(dialect)


def _passes(column_type: Any, index: int, rows: Sequence[tuple[Any, ...]]) -> bool:
    """True when a column's bind processor would hand back every value as it is: a float
    column (no Decimal) whose values are all floats or None, as the ingredient import's
    property values are (270,000 rows of a 50,000-row table, each tuple rebuilt otherwise)."""
    if not isinstance(column_type, Float) or column_type.asdecimal or index >= len(rows[0]):
        return False
    return set(map(type, map(itemgetter(index), rows))) <= _FLOAT_OR_NONE


_FLOAT_OR_NONE = frozenset({float, type(None)})


def _processed(rows: Sequence[tuple[Any, ...]], constants: tuple[Any, ...],
               processing: list[tuple[int, Callable[[Any], Any]]]) -> list[tuple[Any, ...]]:
    """The rows with the bind processors applied, column by column (the rows turned into
    columns and back in C): a column whose values are all one object (one timestamp for a whole
    import, True, False) is processed once; in another, a value that is the very object of the
    row before is processed once."""
    count = len(rows)
    columns: list[Sequence[Any]] = [*zip(*rows, strict=True),
                                    *((value,) * count for value in constants)]
    for index, process in processing:
        column = columns[index]
        if len(set(map(id, column))) == 1:  # the column holds these objects while we look
            columns[index] = (process(column[0]),) * count
            continue
        done_column = []
        seen: Any = _UNSET
        done: Any = None
        for value in column:
            if value is not seen:
                seen, done = value, process(value)
            done_column.append(done)
        columns[index] = done_column
    return list(zip(*columns, strict=True))


_UNSET = object()


def _through_sqlalchemy(session: Session, table: Table, columns: Sequence[str],
                        rows: Sequence[tuple[Any, ...]]) -> None:
    session.connection().execute(insert(table), [dict(zip(columns, row, strict=True))
                                                 for row in rows])


__all__ = ["insert_dicts", "insert_rows", "new_ids", "sequence_ids"]
