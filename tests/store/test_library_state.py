"""``tests.helpers.library_state``, the cheap "library unchanged" check most refusal tests
make, misses no change the full dump (``dump_database``) would show: a changed cell (a float
by its last bit, a NULL made an empty text), a deleted row and an added row each change it, on
both backends; undoing a change gives the first state back; and it leaves out exactly the
columns the dump leaves out."""

from __future__ import annotations

import math
from collections.abc import Callable

import pytest
from sqlalchemy import text
from sqlalchemy.engine import Connection

from formdb.store.db import make_engine
from tests.helpers import dump_database, library_state

pytestmark = pytest.mark.slow  # a seeded library per backend, dumped a dozen times


def _sql(url: str, change: Callable[[Connection], None]) -> None:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            change(conn)
    finally:
        engine.dispose()


def _changes_one_row(conn: Connection, sql: str, **params: object) -> None:
    assert conn.execute(text(sql), params).rowcount == 1, sql


def _one(conn: Connection, sql: str) -> object:
    return conn.execute(text(sql)).scalar_one()


def _float_by_one_bit(conn: Connection) -> None:
    product = _one(conn, "SELECT min(product) FROM exposure")
    value = _one(conn, f"SELECT amount_g_day FROM exposure WHERE product = '{product}'")
    assert isinstance(value, float)
    _changes_one_row(conn, "UPDATE exposure SET amount_g_day = :v WHERE product = :p",
                     v=math.nextafter(value, math.inf), p=product)


def _null_to_empty(conn: Connection) -> None:
    key = _one(conn, "SELECT min(key) FROM sources WHERE lot IS NULL")
    _changes_one_row(conn, "UPDATE sources SET lot = '' WHERE key = :k", k=key)


def _cell(conn: Connection) -> None:
    _changes_one_row(conn, "UPDATE sources SET citation = citation || '.' "
                     "WHERE key = (SELECT min(key) FROM sources)")


def _undo_cell(conn: Connection) -> None:
    _changes_one_row(conn, "UPDATE sources SET citation = substr(citation, 1, "
                     "length(citation) - 1) WHERE key = (SELECT min(key) FROM sources)")


def _delete_row(conn: Connection) -> None:
    _changes_one_row(conn, "DELETE FROM exposure WHERE product = "
                     "(SELECT max(product) FROM exposure)")


def _add_row(conn: Connection) -> None:
    _changes_one_row(conn, "INSERT INTO sources (key, citation, evidence) VALUES "
                     "('larkspur-state-test', 'Larkspur notebook 7', 'rule-of-thumb')")


def test_every_change_the_dump_shows_changes_the_state(seeded_library_url: str) -> None:
    url = seeded_library_url
    first = library_state(url)
    assert library_state(url) == first  # nothing done: the same state
    states, dumps = [first], [dump_database(url)]
    for change in (_cell, _float_by_one_bit, _null_to_empty, _delete_row, _add_row):
        _sql(url, change)
        state, dump = library_state(url), dump_database(url)
        assert dump not in dumps, change.__name__  # the change is one the dump shows
        assert state not in states, change.__name__  # and the state shows it too
        changed = [line for line in state.splitlines() if line not in states[-1].splitlines()]
        assert len(changed) == 1, changed  # one table's line: the difference names its table
        states.append(state)
        dumps.append(dump)
    _sql(url, _undo_cell)  # the same rows again give the same state
    assert library_state(url) == library_state(url)
    assert (library_state(url) == states[0]) == (dump_database(url) == dumps[0])


def test_the_columns_left_out_are_those_the_dump_leaves_out(seeded_library_url: str) -> None:
    url = seeded_library_url
    sealed = [line for line in library_state(url, exclude_columns=("at",)).splitlines()
              if line.startswith("== change_log ")]
    # a sealed table loses its seals with a column they cover, as in the dump
    assert sealed == [line for line in dump_database(url, exclude_columns=("at",)).splitlines()
                      if line.startswith("== change_log ")]
    assert "row_hash" not in sealed[0] and " at," not in sealed[0]
    before, whole = library_state(url, exclude_columns=("lot",)), library_state(url)
    _sql(url, _null_to_empty)
    assert library_state(url, exclude_columns=("lot",)) == before  # a column left out
    assert library_state(url) != whole
    only = library_state(url, tables=["sources"])
    assert only.splitlines()[0].startswith("== sources (") and len(only.splitlines()) == 2
