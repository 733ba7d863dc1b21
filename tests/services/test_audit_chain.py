"""The audit trail: every change-log and review row is sealed in a hash chain, and
``formdb audit verify`` finds rows altered, removed or slipped in with plain SQL.

The hash is SHA-256; its check value is the FIPS 180-2 example ("abc", Appendix B.1). Ingredient
values written here are made up for the test (source rule-of-thumb).
"""

from __future__ import annotations

import hashlib
import itertools
import json
from datetime import UTC, datetime, timedelta, timezone
from typing import Any
from uuid import uuid4

import pytest
from sqlalchemy import select, text, update

from formdb.services.library.ingredients import add_ingredient, edit_ingredient
from formdb.store.change_log import FORM, payload_text
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import Base, ChangeLogEntry
from formdb.store.sealing import (
    ADDED_LATER,
    GENESIS,
    SEALED_COLUMNS,
    AppendOnly,
    as_text,
    canonical,
    row_hash,
    seal,
)
from tests.helpers import drop_roles, run_formdb
from tests.store.edit_workers import STRESS_NAMES, editors_together

# --- the hashing on plain data -------------------------------------------------------------------


def test_row_hash_is_sha256_of_prev_and_canonical() -> None:
    # FIPS 180-2, Appendix B.1: SHA-256("abc")
    assert row_hash("", "abc") == \
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    assert row_hash("ab", "c") == row_hash("", "abc")
    assert row_hash(GENESIS, "x") == hashlib.sha256((GENESIS + "x").encode()).hexdigest()


def _entry(**over: Any) -> dict[str, Any]:
    row: dict[str, Any] = {
        "at": datetime(2026, 3, 1, 9, 30, 0, 125000, tzinfo=UTC), "user": "larkspur-lab",
        "entity": "ingredient", "entity_key": "Cetyl Alcohol", "entity_version": 2,
        "action": "edit", "form": FORM,
        "payload": payload_text([{"field": "hlb", "old": 1.0, "new": 15.5}]),
        "reason": "supplier sheet"}
    row.update(over)
    return row


def test_canonical_is_fixed_order_text_with_utc_times() -> None:
    row = _entry(id=7, prev_hash=GENESIS)
    pairs = json.loads(canonical("change_log", row))
    assert [p[0] for p in pairs] == list(SEALED_COLUMNS["change_log"])
    assert dict(pairs)["at"] == "2026-03-01T09:30:00.125000Z"
    assert dict(pairs)["entity_version"] == "2"
    # the same instant however it arrives: naive (SQLite hands those back), UTC, or +02:00
    naive = _entry(id=7, prev_hash=GENESIS, at=datetime(2026, 3, 1, 9, 30, 0, 125000))
    plus2 = _entry(id=7, prev_hash=GENESIS, at=datetime(2026, 3, 1, 11, 30, 0, 125000,
                                                        tzinfo=timezone(timedelta(hours=2))))
    assert canonical("change_log", naive) == canonical("change_log", row) \
        == canonical("change_log", plus2)
    # a missing value and an empty text are different rows
    assert canonical("change_log", {**row, "reason": None}) != \
        canonical("change_log", {**row, "reason": ""})
    # the column order is part of the form: no key order of the input changes it
    assert canonical("change_log", dict(reversed(list(row.items())))) == \
        canonical("change_log", row)


def test_sealing_text_is_the_verifiers_canonical_byte_for_byte() -> None:
    # canonical() writes a current-form row's text its own quicker way; it must be, byte for
    # byte, the definition: the JSON (no spaces, non-ASCII kept) of the [column, text] pairs in
    # hashing order, a column added later listed only when it holds a value
    tricky = 'quote " back \\ slash / tab \t nl \n nul \x00 bell \x07 del \x7f é ✓ \u2028 😀'
    rows = [_entry(), _entry(reason=None, entity_version=None), _entry(reason=""),
            _entry(entity_key=tricky, user=tricky, reason=tricky,
                   payload=payload_text([{"field": "note", "old": None, "new": tricky}])),
            _entry(at=datetime(2026, 3, 1, 11, 30, tzinfo=timezone(timedelta(hours=2)))),
            _entry(entity_version=True, reason=2.5)]
    for table, row in [("change_log", r) for r in rows] + [
            ("review_signatures", {"run_id": 3, "run_hash": "ab", "signer": tricky,
                                   "signed_at": datetime(2026, 3, 1), "waivers_json": None,
                                   "key_id": "k1"}),
            ("review_runs", {"run_key": "r", "signable": False, "created_at":
                             datetime(2026, 3, 1, 9, 0, tzinfo=UTC), "policy_json": "{}"})]:
        sealed = [dict(row)]
        seal(table, sealed, 41, GENESIS)
        later = ADDED_LATER.get(table, frozenset())
        defined = json.dumps([[column, as_text(sealed[0].get(column))]
                              for column in SEALED_COLUMNS[table]
                              if column not in later or sealed[0].get(column) is not None],
                             ensure_ascii=False, separators=(",", ":"))
        assert canonical(table, sealed[0]) == defined
        assert sealed[0]["row_hash"] == row_hash(GENESIS, defined)
        assert sealed[0]["id"] == 41


def test_every_column_but_row_hash_is_sealed() -> None:
    from formdb.store.sealing import NOT_CANONICAL

    for table, columns in SEALED_COLUMNS.items():
        model = [c.name for c in Base.metadata.tables[table].columns
                 if c.name not in NOT_CANONICAL]
        assert sorted(columns) == sorted(model), table


def test_seal_links_rows_and_any_change_shows() -> None:
    rows = [_entry(payload=payload_text([{"field": "hlb", "new": v}])) for v in (10, 11, 12)]
    head = seal("change_log", rows, 5, GENESIS)
    assert [r["id"] for r in rows] == [5, 6, 7]
    assert rows[0]["prev_hash"] == GENESIS
    assert rows[1]["prev_hash"] == rows[0]["row_hash"]
    assert rows[2]["prev_hash"] == rows[1]["row_hash"] and head == rows[2]["row_hash"]
    for column in SEALED_COLUMNS["change_log"]:
        if column in ("id", "prev_hash"):
            continue
        changed = {**rows[1], column: "tampered"}
        assert row_hash(rows[1]["prev_hash"], canonical("change_log", changed)) \
            != rows[1]["row_hash"], column


# --- sealed by the services, checked by verify -----------------------------------------------


def _stock(url: str) -> None:
    engine = make_engine(url)
    try:
        with unit_of_work(engine, write=True) as session:
            for name in STRESS_NAMES:
                add_ingredient(session, name, [("hlb", "4")], user="larkspur-lab",
                               source="rule-of-thumb", roles=["emulsifier"])
        for round_ in range(3):
            with unit_of_work(engine, write=True) as session:
                edit_ingredient(session, "Cetyl Alcohol", [("hlb", f"{5 + round_}")],
                                user="larkspur-lab", source="rule-of-thumb",
                                reason=f"round {round_}")
    finally:
        engine.dispose()


def _sql(url: str, statement: str, **params: Any) -> None:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            conn.execute(text(statement), params)
    finally:
        engine.dispose()


def _rows(url: str) -> list[ChangeLogEntry]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return list(session.scalars(select(ChangeLogEntry).order_by(ChangeLogEntry.id)))
    finally:
        engine.dispose()


def _verify(url: str) -> tuple[int, dict[str, Any], str]:
    result = run_formdb(["--db", url, "audit", "verify", "--format", "json"])
    data = json.loads(result.stdout) if result.exit_code in (0, 1) else {}
    log = next((c for c in data.get("chains", []) if c["table"] == "change_log"), {})
    return result.exit_code, log, result.stderr


def test_service_writes_are_sealed_and_verify_is_intact(library_url: str) -> None:
    _stock(library_url)
    rows = _rows(library_url)
    assert rows and all(r.row_hash for r in rows)
    assert rows[0].prev_hash == GENESIS
    assert all(b.prev_hash == a.row_hash for a, b in itertools.pairwise(rows))
    code, log, _err = _verify(library_url)
    assert code == 0 and log["intact"] and log["rows"] == len(rows)
    assert log["head"] == {"id": rows[-1].id, "hash": rows[-1].row_hash}
    text_run = run_formdb(["--db", library_url, "audit", "verify"])
    assert text_run.exit_code == 0 and "change_log" in text_run.stdout


def test_seeded_library_is_one_intact_chain(seeded_library_url: str) -> None:
    # `init --seed` writes its log rows with bulk Core inserts and ORM rows alike
    code, log, _err = _verify(seeded_library_url)
    assert code == 0 and log["intact"] and log["rows"] > 100


def test_plain_sql_edit_is_found(library_url: str) -> None:
    _stock(library_url)
    target = _rows(library_url)[3]
    _sql(library_url, "UPDATE change_log SET payload = replace(payload, '4', '9') WHERE id = :i",
         i=target.id)
    code, log, err = _verify(library_url)
    assert code == 1 and not log["intact"]
    first = log["problems"][0]
    assert first["row"] == target.id and first["kind"] == "altered"
    assert f"change_log row {target.id}" in err and "altered" in err


def test_plain_sql_delete_is_found(library_url: str) -> None:
    _stock(library_url)
    rows = _rows(library_url)
    gone = rows[4]
    _sql(library_url, "DELETE FROM change_log WHERE id = :i", i=gone.id)
    code, log, _err = _verify(library_url)
    assert code == 1
    first = log["problems"][0]
    assert first["kind"] == "removed" and first["row"] == gone.id
    assert f"row {rows[5].id} does not link to row {rows[3].id}" in first["detail"]


def test_deleting_the_first_row_is_found(library_url: str) -> None:
    _stock(library_url)
    rows = _rows(library_url)
    _sql(library_url, "DELETE FROM change_log WHERE id = :i", i=rows[0].id)
    code, log, _err = _verify(library_url)
    assert code == 1 and log["problems"][0]["kind"] == "removed"
    assert log["problems"][0]["row"] == rows[1].id


_INSERT = ("INSERT INTO change_log (id, at, \"user\", entity, entity_key, entity_version, action, "
           "form, payload, reason, prev_hash, row_hash) VALUES (:id, :at, :user, "
           ":entity, :entity_key, :entity_version, :action, :form, :payload, "
           ":reason, :prev_hash, :row_hash)")


def _says(text: str) -> str:
    return payload_text([{"field": "hlb_note", "old": None, "new": text}])


def _insert(url: str, row: dict[str, Any]) -> None:
    values = {**row, "at": row["at"].replace(tzinfo=None)}  # stored as UTC (naive on SQLite)
    if "postgresql" in url:
        values["at"] = row["at"]
    _sql(url, _INSERT, **values)


def test_forged_rows_are_found(library_url: str) -> None:
    _stock(library_url)
    rows = _rows(library_url)
    head = rows[-1]
    # a forged row appended with plain SQL: no hash, or a made-up one
    _insert(library_url, {**_entry(payload=_says("forged")), "id": head.id + 1,
                          "prev_hash": head.row_hash, "row_hash": None})
    code, log, _err = _verify(library_url)
    assert code == 1
    assert log["problems"][0] == {"row": head.id + 1, "kind": "unsealed",
                                  "detail": log["problems"][0]["detail"]}
    _sql(library_url, "UPDATE change_log SET row_hash = :h WHERE id = :i", h="f" * 64,
         i=head.id + 1)
    code, log, _err = _verify(library_url)
    assert code == 1 and log["problems"][0]["kind"] == "altered"


def test_row_slipped_into_a_gap_is_found(library_url: str) -> None:
    _stock(library_url)
    head = _rows(library_url)[-1]
    # a sealed row after a gap in ids (PostgreSQL spends the ids of rolled-back writes): intact
    later = {**_entry(payload=_says("later")), "at": datetime.now(UTC)}
    seal("change_log", [later], head.id + 3, head.row_hash or "")
    _insert(library_url, later)
    code, log, _err = _verify(library_url)
    assert code == 0, log
    # a forger fills the gap with a well-formed sealed row linked to the row before: found
    forged = {**_entry(payload=_says("slipped in")), "at": datetime.now(UTC)}
    seal("change_log", [forged], head.id + 1, head.row_hash or "")
    _insert(library_url, forged)
    code, log, _err = _verify(library_url)
    assert code == 1
    first = log["problems"][0]
    assert first["kind"] == "inserted" and first["row"] == head.id + 1, first


def test_session_refuses_to_change_sealed_rows(library_url: str) -> None:
    _stock(library_url)
    engine = make_engine(library_url)
    try:
        with pytest.raises(AppendOnly), unit_of_work(engine, write=True) as session:
            row = session.scalars(select(ChangeLogEntry).limit(1)).one()
            row.payload = "rewritten"
            session.flush()
        with pytest.raises(AppendOnly), unit_of_work(engine, write=True) as session:
            session.execute(update(ChangeLogEntry).values(reason="rewritten"))
        with pytest.raises(AppendOnly), unit_of_work(engine, write=True) as session:
            session.delete(session.scalars(select(ChangeLogEntry).limit(1)).one())
            session.flush()
    finally:
        engine.dispose()
    assert _verify(library_url)[0] == 0


def test_verify_input_problem_exits_2(tmp_path: Any) -> None:
    result = run_formdb(["--db", str(tmp_path / "missing.sqlite"), "audit", "verify"])
    assert result.exit_code == 2 and result.stderr.startswith("Error: ")


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_concurrent_writers_keep_one_chain(library_url: str) -> None:
    # 3 processes x 8 rounds of edits on shared ingredients: the chain must not fork
    _stock(library_url)
    attempts = editors_together(library_url, 3, 8)
    assert [a for a in attempts if a.other_error] == []
    assert any(a.accepted_version for a in attempts)
    code, log, _err = _verify(library_url)
    assert code == 0 and log["intact"], log


@pytest.mark.postgres
def test_insert_only_logins_seal_and_cannot_rewrite(pg_url: str) -> None:
    # with grant-setup's roles: an editor may append to the log (and its rows get sealed) but
    # not rewrite it; a reviewer may add runs but not change them
    from tests.store.test_grant_setup import _login, _try

    prefix = f"fdba_{uuid4().hex[:8]}"
    try:
        made = run_formdb(["--db", pg_url, "db", "grant-setup", "--prefix", prefix])
        assert made.exit_code == 0, made.stderr
        editor = _login(pg_url, prefix, "editor")
        added = run_formdb(["--db", editor, "ingredient", "add",
                            "Cetyl Alcohol", "--set", "hlb=15.5", "--source", "rule-of-thumb"])
        assert added.exit_code == 0, added.stderr
        assert _verify(pg_url)[0] == 0
        assert not _try(editor, "UPDATE change_log SET reason = 'rewritten'")
        assert not _try(editor, "DELETE FROM change_log")
        reviewer = _login(pg_url, prefix, "reviewer")
        assert not _try(reviewer, "UPDATE review_runs SET created_by = 'x'")
        assert not _try(reviewer, "DELETE FROM review_signatures")
    finally:
        drop_roles(pg_url, prefix)
