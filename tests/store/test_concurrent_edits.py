"""Several editors at once, on SQLite (WAL + busy timeout) and PostgreSQL: optimistic locking
keeps every accepted edit, refuses the rest with a Conflict naming the other change, and never
deadlocks or writes half an edit.

Counts: 4 processes x 25 rounds = 100 edit attempts per backend, on 3 shared ingredients. The HLB
values written are made up for the test (source key rule-of-thumb); the starting HLB values are
textbook figures (cetyl alcohol ~1, glyceryl stearate 3.8, sorbitan stearate 4.7; from memory).
"""

from __future__ import annotations

import re
import sqlite3
from typing import Any

import pytest
from sqlalchemy import select

from formdb.services.library.ingredients import add_ingredient
from formdb.store import db as store_db
from formdb.store.change_log import changes_of
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import ChangeLogEntry, Ingredient, PropertyValue
from tests.helpers import library_state, run_formdb
from tests.store.edit_workers import (
    STRESS_NAMES,
    Attempt,
    editors_together,
    user_of,
)

pytestmark = pytest.mark.slow  # left out of the fast lane

PROCESSES = 4
ROUNDS = 25
START_HLB = {"Cetyl Alcohol": "1", "Glyceryl Stearate": "3.8", "Sorbitan Stearate": "4.7"}


def _stock(url: str) -> None:
    engine = make_engine(url)
    try:
        with unit_of_work(engine, write=True) as session:
            for name in STRESS_NAMES:
                add_ingredient(session, name, [("hlb", START_HLB[name])],
                               user="larkspur-setup", source="from-memory",
                               roles=["emulsifier"])
    finally:
        engine.dispose()


def _run_workers(url: str) -> list[Attempt]:
    return editors_together(url, PROCESSES, ROUNDS)


def _state(url: str) -> dict[str, tuple[int, float | None, str | None]]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            rows = session.execute(
                select(Ingredient.inci_name, Ingredient.version, PropertyValue.value_num,
                       PropertyValue.note)
                .join(PropertyValue, (PropertyValue.ingredient_id == Ingredient.id)
                      & (PropertyValue.property == "hlb"))).all()
            return {n: (v, num, note) for n, v, num, note in rows}
    finally:
        engine.dispose()


def _hlb(entry: ChangeLogEntry) -> dict[str, Any]:
    """The hlb change of one entry (its value and note parts, as data)."""
    return next(c for c in changes_of(entry.payload) if c["field"] == "hlb")


def _log(url: str) -> list[ChangeLogEntry]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return list(session.scalars(select(ChangeLogEntry).where(
                ChangeLogEntry.action == "edit").order_by(ChangeLogEntry.id)))
    finally:
        engine.dispose()


def test_concurrent_editors_lose_nothing(library_url: str) -> None:
    _stock(library_url)
    before = _state(library_url)
    attempts = _run_workers(library_url)

    assert len(attempts) == PROCESSES * ROUNDS
    assert [a for a in attempts if a.other_error] == []
    accepted = [a for a in attempts if a.accepted_version is not None]
    refused = [a for a in attempts if a.conflict is not None]
    assert len(accepted) + len(refused) == PROCESSES * ROUNDS
    assert accepted and refused, "the rounds should both succeed and collide"

    log = _log(library_url)
    by_edit: dict[tuple[str, int], ChangeLogEntry] = {}
    for entry in log:
        assert entry.entity_version is not None
        assert (entry.entity_key, entry.entity_version) not in by_edit  # one entry per change
        by_edit[(entry.entity_key, entry.entity_version)] = entry
    # every accepted edit is in the log, its value and note, under its own version and user
    for a in accepted:
        entry = by_edit[(a.name, a.accepted_version or 0)]
        hlb = _hlb(entry)
        assert float(hlb["new"]) == float(a.value)
        assert entry.user == user_of(a.worker)
        assert hlb["new_note"] == f"w{a.worker} r{a.round}"
        assert a.accepted_version == a.read_version + 1
    # no lost update: the log holds nothing but the accepted edits, one per version
    assert len(by_edit) == len(accepted)
    final = _state(library_url)
    for name in STRESS_NAMES:
        versions = sorted(v for n, v in by_edit if n == name)
        start = before[name][0]
        assert versions == list(range(start + 1, final[name][0] + 1)), name
        # the final state is the log replayed: the last version's values, value and note together
        value, note = START_HLB[name], None
        for v in versions:
            hlb = _hlb(by_edit[(name, v)])
            value = hlb.get("new", value)
            note = hlb.get("new_note", note)
        assert final[name][1] == float(value)
        assert final[name][2] == note
    # every refusal names a change made by someone else after the version it read
    for a in refused:
        assert a.conflict is not None
        later = {e.user for (n, v), e in by_edit.items()
                 if n == a.name and v > a.read_version}
        named = set(re.findall(r"larkspur-editor-\d+", a.conflict))
        assert named and named <= later and user_of(a.worker) not in named, a.conflict


def test_locked_sqlite_file_is_one_clear_error(sqlite_url: str,
                                               monkeypatch: pytest.MonkeyPatch) -> None:
    _stock(sqlite_url)
    monkeypatch.setattr(store_db, "BUSY_TIMEOUT_MS", 300)
    path = store_db.sqlite_path(sqlite_url)
    before = library_state(sqlite_url)
    holder = sqlite3.connect(path, isolation_level=None)
    try:
        holder.execute("BEGIN EXCLUSIVE")  # another program holds the write lock
        result = run_formdb(["--db", sqlite_url, "ingredient", "edit", "Cetyl Alcohol",
                             "--set", "hlb=2", "--source", "rule-of-thumb"])
    finally:
        holder.execute("ROLLBACK")
        holder.close()
    assert result.exit_code == 2
    assert "Traceback" not in result.stderr
    first = result.stderr.strip().splitlines()[0]
    assert first.startswith("Error: ") and "locked" in first, result.stderr
    assert library_state(sqlite_url) == before
