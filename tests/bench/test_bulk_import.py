"""The bulk path for new ingredients in ``import_table`` stores exactly the rows (ids, change log,
provenance) that writing them one at a time through ``_write`` stores, for a table that mixes
new ingredients with updates of existing ones, on both backends."""

from __future__ import annotations

import csv
import shutil
from collections.abc import Iterator, Mapping, Sequence
from datetime import datetime
from pathlib import Path

import pytest

from formdb.bench import library, synthetic
from formdb.services.library import ingredients
from formdb.store.db import open_library, unit_of_work
from tests.helpers import dump_database, fresh_pg_database

pytestmark = pytest.mark.slow  # left out of the fast lane

TIMESTAMPS = ("at", "created_at", "updated_at")


def _mixed_table(path: Path) -> None:
    """New synthetic rows interleaved with changed seed rows (a new synonym, a new value)."""
    seed = synthetic.seed_rows()[:12]
    new = list(synthetic.synthetic_ingredient_rows(30, seed=5))
    columns = list(seed[0])
    rows: list[dict[str, str]] = []
    for index, row in enumerate(new):
        rows.append(row)
        if index % 3 == 0 and seed:
            old = dict(seed.pop(0))
            old["synonyms"] = "; ".join(filter(None, [old["synonyms"], f"Bench {index}"]))
            old["viscosity_mpas"], old["viscosity_mpas_source"] = "123", "from-memory"
            rows.append(old)
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=columns)
        writer.writeheader()
        for row in rows:
            writer.writerow({c: row.get(c, "") for c in columns})


def _import(url: str, table: Path) -> ingredients.ImportReport:
    engine = open_library(url)
    try:
        with unit_of_work(engine, write=True) as session:
            library.add_source(session, "bench-test")
            return ingredients.import_table(session, table, user="bench-test", reason="test")
    finally:
        engine.dispose()


def _one_at_a_time(session: object, batch: Sequence[object], evidence: Mapping[str, str], *,
                   action: str, user: str, reason: str | None, now: datetime,
                   via: str | None) -> None:
    for item in batch:
        ingredients._write(session, None, item, None, evidence,  # type: ignore[arg-type]
                           action=action, user=user, reason=reason, now=now, via=via)


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def two_libraries(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[tuple[str, str]]:
    """Two copies of the seed library on one backend."""
    if request.param == "sqlite":
        template = request.getfixturevalue("_seeded_sqlite_template")
        urls = []
        for name in ("bulk", "single"):
            shutil.copyfile(template, tmp_path / f"{name}.sqlite")
            urls.append(f"sqlite:///{tmp_path / name}.sqlite")
        yield urls[0], urls[1]
        return
    server = request.getfixturevalue("pg_server")
    template = request.getfixturevalue("_seeded_pg_template")
    with fresh_pg_database(server, template) as first, \
            fresh_pg_database(server, template) as second:
        yield first, second


def test_bulk_rows_equal_one_at_a_time(two_libraries: tuple[str, str], tmp_path: Path,
                                       monkeypatch: pytest.MonkeyPatch) -> None:
    bulk_url, single_url = two_libraries
    table = tmp_path / "mixed.csv"
    _mixed_table(table)
    bulk = _import(bulk_url, table)
    with monkeypatch.context() as patch:
        patch.setattr(ingredients, "_insert_new", _one_at_a_time)
        single = _import(single_url, table)
    assert len(bulk.added) == 30 and len(bulk.changed) == 10
    assert (bulk.added, sorted(bulk.changed)) == (single.added, sorted(single.changed))
    assert dump_database(bulk_url, TIMESTAMPS) == dump_database(single_url, TIMESTAMPS)
