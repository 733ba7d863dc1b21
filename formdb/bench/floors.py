"""The raw floors the figures are divided by: the least work any tool must do for the same data.

- check floor: read every stored formula's TOML text with the plain driver (``sqlite3`` or
  ``psycopg``), parse it with ``tomllib``, and turn each line into a tuple (name, percent, phase,
  the ingredient's property values), the properties read once from ``property_values`` into
  tuples keyed by name. No validation, no rules: the I/O and parsing cost alone.
- import floor: ``pandas.read_csv`` of the file (all cells as text) plus one ``executemany``
  INSERT of its rows into a table with the file's columns, committed.
- start-up floor: ``python -c "import sqlalchemy, pydantic, click"``.
"""

from __future__ import annotations

import sqlite3
import sys
import time
import tomllib
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sqlalchemy.engine import make_url

from formdb.store.db import sqlite_path

PROPERTIES_SQL = ("SELECT n.name_key, v.property, v.value_num, v.value_text "
                  "FROM ingredient_names n JOIN property_values v "
                  "ON v.ingredient_id = n.ingredient_id ORDER BY n.name_key, v.property")
FORMULAS_SQL = "SELECT content FROM formulas ORDER BY name_key"


@contextmanager
def raw_connection(url: str) -> Iterator[Any]:
    """A plain DB-API connection (sqlite3 or psycopg) to the library at ``url``."""
    path = sqlite_path(url)
    conn: Any
    if path is not None:
        conn = sqlite3.connect(path)
    else:
        import psycopg

        parsed = make_url(url)
        conn = psycopg.connect(
            host=parsed.host or "localhost", port=parsed.port or 5432, user=parsed.username,
            password=parsed.password, dbname=parsed.database)
    try:
        yield conn
    finally:
        conn.close()


def _key(name: str) -> str:
    return " ".join(name.split()).casefold()


@dataclass(frozen=True)
class Timing:
    seconds: float  # wall
    cpu_seconds: float  # this process's CPU time (the server's is not in it)


@contextmanager
def timed() -> Iterator[list[Timing]]:
    """``with timed() as t:`` ... ``t[0]`` is the block's Timing."""
    out: list[Timing] = []
    started, cpu = time.perf_counter(), time.process_time()
    yield out
    out.append(Timing(time.perf_counter() - started, time.process_time() - cpu))


def check_floor(url: str) -> tuple[Timing, int, int]:
    """(timing, formulas, lines): read and parse every formula line with its properties."""
    with timed() as timing:
        formulas, lines = _read_formula_lines(url)
    return timing[0], formulas, lines


def _read_formula_lines(url: str) -> tuple[int, int]:
    formulas = lines = 0
    with raw_connection(url) as conn:
        cursor = conn.cursor()
        cursor.execute(PROPERTIES_SQL)
        grouped: dict[str, list[tuple[str, float | None, str | None]]] = {}
        for name, prop, num, text in cursor.fetchall():
            grouped.setdefault(name, []).append((prop, num, text))
        properties = {name: tuple(values) for name, values in grouped.items()}
        cursor.execute(FORMULAS_SQL)
        while rows := cursor.fetchmany(500):
            for (content,) in rows:
                data = tomllib.loads(content)
                resolved = tuple(
                    (line["inci"], float(line["percent"]), line.get("phase"),
                     properties.get(_key(line["inci"]), ()))
                    for line in data["ingredients"])
                formulas += 1
                lines += len(resolved)
    return formulas, lines


def import_floor(csv_path: Path, url: str) -> tuple[Timing, int]:
    """(timing, rows): ``pandas.read_csv`` plus a plain ``executemany`` of the same rows into
    an empty table at ``url`` (a SQLite file, or a PostgreSQL database), committed."""
    import pandas as pd

    with timed() as timing:
        rows = _read_and_insert(pd, csv_path, url)
    return timing[0], rows


def _read_and_insert(pd: Any, csv_path: Path, url: str) -> int:
    frame = pd.read_csv(csv_path, dtype=str, keep_default_na=False)
    columns = [f"c{i}" for i in range(len(frame.columns))]
    rows = list(frame.itertuples(index=False, name=None))
    with raw_connection(url) as conn:
        cursor = conn.cursor()
        marker = "?" if isinstance(conn, sqlite3.Connection) else "%s"
        cursor.execute(f"CREATE TABLE floor_rows ({', '.join(c + ' TEXT' for c in columns)})")
        cursor.executemany(
            f"INSERT INTO floor_rows VALUES ({', '.join([marker] * len(columns))})", rows)
        conn.commit()
    return len(rows)


STARTUP_FLOOR_CODE = "import sqlalchemy, pydantic, click"


def startup_floor_argv() -> list[str]:
    """The start-up floor process; ``formdb.bench.startup`` times it beside formdb's."""
    return [sys.executable, "-c", STARTUP_FLOOR_CODE]


def csv_floor(files: list[str]) -> tuple[Timing, int]:
    """(timing, rows): the raw floor of a lists import, every cell of every export read."""
    import csv

    rows = 0
    with timed() as timing:
        for name in files:
            with open(name, newline="", encoding="utf-8") as handle:
                rows += sum(1 for _ in csv.reader(handle))
    return timing[0], rows
