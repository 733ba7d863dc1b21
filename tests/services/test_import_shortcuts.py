"""The shortcuts a large ingredient import takes give what the general paths give.

- ``added_payload`` (a new ingredient's change-log payload, written as text in one pass) is
  ``payload_text(typed_changes(None, fields_of(item)))`` byte for byte, for every seed
  ingredient and synthetic ones;
- ``store.bulk.insert_rows`` (one executemany of the driver) stores the same column values as
  SQLAlchemy's Core INSERT, defaults and processed timestamps included, in statements of one
  or many rows (every row, in order), and ``new_ids`` names the id the database itself gives
  the next row;
- the cycle collector is back as it was after an import, whether the import wrote or refused.
The whole-import equivalence (every row, id and change-log entry against writing ingredients
one at a time) is tests/bench/test_bulk_import.py.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path
from typing import cast

import pytest
from sqlalchemy import Table, insert, select

from formdb.bench import library, synthetic
from formdb.schemas.ingredient import IngredientIn, IngredientProperties
from formdb.schemas.times import utc
from formdb.schemas.vocab import Role
from formdb.services.library import ingredients
from formdb.services.library.ingredient_log import added_payload, fields_of, typed_changes
from formdb.services.library.ingredient_rows import FileRow, empty_cells, overlay, validate_cells
from formdb.services.library.ingredients import import_table
from formdb.services.library.tables import TableProblems
from formdb.store import bulk
from formdb.store.bulk import insert_dicts, insert_rows, new_ids
from formdb.store.change_log import payload_text, value_json
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import Ingredient, IngredientName
from formdb.store.sealing import LibrarySession


def _items() -> Iterator[object]:
    sources = dict.fromkeys((synthetic.SOURCE_KEY, "rule-of-thumb", "from-memory"), "published")
    rows = [*synthetic.seed_rows(), *synthetic.synthetic_ingredient_rows(500, seed=11)]
    for number, given in enumerate(rows, start=2):
        cells = overlay(empty_cells(), FileRow(number, dict(given)))
        sources.update({cells[c]: "published" for c in cells if c.endswith("_source")
                        and cells[c]})
        item, problems = validate_cells(cells, sources)
        assert item is not None, problems
        yield item


def _general(item: IngredientIn, via: str | None) -> str:
    """The payload the general path writes: the typed changes from nothing, encoded."""
    return payload_text(typed_changes(None, fields_of(item)), via=via)


def test_added_payload_is_the_payload_text_of_the_changes_from_nothing() -> None:
    # written as text in one pass; the entry is sealed as is, so it must be the same bytes
    count = 0
    for item in _items():
        for via in (None, "larkspur.csv"):
            assert added_payload(item, via=via) == _general(item, via)  # type: ignore[arg-type]
        count += 1
    assert count > 600
    tricky = 'Quote " back \\ tab \t nl \n bell \x07 é ✓ \u2028 😀'
    item = IngredientIn(
        inci_name="Cetearyl Alcohol", synonyms=('Quote " back \\ é ✓ 😀', "Cetostearyl Alcohol"),
        cas_numbers=("67762-27-0",), roles=(Role.THICKENER,), classes=("paraben",),
        properties=IngredientProperties(hlb=1e-7, viscosity_mpas=1e7, ethoxylated=False),
        sources={"hlb": tricky, "viscosity_mpas": "lab", "ethoxylated": "lab"},
        notes={"hlb": tricky, "viscosity_mpas": ""})
    assert added_payload(item, via=tricky) == _general(item, tricky)
    for value in (0.1, -0.0, 1e300, float("nan"), float("inf"), 7, True, None, ["a", "é"],
                  ("x",), [1.5], {"k": 1}, Role.THICKENER):
        assert value_json(value) == payload_text([{"v": value}])[len('{"v":1,"changes":[{"v":'):
                                                               -len("}]}")], value


def _session(url: str) -> Iterator[LibrarySession]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine, write=True) as session:
            yield cast(LibrarySession, session)
    finally:
        engine.dispose()


def test_insert_rows_stores_what_a_core_insert_stores(seeded_library_url: str) -> None:
    table = cast(Table, Ingredient.__table__)
    at = datetime(2026, 12, 5, 1, 2, 3, 456789, tzinfo=UTC)
    for session in _session(seeded_library_url):
        [bulk_id] = new_ids(session, table, 1)
        # retired and version are left to their defaults, the timestamps are processed
        insert_rows(session, table, ("id", "inci_name", "created_at", "updated_at",
                                     "updated_by"), [(bulk_id, "Bulk Ester", at, at, "t")])
        expected = bulk_id + 1
        core_id = session.execute(
            insert(table).returning(table.c.id),
            [{"inci_name": "Core Ester", "created_at": at, "updated_at": at,
              "updated_by": "t"}]).scalar_one()
        assert core_id == expected  # new_ids named the id the database gives next
        names = cast(Table, IngredientName.__table__)
        insert_dicts(session, names, [{"ingredient_id": bulk_id, "name": "Bulk Ester",
                                       "name_key": "bulk ester"}])  # is_primary: default
        session.execute(insert(names), [{"ingredient_id": core_id, "name": "Core Ester",
                                         "name_key": "core ester"}])
        connection = session.connection()
        stored = {}
        for key in (bulk_id, core_id):
            # the raw values the database holds: SQLite's timestamp text as it is
            row = connection.exec_driver_sql(
                "SELECT retired, version, created_at, updated_at, updated_by FROM ingredients "
                f"WHERE id = {key}").one()
            name = connection.exec_driver_sql(
                f"SELECT is_primary FROM ingredient_names WHERE ingredient_id = {key}").one()
            stored[key] = (*row, *name)
        assert stored[bulk_id] == stored[core_id]
        assert len(session.scalars(select(Ingredient.id).where(
            Ingredient.id.in_([bulk_id, core_id]))).all()) == 2


@pytest.mark.parametrize("per", [1, 3, 100])
def test_insert_rows_in_statements_of_many_rows_keeps_every_row_and_its_order(
        seeded_library_url: str, per: int, monkeypatch: pytest.MonkeyPatch) -> None:
    # SQLite takes up to ROWS_PER_STATEMENT rows a statement: 3 gives three full statements
    # and a shorter last one for 11 rows; the names' own ids follow the rows' order
    monkeypatch.setattr(bulk, "ROWS_PER_STATEMENT", per)
    table = cast(Table, Ingredient.__table__)
    names = cast(Table, IngredientName.__table__)
    at = datetime(2026, 12, 5, 1, 2, 3, 456789, tzinfo=UTC)
    for session in _session(seeded_library_url):
        ids = new_ids(session, table, 11)
        rows = [(i, f"Bulk Ester {n}", at, at, "t") for n, i in enumerate(ids)]
        insert_rows(session, table, ("id", "inci_name", "created_at", "updated_at",
                                     "updated_by"), rows)
        insert_rows(session, names, ("ingredient_id", "name", "name_key"),
                    [(i, f"Bulk Ester {n}", f"bulk ester {n}") for n, i in enumerate(ids)])
        stored = session.execute(select(table.c.id, table.c.inci_name, table.c.retired,
                                        table.c.created_at)
                                 .where(table.c.id >= ids[0]).order_by(table.c.id)).all()
        assert [(i, name, retired, utc(created)) for i, name, retired, created in stored] == \
            [(i, name, False, at) for i, name, *_rest in rows]
        named = session.execute(select(names.c.ingredient_id, names.c.name, names.c.is_primary)
                                .where(names.c.ingredient_id >= ids[0])
                                .order_by(names.c.id)).all()
        assert [tuple(r) for r in named] == [(i, f"Bulk Ester {n}", False)
                                             for n, i in enumerate(ids)]


def test_new_ids_follow_the_largest_id(seeded_library_url: str) -> None:
    table = cast(Table, Ingredient.__table__)
    for session in _session(seeded_library_url):
        first, second = new_ids(session, table, 2)
        assert second == first + 1
        assert first > max(session.scalars(select(Ingredient.id)).all())


def test_the_cycle_collector_is_back_after_an_import(seeded_sqlite_url: str,
                                                     tmp_path: Path) -> None:
    good = tmp_path / "good.csv"
    synthetic.write_ingredient_csv(good, synthetic.synthetic_ingredient_rows(5, seed=3))
    bad = tmp_path / "bad.csv"
    bad.write_text("inci_name,hlb,hlb_source\nSynthetic Bad Ester,99,from-memory\n",
                   encoding="utf-8")
    for enabled in (True, False):
        (gc.enable if enabled else gc.disable)()
        try:
            for session in _session(seeded_sqlite_url):
                library.add_source(session, "formdb")
                import_table(session, good, user="formdb", reason="test", action="seed")
                assert gc.isenabled() is enabled
                with pytest.raises(TableProblems):
                    import_table(session, bad, user="formdb", reason="test", action="seed")
                assert gc.isenabled() is enabled
        finally:
            gc.enable()


def test_owners_read_at_once_are_the_owners_asked_for(seeded_sqlite_url: str,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    for session in _session(seeded_sqlite_url):
        known = list(session.scalars(select(IngredientName.name_key)))
        keys = [*known[:40], *(f"unknown ester {i}" for i in range(len(known)))]
        asked = ingredients._owners(session, keys)  # fewer than _CHUNK: IN-lists
        monkeypatch.setattr(ingredients, "_CHUNK", 10)  # now the library holds fewer names
        at_once = ingredients._owners(session, keys)
        assert len(asked) == 40
        assert {k: i.id for k, i in at_once.items()} == {k: i.id for k, i in asked.items()}


def test_a_floats_text_made_once_is_the_text_of_that_float() -> None:
    # added_payload keeps each float's text by the float: 0.0 and -0.0 are equal keys but
    # json writes them apart, so neither is kept; 1.0 == 1 == True must not meet either
    values = [0.0, -0.0, 0.0, 1.0, 2.5, 2.5, 1e-05, 1e-05, -0.0, 1.0]
    for value in values:
        item = IngredientIn(inci_name="Cetyl Alcohol",
                            properties=IngredientProperties(hlb=value, ethoxylated=True,
                                                            cation_valence=1),
                            sources=dict.fromkeys(("hlb", "ethoxylated", "cation_valence"),
                                                  "lab"))
        assert added_payload(item, via=None) == _general(item, None), value
