"""Build a synthetic benchmark library: the seed library, invented ingredients, stored formulas.

Ingredients go through the real import (``import_table``), so they are stored exactly as a
supplier table would be. Formulas are inserted in bulk inside one transaction, but every row is
what ``formdb formula import`` stores for the same file: the TOML text as written, its SHA-256,
version 1, and one ``add`` change-log row (``tests/bench`` compares the two).
"""

from __future__ import annotations

import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, cast

from sqlalchemy import Engine, Table, create_engine, insert, text
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from formdb.bench import synthetic
from formdb.errors import ConfigError
from formdb.schemas.ingredient import name_key
from formdb.services.library.formula_files import content_hash, parse_formula_text
from formdb.services.seed.setup import init_library
from formdb.store.change_log import log_entry, log_values
from formdb.store.db import open_library, sqlite_path, unit_of_work
from formdb.store.models import ChangeLogEntry, Source, StoredFormula
from formdb.store.sealing import append_rows

BENCH_USER = "formdb-bench"
FORMULA_FOLDER = "synthetic-bench"  # the folder the import reason names, as if imported from files
_CHUNK = 1000


@dataclass(frozen=True)
class LibraryPlan:
    """What to generate: the library's ingredient count (seed included), formulas, the seed."""

    ingredients: int = 5000
    formulas: int = 10_000
    seed: int = 42


def all_rows(plan: LibraryPlan) -> list[dict[str, str]]:
    """The seed ingredients followed by the plan's synthetic ones, as cell dicts."""
    seed = synthetic.seed_rows()
    extra = max(0, plan.ingredients - len(seed))
    return [*seed, *synthetic.synthetic_ingredient_rows(extra, plan.seed)]


def add_source(session: Session, user: str) -> None:
    """The ``synthetic-bench`` source every invented value cites (once)."""
    if session.get(Source, synthetic.SOURCE_KEY) is not None:
        return
    session.add(Source(**synthetic.SOURCE_ROW))
    session.add(log_entry(
        at=datetime.now(UTC), user=user, entity="source", entity_key=synthetic.SOURCE_KEY,
        entity_version=None, action="add",
        changes=[{"field": k, "old": None, "new": v} for k, v in synthetic.SOURCE_ROW.items()
                 if v is not None],
        reason="benchmark data"))


def add_ingredients(url: str, plan: LibraryPlan, user: str = BENCH_USER) -> int:
    """Import the plan's synthetic ingredients through ``import_table``; returns how many."""
    from formdb.services.library.ingredients import import_table

    seed_count = len(synthetic.seed_rows())
    extra = max(0, plan.ingredients - seed_count)
    engine = open_library(url)
    try:
        with tempfile.TemporaryDirectory() as folder:
            path = Path(folder) / "synthetic-ingredients.csv"
            synthetic.write_ingredient_csv(
                path, synthetic.synthetic_ingredient_rows(extra, plan.seed))
            with unit_of_work(engine, write=True) as session:
                add_source(session, user)
                if extra:
                    import_table(session, path, user=user, reason="synthetic benchmark library")
    finally:
        engine.dispose()
    return extra


def pools_for(plan: LibraryPlan) -> synthetic.Pools:
    return synthetic.build_pools(all_rows(plan))


def formula_texts(plan: LibraryPlan, start: int, stop: int,
                  pools: synthetic.Pools | None = None) -> Iterator[tuple[int, str]]:
    """(index, TOML text) of the plan's formulas ``start`` .. ``stop - 1``."""
    pools = pools or pools_for(plan)
    for index in range(start, stop):
        yield index, synthetic.formula_text(index, plan.seed, pools)


def stored_rows(index: int, text: str, now: datetime, user: str,
                label: str | None = None) -> tuple[dict[str, Any], dict[str, Any]]:
    """The ``formulas`` row and the change-log row ``formula import`` writes for this text."""
    formula = parse_formula_text(text, label or f"synthetic formula {index}")
    digest = content_hash(text)
    label = label or f"{FORMULA_FOLDER}/{synthetic.formula_file_name(index)}"
    row = {"name": formula.name, "name_key": name_key(formula.name), "content": text,
           "content_hash": digest, "version": 1, "created_at": now, "updated_at": now,
           "updated_by": user}
    log = log_values(at=now, user=user, entity="formula", entity_key=formula.name,
                     entity_version=1, action="add",
                     changes=[{"field": "content_hash", "old": None, "new": digest}],
                     reason=f"imported from {label}")
    return row, log


def add_formulas(url: str, plan: LibraryPlan, start: int = 1, user: str = BENCH_USER,
                 files: Path | None = None) -> int:
    """Insert formulas ``start`` .. ``plan.formulas`` in one transaction (and write them as TOML
    files under ``files`` if given); returns how many were added."""
    pools = pools_for(plan)
    engine = open_library(url)
    now = datetime.now(UTC)
    added = 0
    try:
        with unit_of_work(engine, write=True) as session:
            batch: list[tuple[dict[str, Any], dict[str, Any]]] = []
            for index, text_ in formula_texts(plan, start, plan.formulas + 1, pools):
                if files is not None:
                    (files / synthetic.formula_file_name(index)).write_text(text_, "utf-8")
                batch.append(stored_rows(index, text_, now, user))
                if len(batch) >= _CHUNK:
                    added += _insert(session, batch)
                    batch = []
            added += _insert(session, batch)
    finally:
        engine.dispose()
    return added


def _insert(session: Session, batch: list[tuple[dict[str, Any], dict[str, Any]]]) -> int:
    if batch:
        session.execute(insert(StoredFormula), [row for row, _log in batch])
        append_rows(session, cast(Table, ChangeLogEntry.__table__), [log for _row, log in batch])
    return len(batch)


def generate(url: str, plan: LibraryPlan, user: str = BENCH_USER,
             files: Path | None = None) -> tuple[int, int]:
    """A new library at ``url``: seed, synthetic ingredients, formulas. Returns (ingredients
    added, formulas added). Refuses a SQLite file that already exists."""
    path = sqlite_path(url)
    if path is not None and path.exists():
        raise ConfigError(f"{path} already exists; the generator writes a new library only.",
                          hint="give a new --db path or remove the old file")
    init_library(url, seed=True, user=user)
    added = add_ingredients(url, plan, user)
    formulas = add_formulas(url, plan, 1, user, files)
    return added, formulas


# --- copies of a library (for several sizes from one base) ----------------------------------

def checkpoint(url: str) -> None:
    """Fold a SQLite library's WAL into its file, so the file alone is a complete copy."""
    if sqlite_path(url) is None:
        return
    engine = open_library(url)
    try:
        with engine.connect() as conn:
            conn.execute(text("PRAGMA wal_checkpoint(TRUNCATE)"))
    finally:
        engine.dispose()


@contextmanager
def pg_database(base_url: str, name: str, template: str | None = None) -> Iterator[str]:
    """A PostgreSQL database made for the benchmark (a copy of ``template`` if given), dropped
    afterwards."""
    admin: Engine = create_engine(make_url(base_url), isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
            copy = f' TEMPLATE "{template}"' if template else ""
            conn.execute(text(f'CREATE DATABASE "{name}"{copy}'))
        try:
            yield make_url(base_url).set(database=name).render_as_string(hide_password=False)
        finally:
            with admin.connect() as conn:
                conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
    finally:
        admin.dispose()
