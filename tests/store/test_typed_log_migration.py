"""Migration 0021 turns the per-column change log into typed entries and back, on SQLite and
PostgreSQL: every old row is kept with its id and hashes, its chain still verifies, its typed
payload says what its text said, and a downgrade gives the old rows back exactly (entries written
since become old-style rows, sealed on from the last old one). The rows are made up for the test
(a Larkspur Bench Laboratories library)."""

from __future__ import annotations

import json
from datetime import UTC, datetime
from typing import Any

import pytest
from sqlalchemy import text

from formdb.services.library.ingredients import edit_ingredient, ingredient_history
from formdb.services.review.impact import earlier_record
from formdb.store import queries
from formdb.store.db import downgrade, make_engine, unit_of_work, upgrade
from formdb.store.sealing import FORMS, GENESIS, as_text, row_hash
from tests.helpers import library_state, run_formdb

pytestmark = pytest.mark.slow  # left out of the fast lane

AT = datetime(2026, 3, 2, 9, 30, 15, 250000, tzinfo=UTC)
# TYPED: 0021_typed_change_log and the revisions after it, which leave the change log alone
# (the CLI that verifies the chain works only on a library at the newest revision)
BEFORE, TYPED = "0020_server_change_log", "head"
# (entity, entity_key, entity_version, action, field, old_value, new_value, reason): what the
# per-column log wrote for an add, an edit, a retire, a seeded table row and its update, a
# refusal, a user and a formula
OLD_ROWS = [
    ("ingredient", "Glycerin", 1, "add", "inci_name", None, "Glycerin", None),
    ("ingredient", "Glycerin", 1, "add", "synonyms", None, "Glycerol", None),
    ("ingredient", "Glycerin", 1, "add", "roles", None, "humectant; solvent", None),
    ("ingredient", "Glycerin", 1, "add", "density", None, "1.26", None),
    ("ingredient", "Glycerin", 1, "add", "density_source", None, "rule-of-thumb", None),
    ("ingredient", "Glycerin", 1, "add", "density_note", None, "at 20 C", None),
    ("ingredient", "Glycerin", 1, "add", "solubility", None, "water", None),
    ("ingredient", "Glycerin", 1, "add", "solubility_source", None, "rule-of-thumb", None),
    ("ingredient", "Glycerin", 2, "edit", "density", "1.26", "1.261", "remeasured"),
    ("ingredient", "Glycerin", 2, "edit", "density_note", "at 20 C", None, "remeasured"),
    ("ingredient", "Glycerin", 3, "retire", "retired", "no", "yes", "replaced"),
    ("ingredient", "Glycerin", 4, "restore", "retired", "yes", "no", "back in use"),
    ("limit", "probe-limit", None, "seed", None, None,
     '{"key": "probe-limit", "max_percent": 1.0}', "bundled seed library"),
    ("limit", "probe-limit", None, "seed", "max_percent", "1.0", "0.9", "bundled seed library"),
    ("access", "bo", None, "refused", "change the library", None, None, "needs role editor"),
    ("user", "ada", None, "add", "roles", None, "admin, editor", None),
    ("formula", "Larkspur cream", 1, "add", "content_hash", None, "ab" * 32, "imported"),
    ("mixture", "Larkspur Base", None, "set", "Glyceryl Stearate", None, "50 % (bench-2026)",
     None),
]


def _step(url: str, action: str, revision: str) -> None:
    engine = make_engine(url)
    try:
        (upgrade if action == "upgrade" else downgrade)(engine, revision)
    finally:
        engine.dispose()


def _sql(url: str, statement: str, params: list[dict[str, Any]] | dict[str, Any] | None = None,
         ) -> list[Any]:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            result = conn.execute(text(statement), params or {})
            return list(result.mappings()) if result.returns_rows else []
    finally:
        engine.dispose()


def _old_library(url: str) -> None:
    """The rows above in a library at 0011, then sealed by 0012 as an old library's were; the
    ingredient itself as its log says (version 4, density 1.261 without a note)."""
    _step(url, "upgrade", "0011_review_runs")
    at = AT if "postgresql" in url else AT.replace(tzinfo=None)
    _sql(url, 'INSERT INTO change_log (id, at, "user", entity, entity_key, entity_version, '
         "action, field, old_value, new_value, reason) VALUES (:id, :at, 'ana', :entity, :key, "
         ":version, :action, :field, :old, :new, :reason)",
         [{"id": i, "at": at, "entity": e, "key": k, "version": v, "action": a, "field": f,
           "old": o, "new": n, "reason": r} for i, (e, k, v, a, f, o, n, r) in
          enumerate(OLD_ROWS, start=1)])
    _sql(url, "INSERT INTO sources (key, citation, evidence) VALUES ('rule-of-thumb', "
         "'Rule of thumb', 'rule of thumb')")
    _sql(url, "INSERT INTO ingredients (id, inci_name, retired, version, created_at, updated_at, "
         "updated_by) VALUES (1, 'Glycerin', false, 4, :at, :at, 'ana')", {"at": at})
    _sql(url, "INSERT INTO ingredient_names (id, ingredient_id, name, name_key, is_primary) "
         "VALUES (1, 1, 'Glycerin', 'glycerin', true), (2, 1, 'Glycerol', 'glycerol', false)")
    _sql(url, "INSERT INTO ingredient_roles (ingredient_id, role) VALUES (1, 'humectant'), "
         "(1, 'solvent')")
    _sql(url, "INSERT INTO property_values (ingredient_id, property, value_num, value_text, "
         "source_key, evidence, note) VALUES (1, 'density', 1.261, NULL, 'rule-of-thumb', "
         "'rule of thumb', NULL), (1, 'solubility', NULL, 'water', 'rule-of-thumb', "
         "'rule of thumb', NULL)")
    if "postgresql" in url:  # the ids above were given by hand: the sequence moves on past them
        _sql(url, "SELECT setval(pg_get_serial_sequence('change_log', 'id'), "
             "(SELECT max(id) FROM change_log))")
    _step(url, "upgrade", BEFORE)


def _verify(url: str) -> dict[str, Any]:
    result = run_formdb(["--db", url, "audit", "verify", "--format", "json"])
    assert result.exit_code in (0, 1), result.stderr
    chain: dict[str, Any] = next(c for c in json.loads(result.stdout)["chains"]
                                 if c["table"] == "change_log")
    return chain


def _old_chain_intact(url: str) -> bool:
    """The change log at 0012 recomputed with the old canonical form (form 1)."""
    prev = GENESIS
    for stored in _sql(url, "SELECT * FROM change_log ORDER BY id"):
        row = dict(stored)
        if isinstance(row["at"], str):  # SQLite hands plain SQL's timestamps back as text
            row["at"] = datetime.fromisoformat(row["at"])
        pairs = [[c, as_text(row[c])] for c in FORMS["change_log"][1]]
        canonical = json.dumps(pairs, ensure_ascii=False, separators=(",", ":"))
        if row["prev_hash"] != prev or row_hash(prev, canonical) != row["row_hash"]:
            return False
        prev = row["row_hash"]
    return True


def test_old_log_becomes_typed_keeps_its_chain_and_comes_back(empty_library_url: str) -> None:
    url = empty_library_url
    _old_library(url)
    old_full = _sql(url, "SELECT * FROM change_log ORDER BY id")
    old_rows = old_full
    assert _old_chain_intact(url)

    _step(url, "upgrade", TYPED)
    typed = _sql(url, "SELECT id, form, payload, prev_hash, row_hash FROM change_log ORDER BY id")
    # every row kept, with its id and its hashes (nothing resealed), and the chain verifies
    assert [(r["id"], r["prev_hash"], r["row_hash"]) for r in typed] == \
        [(r["id"], r["prev_hash"], r["row_hash"]) for r in old_rows]
    assert {r["form"] for r in typed} == {1}
    chain = _verify(url)
    assert chain["intact"] and chain["rows"] == len(OLD_ROWS), chain
    changes = [json.loads(r["payload"])["changes"] for r in typed]
    assert changes[1] == [{"field": "synonyms", "old": [], "new": ["Glycerol"]}]
    assert changes[2] == [{"field": "roles", "old": [], "new": ["humectant", "solvent"]}]
    assert changes[4] == [{"field": "density", "old_source": None,
                           "new_source": "rule-of-thumb"}]
    assert changes[8] == [{"field": "density", "old": 1.26, "new": 1.261}]
    assert changes[10] == [{"field": "retired", "old": False, "new": True}]
    assert changes[12] == [{"field": "key", "old": None, "new": "probe-limit"},
                           {"field": "max_percent", "old": None, "new": 1.0}]
    assert changes[13] == [{"field": "max_percent", "old": 1.0, "new": 0.9}]
    assert json.loads(typed[14]["payload"])["attempted"] == "change the library"
    assert changes[15] == [{"field": "roles", "old": None, "new": ["admin", "editor"]}]
    assert changes[17] == [{"field": "Glyceryl Stearate", "old": None, "old_source": None,
                            "new": 50.0, "new_source": "bench-2026"}]

    # an earlier version is rebuilt from the typed entries alone
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            record = next(iter(queries.records_by_id(session, [1]).values()))
            first = earlier_record(session, record, 1)
            history = ingredient_history(session, "glycerin")
    finally:
        engine.dispose()
    assert first.p.density == 1.26 and first.provenance["density"].note == "at 20 C"
    assert first.synonyms == ("Glycerol",) and not first.retired
    assert len(history) == 12 and history[8].changes[0].new == 1.261

    # the typed part of a migrated row is checked against the text its hash covers
    forged = typed[8]["payload"].replace("1.261", "1.3", 1)
    _sql(url, "UPDATE change_log SET payload = :p WHERE id = 9", {"p": forged})
    chain = _verify(url)
    assert not chain["intact"] and chain["problems"][0]["row"] == 9
    assert chain["problems"][0]["kind"] == "altered"
    _sql(url, "UPDATE change_log SET payload = :p WHERE id = 9", {"p": typed[8]["payload"]})

    # a typed entry written now links on from the migrated rows
    engine = make_engine(url)
    try:
        with unit_of_work(engine, write=True) as session:
            edit_ingredient(session, "Glycerin", [("density", "1.262"), ("hlb", "0.5")],
                            user="ana", source="rule-of-thumb", reason="lot 8")
    finally:
        engine.dispose()
    assert _verify(url)["intact"]

    _step(url, "downgrade", BEFORE)
    rows = _sql(url, "SELECT * FROM change_log ORDER BY id")
    # the old rows exactly as they were, then the typed entry as one old row per field part
    assert rows[:len(OLD_ROWS)] == old_full
    assert [(r["field"], r["old_value"], r["new_value"]) for r in rows[len(OLD_ROWS):]] == [
        ("hlb", None, "0.5"), ("hlb_source", None, "rule-of-thumb"),
        ("density", "1.261", "1.262")]
    assert [r["id"] for r in rows] == list(range(1, len(OLD_ROWS) + 4))
    assert _old_chain_intact(url)

    _step(url, "upgrade", TYPED)
    chain = _verify(url)
    assert chain["intact"] and chain["rows"] == len(OLD_ROWS) + 3, chain


def test_old_rows_come_back_byte_for_byte(empty_library_url: str) -> None:
    url = empty_library_url
    _old_library(url)
    tables = {"ingredients", "ingredient_names", "property_values", "sources"}
    before = library_state(url, tables=tables)
    log = [dict(r) for r in _sql(url, "SELECT * FROM change_log ORDER BY id")]
    _step(url, "upgrade", TYPED)
    _step(url, "downgrade", BEFORE)
    assert library_state(url, tables=tables) == before
    # the same columns and values (a column put back comes last in the table)
    assert [dict(r) for r in _sql(url, "SELECT * FROM change_log ORDER BY id")] == log


def test_a_downgrade_never_reseals_a_tampered_entry(empty_library_url: str) -> None:
    url = empty_library_url
    _old_library(url)
    _step(url, "upgrade", TYPED)
    engine = make_engine(url)
    try:
        with unit_of_work(engine, write=True) as session:
            edit_ingredient(session, "Glycerin", [("density", "1.262")], user="ana",
                            source="rule-of-thumb", reason="lot 8")
    finally:
        engine.dispose()
    _sql(url, "UPDATE change_log SET reason = 'rewritten' WHERE id = :i",
         {"i": len(OLD_ROWS) + 1})
    before = library_state(url)
    with pytest.raises(Exception, match="does not verify"):
        _step(url, "downgrade", BEFORE)
    assert library_state(url) == before
