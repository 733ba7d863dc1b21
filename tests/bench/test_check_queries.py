"""``check --all`` reads the library a batch at a time: the number of SQL statements per batch of
formulas is bounded (names resolved in bulk), never one per formula line. Counted with
SQLAlchemy's ``before_cursor_execute`` event; no times are asserted."""

from __future__ import annotations

import math
from collections.abc import Iterator
from typing import Any

import pytest
from sqlalchemy import event
from sqlalchemy.engine import Engine

from formdb.bench import library
from formdb.schemas.ingredient import name_key
from formdb.services.checking.flow import iter_check_stored
from formdb.store import queries
from tests.helpers import fresh_pg_schema
from tests.libraries import opened

PLAN = library.LibraryPlan(ingredients=260, formulas=120, seed=11)
# per batch: the name lookup, the ingredient rows, five child collections, the citations
PER_BATCH = 10
FIXED = 40  # opening the library, the revision check, the reference data, the formula cursor


class StatementCounter:
    def __init__(self) -> None:
        self.statements: list[str] = []

    def __call__(self, conn: Any, cursor: Any, statement: str, *args: Any) -> None:
        self.statements.append(statement)

    @property
    def selects(self) -> int:
        return sum(1 for s in self.statements if s.lstrip().upper().startswith("SELECT"))


@pytest.fixture
def counter() -> Iterator[StatementCounter]:
    counting = StatementCounter()
    event.listen(Engine, "before_cursor_execute", counting)
    try:
        yield counting
    finally:
        event.remove(Engine, "before_cursor_execute", counting)


@pytest.fixture(scope="module",
                params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def bench_library(request: pytest.FixtureRequest,
                  tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """The generated library, once per backend for the module (an empty SQLite file, or an
    empty schema of its own on the test server, as ``empty_library_url`` gives): its tests only
    read it (``check --all`` over the stored formulas leaves the library's state as it was),
    each through a Library of its own, so generating it per test (2 s of CPU) bought nothing."""
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path_factory.mktemp('bench') / 'library.sqlite'}"
        library.generate(url, PLAN)
        yield url
        return
    with fresh_pg_schema(request.getfixturevalue("pg_server")) as url:
        library.generate(url, PLAN)
        yield url


@pytest.mark.parametrize("batch_size", [10, 40])
def test_queries_per_batch_are_bounded(bench_library: str, counter: StatementCounter,
                                       batch_size: int) -> None:
    lines = 0
    count = 0
    for result in iter_check_stored(opened(bench_library), batch_size=batch_size):
        count += 1
        lines += len(result.facts.lines)
    batches = math.ceil(PLAN.formulas / batch_size)
    assert count == PLAN.formulas
    assert lines > 8 * PLAN.formulas
    assert counter.selects <= FIXED + PER_BATCH * batches, counter.statements
    assert counter.selects < lines / 5  # far from one query per line


def test_each_name_is_looked_up_once_per_run(bench_library: str,
                                             monkeypatch: pytest.MonkeyPatch) -> None:
    """Later batches look up only names the run has not met yet: the records built grow with the
    library, not with the number of formulas."""
    asked: list[str] = []
    real = queries.find_ingredients

    def recording(session: Any, names: Any) -> Any:
        names = list(names)
        asked.extend(name_key(n) for n in names)
        return real(session, names)

    monkeypatch.setattr(queries, "find_ingredients", recording)
    seen = {line.inci for r in iter_check_stored(opened(bench_library), batch_size=5)
            for line in r.facts.lines}
    reference_names = _reference_names(bench_library)  # once: it opens the library
    formula_keys = [k for k in asked if k not in reference_names]
    assert len(formula_keys) == len(set(formula_keys))
    assert len(set(formula_keys)) >= len(seen) * 0.9  # synonyms may stand for the same record


def _reference_names(url: str) -> set[str]:
    """Names the reference data looks up once (soaps, parent acids of as-acid limits)."""
    from formdb.store.db import open_library, unit_of_work
    from formdb.store.models import LimitEntry, SoapPairEntry

    engine = open_library(url)
    try:
        with unit_of_work(engine) as session:
            soaps = {name_key(p.soap_inci) for p in session.query(SoapPairEntry)}
            acids = {name_key(row.acid_inci) for row in session.query(LimitEntry)
                     if row.acid_inci}
            return soaps | acids
    finally:
        engine.dispose()
