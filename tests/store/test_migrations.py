"""Alembic owns the schema: the migrations build exactly the models' tables, and they run up and
down with the data in place, on SQLite and on PostgreSQL."""

from __future__ import annotations

from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import pytest
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import Column, Integer, MetaData, Table, insert, inspect, select

from formdb.store import models
from formdb.store.change_log import log_values
from formdb.store.db import (
    alembic_config,
    current_revision,
    downgrade,
    head_revision,
    make_engine,
    upgrade,
    upgrade_to_head,
)
from formdb.store.sealing import GENESIS, seal
from tests.helpers import dump_database, library_state

pytestmark = pytest.mark.slow  # left out of the fast lane

NOW = datetime(2026, 3, 2, 9, 30, tzinfo=UTC)


def _diff(url: str, metadata: MetaData) -> list[Any]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            ctx = MigrationContext.configure(conn, opts={"compare_type": True})
            return compare_metadata(ctx, metadata)
    finally:
        engine.dispose()


def schema_snapshot(url: str) -> dict[str, Any]:
    """Tables, columns, keys, indexes and unique constraints as plain data, for comparisons."""
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            insp = inspect(conn)
            snap: dict[str, Any] = {}
            for table in sorted(insp.get_table_names()):
                snap[table] = {  # columns by name: a downgrade that puts a column back appends
                    # it (PostgreSQL cannot add one in place), and the order means nothing here
                    "columns": sorted((c["name"], str(c["type"]), c["nullable"])
                                      for c in insp.get_columns(table)),
                    "pk": insp.get_pk_constraint(table),
                    "fks": sorted((fk["name"], tuple(fk["constrained_columns"]),
                                   fk["referred_table"], tuple(fk["referred_columns"]),
                                   fk.get("options", {}).get("ondelete"))
                                  for fk in insp.get_foreign_keys(table)),
                    "indexes": sorted((i["name"], tuple(i["column_names"]), bool(i["unique"]))
                                      for i in insp.get_indexes(table)),
                    "uniques": sorted((u["name"], tuple(u["column_names"]))
                                      for u in insp.get_unique_constraints(table)),
                }
            return snap
    finally:
        engine.dispose()


def _migrate(url: str, action: str, revision: str = "head", where: Path | None = None) -> None:
    engine = make_engine(url)
    try:
        {"upgrade": upgrade, "downgrade": downgrade}[action](engine, revision, where)
    finally:
        engine.dispose()


def _insert_library_rows(url: str) -> None:
    """One of everything, with child rows that hang on ingredients by ON DELETE CASCADE."""
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            conn.execute(insert(models.Source), [
                {"key": "larkspur-bench", "citation": "Larkspur Bench Laboratories notebook 7",
                 "evidence": "measured", "url": None, "seen": "found", "note": None}])
            conn.execute(insert(models.Ingredient), [
                {"id": 1, "inci_name": "Glycerin", "retired": False, "version": 3,
                 "created_at": NOW, "updated_at": NOW, "updated_by": "ana"}])
            conn.execute(insert(models.IngredientName), [
                {"id": 1, "ingredient_id": 1, "name": "Glycerin", "name_key": "glycerin",
                 "is_primary": True},
                {"id": 2, "ingredient_id": 1, "name": "Glycerol", "name_key": "glycerol",
                 "is_primary": False}])
            conn.execute(insert(models.IngredientCas), [{"ingredient_id": 1, "cas": "56-81-5"}])
            conn.execute(insert(models.IngredientRole), [{"ingredient_id": 1, "role": "humectant"}])
            conn.execute(insert(models.PropertyValue), [
                {"ingredient_id": 1, "property": "density", "value_num": 1.26, "value_text": None,
                 "source_key": "larkspur-bench", "evidence": "measured", "note": "at 20 C"}])
            log = [log_values(at=NOW, user="ana", entity="ingredient", entity_key="glycerin",
                              entity_version=3, action="edit", reason="remeasured",
                              changes=[{"field": "density", "old": 1.25, "new": 1.26}])]
            seal("change_log", log, 1, GENESIS)  # as every log row at head is (0012, 0021)
            conn.execute(insert(models.ChangeLogEntry), log)
            conn.execute(insert(models.LimitEntry), [
                {"key": "probe-limit", "jurisdiction": "EU", "list_name": "Annex V",
                 "entry": "34", "ingredients": "Benzyl Alcohol", "category": "any",
                 "product": None, "max_percent": 1.0, "aggregate": "each", "basis": "as-is",
                 "acid_inci": None, "excludes": None, "conditions": None,
                 "source_key": "larkspur-bench", "list_date": date(2024, 1, 1)}])
    finally:
        engine.dispose()


def test_fresh_database_has_no_revision(empty_library_url: str) -> None:
    engine = make_engine(empty_library_url)
    try:
        assert current_revision(engine) is None
        assert upgrade_to_head(engine) == head_revision()
        assert current_revision(engine) == head_revision()
    finally:
        engine.dispose()


def test_migrations_build_exactly_the_models(empty_library_url: str) -> None:
    """Drift guard: a model changed without a migration (or the reverse) fails here."""
    _migrate(empty_library_url, "upgrade")
    assert _diff(empty_library_url, models.Base.metadata) == []


def test_drift_guard_notices_a_model_change(sqlite_url: str) -> None:
    """The comparison above is not vacuous: an extra column in the models shows up as a diff."""
    changed = MetaData(naming_convention=models.NAMING_CONVENTION)
    for table in models.Base.metadata.sorted_tables:
        table.to_metadata(changed)
    Table("ingredients", changed, Column("shelf_life_months", Integer), extend_existing=True)
    diff = _diff(sqlite_url, changed)
    assert [d[0] for d in diff] == ["add_column"]
    assert diff[0][3].name == "shelf_life_months"


def test_revision_chain_is_linear_and_named() -> None:
    script = ScriptDirectory.from_config(alembic_config())
    assert script.get_heads() == [head_revision()], "migrations must not branch"
    revisions = list(script.walk_revisions())
    assert revisions[-1].down_revision is None
    assert all(r.doc for r in revisions), "every revision says what it does"


def test_upgrade_downgrade_upgrade_keeps_schema_and_data_reloads(empty_library_url: str) -> None:
    url = empty_library_url
    _migrate(url, "upgrade")
    schema_at_head = schema_snapshot(url)
    _insert_library_rows(url)
    before = library_state(url)

    _migrate(url, "downgrade", "base")
    assert set(schema_snapshot(url)) == {"alembic_version"}
    _migrate(url, "upgrade")
    assert schema_snapshot(url) == schema_at_head
    _insert_library_rows(url)  # the same rows load again into the rebuilt tables
    assert library_state(url) == before


def test_step_down_and_up_the_whole_chain(empty_library_url: str) -> None:
    """Every revision, one step at a time: the schema going up equals the schema going down."""
    script = ScriptDirectory.from_config(alembic_config())
    chain = [r.revision for r in reversed(list(script.walk_revisions()))]
    url = empty_library_url
    going_up = {}
    for rev in chain:
        _migrate(url, "upgrade", rev)
        going_up[rev] = schema_snapshot(url)
    for rev in reversed(chain[:-1]):
        _migrate(url, "downgrade", rev)
        assert schema_snapshot(url) == going_up[rev], rev
    _migrate(url, "downgrade", "base")
    assert set(schema_snapshot(url)) == {"alembic_version"}


def test_data_survives_a_table_rebuild_up_and_down(empty_library_url: str,
                                                   migrations_with_probe: Path) -> None:
    """Rows in place at head survive upgrade -> downgrade -> upgrade through a revision that
    rebuilds ``ingredients``; on SQLite a rebuild with foreign keys on would cascade-delete
    every name, CAS number, role and property value."""
    url, where = empty_library_url, migrations_with_probe
    _migrate(url, "upgrade")
    _insert_library_rows(url)
    at_head = dump_database(url)

    _migrate(url, "upgrade", "head", where)
    engine = make_engine(url)
    try:
        assert current_revision(engine) == "9999_probe"
        with engine.connect() as conn:
            probe = Table("ingredients", MetaData(), autoload_with=conn)
            assert conn.execute(select(probe.c.inci_name, probe.c.probe_note)).all() == [
                ("Glycerin", None)]
    finally:
        engine.dispose()
    after = dump_database(url, exclude_columns={"probe_note"})
    assert after.replace("'9999_probe'", f"'{head_revision()}'") == at_head
    _migrate(url, "downgrade", head_revision(), where)
    assert dump_database(url) == at_head
    _migrate(url, "upgrade", "head", where)
    _migrate(url, "downgrade", "-1", where)
    assert dump_database(url) == at_head


def test_data_at_head_survives_a_step_down_and_back(empty_library_url: str) -> None:
    """Rows in the tables the previous revision also has come through downgrade -1 and upgrade
    unchanged (the tables the newest revision adds are dropped by design, then rebuilt)."""
    script = ScriptDirectory.from_config(alembic_config())
    head = script.get_revision(head_revision())
    if head.down_revision is None:
        pytest.skip("only one revision: test_upgrade_downgrade_upgrade_... covers base <-> head")
    url = empty_library_url
    _migrate(url, "upgrade", str(head.down_revision))
    schema_before = schema_snapshot(url)
    kept = set(schema_before) - {"alembic_version"}
    _migrate(url, "upgrade")
    schema_at_head = schema_snapshot(url)
    # Columns the newest revision adds to kept tables go on downgrade by design.
    added = {col[0] for t in kept for col in schema_at_head[t]["columns"]} - {
        col[0] for t in kept for col in schema_before[t]["columns"]}
    # A table the newest revision reshapes (a column of it gone, its rows rewritten) is left to
    # that revision's own data test (0021: tests/store/test_typed_log_migration.py).
    kept -= {t for t in kept if {c[0] for c in schema_before[t]["columns"]}
             - {c[0] for c in schema_at_head[t]["columns"]}}
    _insert_library_rows(url)
    before = library_state(url, tables=kept, exclude_columns=added)

    _migrate(url, "downgrade", "-1")
    # (excluding the added columns of a sealed table leaves its seals out of both dumps)
    assert library_state(url, tables=kept, exclude_columns=added) == before
    _migrate(url, "upgrade")
    assert library_state(url, tables=kept, exclude_columns=added) == before
    assert schema_snapshot(url) == schema_at_head
