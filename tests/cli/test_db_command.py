"""``formdb db``: revisions up and down, and backups that restore the whole library row for row
(compared with tests.helpers.dump_database) on SQLite and on PostgreSQL."""

from __future__ import annotations

import zipfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest
from alembic.script import ScriptDirectory
from sqlalchemy import inspect

from formdb.services.library.ingredients import add_ingredient
from formdb.store.db import alembic_config, head_revision, make_engine, unit_of_work
from tests.helpers import dump_database, fresh_pg_database, library_state, pg_base_url, run_formdb

pytestmark = pytest.mark.slow  # left out of the fast lane


def test_migration_chain_has_exactly_one_head() -> None:
    heads = ScriptDirectory.from_config(alembic_config()).get_heads()
    assert len(heads) == 1, f"alembic has several heads {heads}: set down_revision to the head"


def _tables(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return set(inspect(conn).get_table_names())
    finally:
        engine.dispose()


def test_upgrade_current_downgrade_history(empty_library_url: str) -> None:
    head = head_revision()
    db = ["--db", empty_library_url, "db"]
    if empty_library_url.startswith("sqlite"):
        Path(empty_library_url.removeprefix("sqlite:///")).touch()
    first = run_formdb([*db, "current"])
    assert first.exit_code == 0 and "no formdb schema yet" in first.stdout
    up = run_formdb([*db, "upgrade"])
    assert up.exit_code == 0 and f"to {head}" in up.stdout, up.stderr
    assert "ingredients" in _tables(empty_library_url)
    assert "(the newest)" in run_formdb([*db, "current"]).stdout
    again = run_formdb([*db, "upgrade"])
    assert "nothing changed" in again.stdout
    hist = run_formdb([*db, "history"])
    assert hist.exit_code == 0
    assert f"{head}" in hist.stdout and "(current, head)" in hist.stdout
    shown = run_formdb([*db, "downgrade", "base"])
    assert shown.exit_code == 2 and "remove table ingredients (0 rows)" in shown.stdout
    assert "ingredients" in _tables(empty_library_url)  # rehearsed and rolled back
    down = run_formdb([*db, "downgrade", "base", "--yes"])
    assert down.exit_code == 0, down.stderr
    assert _tables(empty_library_url) <= {"alembic_version"}
    bad = run_formdb([*db, "downgrade", "no-such-rev"])
    assert bad.exit_code == 2 and bad.stderr.startswith("Error: no migration revision")
    assert "Traceback" not in bad.stderr


@contextmanager
def _empty_target(like: str, tmp_path: Path) -> Iterator[str]:
    """A new empty database on the same backend as ``like``."""
    if like.startswith("sqlite"):
        yield f"sqlite:///{tmp_path / 'restored.sqlite'}"
        return
    base = pg_base_url()
    assert base is not None
    with fresh_pg_database(base) as url:
        yield url


def test_zip_backup_restores_every_row(seeded_library_url: str, tmp_path: Path) -> None:
    archive = tmp_path / "library-backup.zip"
    made = run_formdb(["--db", seeded_library_url, "db", "backup", str(archive)])
    assert made.exit_code == 0, made.stderr
    assert zipfile.is_zipfile(archive)
    with _empty_target(seeded_library_url, tmp_path) as target:
        back = run_formdb(["--db", target, "db", "restore", str(archive), "--yes"])
        assert back.exit_code == 0, back.stderr
        assert dump_database(target) == dump_database(seeded_library_url)
        # the id counters moved past the restored rows: the library takes new ingredients
        engine = make_engine(target)
        try:
            with unit_of_work(engine, write=True) as session:
                add_ingredient(session, "Larkspur Test Ester", [("hlb", "5")],
                               user="larkspur-test", source="rule-of-thumb")
        finally:
            engine.dispose()
        # restore fills empty databases only; the restored one is refused and left alone
        before = library_state(target)
        again = run_formdb(["--db", target, "db", "restore", str(archive), "--yes"])
        assert again.exit_code == 2 and "already holds data" in again.stderr
        assert library_state(target) == before


def test_sqlite_copy_backup_round_trips(seeded_sqlite_url: str, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    made = run_formdb(["--db", seeded_sqlite_url, "db", "backup", str(copy)])
    assert made.exit_code == 0, made.stderr
    target = f"sqlite:///{tmp_path / 'restored.sqlite'}"
    back = run_formdb(["--db", target, "db", "restore", str(copy), "--yes"])
    assert back.exit_code == 0, back.stderr
    assert dump_database(target) == dump_database(seeded_sqlite_url)
    refused = run_formdb(["--db", seeded_sqlite_url, "db", "backup", str(copy)])
    assert refused.exit_code == 2 and "already exists" in refused.stderr


def test_damaged_archive_restores_nothing(library_url: str, tmp_path: Path) -> None:
    archive = tmp_path / "broken.zip"
    assert run_formdb(["--db", library_url, "db", "backup", str(archive)]).exit_code == 0
    with zipfile.ZipFile(archive, "a") as z:  # a later copy of one table, cut short
        z.writestr("tables/sources.jsonl", '{"key": "x", "citation": "y", "evid')
    with _empty_target(library_url, tmp_path) as target:
        engine = make_engine(target)
        engine.dispose()
        result = run_formdb(["--db", target, "db", "restore", str(archive), "--yes"])
        assert result.exit_code == 2
        assert result.stderr.startswith("Error: ") and "Traceback" not in result.stderr
        assert _tables(target) == set()  # not even the schema stayed behind
    garbage = tmp_path / "garbage.zip"
    garbage.write_bytes(b"PK\x03\x04 not really")
    bad = run_formdb(["--db", library_url, "db", "restore", str(garbage), "--yes"])
    assert bad.exit_code == 2 and "Traceback" not in bad.stderr
