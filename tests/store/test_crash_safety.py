"""A process killed with SIGKILL in the middle of a write leaves the library exactly as before
(or, for a loop of edits, exactly at its last commit), on SQLite and PostgreSQL.

Counts: one import of 20,000 generated rows, killed once its transaction has written; one edit
killed after its rows are flushed; one editing loop killed after at least 5 commits. The HLB
values are made up for the test (source key rule-of-thumb).
"""

from __future__ import annotations

import csv
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from sqlalchemy import text

from formdb.store.change_log import changes_of
from formdb.store.db import make_engine, sqlite_path
from tests.helpers import library_state
from tests.store.edit_workers import STRESS_NAMES
from tests.store.test_concurrent_edits import _log, _state, _stock

pytestmark = pytest.mark.slow  # left out of the fast lane

IMPORT_ROWS = 20_000
ROOT = Path(__file__).resolve().parents[2]


def _python(*args: str) -> subprocess.Popen[str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    return subprocess.Popen([sys.executable, *args], cwd=ROOT, env=env, text=True,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def _big_table(path: Path) -> Path:
    with path.open("w", newline="", encoding="utf-8") as f:
        out = csv.writer(f)
        out.writerow(["inci_name", "roles", "hlb", "source"])
        for i in range(IMPORT_ROWS):
            out.writerow([f"Larkspur Test Ester {i:05d}", "emollient", f"{i % 200 / 10}",
                          "rule-of-thumb"])
    return path


def _has_written(url: str, baseline_wal: int) -> bool:
    """True once the other process's open transaction has written rows."""
    path = sqlite_path(url)
    if path is not None:  # uncommitted pages spill into the write-ahead log
        wal = path.with_name(path.name + "-wal")
        return wal.exists() and wal.stat().st_size > baseline_wal + 1_000_000
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return bool(conn.execute(text(
                "SELECT count(*) FROM pg_stat_activity WHERE datname = current_database() "
                "AND pid <> pg_backend_pid() AND backend_xid IS NOT NULL")).scalar())
    finally:
        engine.dispose()


def _wal_size(url: str) -> int:
    path = sqlite_path(url)
    wal = path.with_name(path.name + "-wal") if path else None
    return wal.stat().st_size if wal and wal.exists() else 0


def _kill_when(proc: subprocess.Popen[str], ready, limit: float = 40.0) -> None:  # type: ignore[no-untyped-def]
    deadline = time.monotonic() + limit
    while not ready():
        assert proc.poll() is None, f"finished before the kill: {proc.communicate()}"
        assert time.monotonic() < deadline, "the writer never got going"
        time.sleep(0.02)
    proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=10)
    assert proc.returncode == -signal.SIGKILL
    proc.stdout.close()  # type: ignore[union-attr]
    proc.stderr.close()  # type: ignore[union-attr]


def _integrity(url: str) -> None:
    if sqlite_path(url) is None:
        return
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            assert conn.execute(text("PRAGMA integrity_check")).scalar() == "ok"
    finally:
        engine.dispose()


def test_killed_import_leaves_library_as_before(library_url: str, tmp_path: Path) -> None:
    _stock(library_url)
    table = _big_table(tmp_path / "big.csv")
    before = library_state(library_url)
    wal = _wal_size(library_url)
    proc = _python("-m", "formdb", "--db", library_url,
                   "ingredient", "import", str(table))
    _kill_when(proc, lambda: _has_written(library_url, wal))
    assert library_state(library_url) == before
    _integrity(library_url)


def test_killed_edit_leaves_library_as_before(library_url: str) -> None:
    _stock(library_url)
    before = library_state(library_url)
    proc = _python("-m", "tests.store.edit_workers", "hang", library_url)
    assert proc.stdout is not None
    assert proc.stdout.readline().strip() == "flushed", proc.stderr.read()  # type: ignore[union-attr]
    _kill_when(proc, lambda: True)
    assert library_state(library_url) == before
    _integrity(library_url)


def test_killed_edit_loop_stops_at_its_last_commit(library_url: str) -> None:
    _stock(library_url)
    proc = _python("-m", "tests.store.edit_workers", "forever", library_url)
    assert proc.stdout is not None
    committed = [int(proc.stdout.readline()) for _ in range(5)]
    _kill_when(proc, lambda: True)
    _integrity(library_url)
    name = STRESS_NAMES[0]
    version, value, note = _state(library_url)[name]
    edits = [e for e in _log(library_url) if e.entity_key == name]
    versions = sorted({e.entity_version for e in edits if e.entity_version is not None})
    # every commit the loop announced is there; nothing beyond whole edits; state = log replayed
    assert set(committed) <= set(versions)
    assert versions == list(range(2, version + 1))
    last = [c for e in edits if e.entity_version == version for c in changes_of(e.payload)
            if c["field"] == "hlb"]
    assert len(last) == 1 and float(last[0]["new"]) == value and last[0]["new_note"] == note
