"""Server seals on PostgreSQL (migration 0019): a chain rewritten and resealed with the public
hash no longer passes `audit verify`, because the server's keyed seal, which no writer login can
compute or read the key of, does not follow. On SQLite the public chain is all there is, and the
same rewrite passes: the README says so, and the SQLite case below pins it.

The rewrite is the attack of the issue: change a signed-off run's stored findings (or a change
log row) with plain SQL and recompute every hash from there to the head.
"""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import ProgrammingError

from formdb.store.db import make_engine
from tests.helpers import reseal
from tests.signing import act, people

__all__ = ["people"]  # the fixture, imported for its tests

CREAM = Path(__file__).parents[1] / "golden" / "formulas" / "ow-cream.toml"


def _reseal_from(url: str, table: str, first_id: int, change: dict[str, Any]) -> None:
    """``reseal`` through a connection of its own, with a made-up server seal on every row."""
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            reseal(conn, table, first_id, change, also={"server_seal": "f" * 64})
    finally:
        engine.dispose()


def _verify(who) -> tuple[int, str]:
    done = act(who, "audit", "verify")
    return done.exit_code, done.stdout


@pytest.mark.postgres
def test_a_resealed_rewrite_fails_the_server_seal(seeded_pg_url: str, tmp_path: Path,
                                                 people) -> None:
    url = seeded_pg_url
    ana = people(url, "ana")
    cream = tmp_path / "cream.toml"
    shutil.copyfile(CREAM, cream)
    for _ in range(2):
        assert act(ana, "review", "run", str(cream)).exit_code == 0
    assert _verify(ana)[0] == 0
    engine = make_engine(url)
    with engine.connect() as conn:
        first_run = conn.execute(text("SELECT min(id) FROM review_runs")).scalar_one()
        middle_log = conn.execute(text("SELECT max(id) - 5 FROM change_log")).scalar_one()
    engine.dispose()
    _reseal_from(url, "review_runs", first_run, {"findings_json": "[]"})
    _reseal_from(url, "change_log", middle_log, {"reason": "rewritten"})
    code, shown = _verify(ana)
    assert code == 1
    assert f"review_runs row {first_run} (server-seal)" in shown
    assert f"change_log row {middle_log} (server-seal)" in shown
    assert "(altered)" not in shown and "(broken-link)" not in shown  # public chain fooled


@pytest.mark.postgres
def test_writer_logins_cannot_read_the_key_but_can_check_seals(seeded_pg_url: str) -> None:
    base = make_url(seeded_pg_url)
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    login = "fdbs_seal_probe"
    try:
        with admin.connect() as conn:
            schema = conn.execute(text("SELECT current_schema()")).scalar_one()
            conn.execute(text(f'DROP ROLE IF EXISTS "{login}"'))
            conn.execute(text(f'CREATE ROLE "{login}" LOGIN'))
            conn.execute(text(f'GRANT USAGE ON SCHEMA "{schema}" TO "{login}"'))
            conn.execute(text(f'GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA '
                              f'"{schema}" TO "{login}"'))
        writer = create_engine(base.set(username=login))
        try:
            with writer.connect() as conn:
                with pytest.raises(ProgrammingError, match="permission denied"):
                    conn.execute(text(f'SELECT key FROM "{schema}__seal".formdb_seal_key'))
                conn.rollback()
                with pytest.raises(ProgrammingError, match="permission denied"):
                    conn.execute(text("SELECT formdb_keyed_seal('change_log:1:x:')"))
                conn.rollback()
                ok = conn.execute(text(
                    "SELECT bool_and(formdb_seal_ok('change_log', id, row_hash, before, "
                    "server_seal)) FROM (SELECT id, row_hash, server_seal, lag(server_seal) "
                    "OVER (ORDER BY id) AS before FROM change_log) s")).scalar_one()
                assert ok is True
                # a row the writer inserts is sealed by the server, whatever seal it gives
                conn.execute(text("UPDATE change_log SET server_seal = 'x' WHERE id = "
                                  "(SELECT max(id) FROM change_log)"))
                kept = conn.execute(text("SELECT server_seal FROM change_log "
                                         "ORDER BY id DESC LIMIT 1")).scalar_one()
                assert kept != "x" and len(kept) == 64
                conn.rollback()
        finally:
            writer.dispose()
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP OWNED BY "{login}"'))
            conn.execute(text(f'DROP ROLE IF EXISTS "{login}"'))
        admin.dispose()


def test_on_sqlite_the_same_rewrite_passes_without_an_anchor(seeded_sqlite_url: str,
                                                             people) -> None:
    """What SQLite cannot detect, pinned: a careful rewrite of the file (README table)."""
    ana = people(seeded_sqlite_url, "ana")
    engine = make_engine(seeded_sqlite_url)
    with engine.connect() as conn:
        middle_log = conn.execute(text("SELECT max(id) - 5 FROM change_log")).scalar_one()
    engine.dispose()
    _reseal_from(seeded_sqlite_url, "change_log", middle_log, {"reason": "rewritten"})
    assert _verify(ana)[0] == 0
