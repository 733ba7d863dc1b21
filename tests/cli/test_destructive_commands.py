"""Commands that destroy or rewrite: db downgrade, db restore and db upgrade, as issue 13's
attacks ran them. On SQLite (identity: the operating-system account, another one simulated
with tests.helpers.run_as); the PostgreSQL login variants are tests/store/test_logins.py.

- `formdb --user rita db downgrade base` by a user without a role dropped every table: now
  only an admin may, after seeing the plan, with --yes;
- downgrading below the audit revision, editing the log with plain SQL and upgrading again
  laundered the edit: the downgrade is refused while sealed rows exist (unless the admin asks
  for it and a backup is written first), and an upgrade verifies the chains first;
- a restore takes a broken or forged archive only when told to, and only from an admin."""

from __future__ import annotations

import hashlib
import json
import zipfile
from pathlib import Path

import pytest
from sqlalchemy import text

from formdb.services.admin.database import history
from formdb.store.db import head_revision, make_engine
from tests.helpers import dump_database, forge_logged_user, library_state, run_as

AUDIT_REVISION = "0011_review_runs"  # adds the seals (prev_hash, row_hash) and review records
BELOW_AUDIT = "0010_mixture_constituents"


@pytest.fixture
def library(seeded_sqlite_url: str) -> str:
    added = run_as("boss", ["--db", seeded_sqlite_url, "user", "add", "boss", "--role", "admin",
                            "--yes"])
    assert added.exit_code == 0, added.stderr
    return seeded_sqlite_url


def _sql(url: str, statement: str) -> None:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            conn.execute(text(statement))
    finally:
        engine.dispose()


def _rows(url: str, statement: str) -> list[tuple[object, ...]]:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return [tuple(r) for r in conn.execute(text(statement))]
    finally:
        engine.dispose()


def test_a_user_without_the_admin_role_cannot_downgrade(library: str) -> None:
    before = dump_database(library, exclude_columns=("at",))
    refused = run_as("rita", ["--db", library, "db", "downgrade", "base", "--yes"])
    assert refused.exit_code == 2
    assert refused.stderr == ("Error: rita may not downgrade the schema: that needs the role "
                              "admin. Next: ask an admin: formdb user grant rita admin --yes.\n")
    after = dump_database(library, exclude_columns=("at",))
    assert after.count("\n") == before.count("\n") + 1  # the refusal row, nothing else
    assert "'refused'" in after


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_downgrade_below_the_audit_revision_is_refused_while_sealed_rows_exist(
        library: str, tmp_path: Path) -> None:
    before = library_state(library)
    for extra in ([], ["--discard-sealed-history"]):
        refused = run_as("boss", ["--db", library, "db", "downgrade", BELOW_AUDIT, "--yes",
                                  *extra])
        assert refused.exit_code == 2, refused.stdout
        assert "would destroy" in refused.stderr and "sealed rows of change_log" in \
            refused.stderr and "refused while sealed audit records exist" in refused.stderr
        assert len(refused.stderr.strip().splitlines()) == 1
    assert library_state(library) == before
    backup = tmp_path / "before-downgrade.zip"
    plan = run_as("boss", ["--db", library, "db", "downgrade", BELOW_AUDIT,
                           "--discard-sealed-history", "--backup", str(backup)])
    assert plan.exit_code == 2 and "discard" in plan.stdout and "remove table review_runs" \
        in plan.stdout
    assert not backup.exists() and library_state(library) == before
    done = run_as("boss", ["--db", library, "db", "downgrade", BELOW_AUDIT,
                           "--discard-sealed-history", "--backup", str(backup), "--yes"])
    assert done.exit_code == 0, done.stderr
    assert zipfile.is_zipfile(backup)  # written first, with every sealed row
    with zipfile.ZipFile(backup) as archive:
        rows = archive.read("tables/change_log.jsonl").decode().splitlines()
    assert rows and all(json.loads(r)["row_hash"] for r in rows)
    # the discarded history leaves a trace: who, what and the backup's digest, in the log
    # (unsealed at this revision), sealed by the next upgrade and kept from then on
    digest = hashlib.sha256(backup.read_bytes()).hexdigest()
    trace = ("SELECT \"user\", reason FROM change_log WHERE entity = 'database' AND "
             "action = 'discard'")
    [(who, reason)] = _rows(library, trace)
    assert who == "boss" and f"sha256 {digest}" in str(reason)
    assert "sealed rows of change_log" in str(reason)
    up = run_as("boss", ["--db", library, "db", "upgrade"])
    assert up.exit_code == 0, up.stderr
    assert _rows(library, trace) == [(who, reason)]
    verified = run_as("boss", ["--db", library, "audit", "verify"])
    assert verified.exit_code == 0, verified.stdout + verified.stderr


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_an_upgrade_stops_on_a_broken_chain_instead_of_sealing_it(library: str) -> None:
    """The laundering path: step down (keeping the seals), rewrite a log row with plain SQL,
    step up. The upgrade verifies first and changes nothing."""
    head = head_revision()
    previous = next(r.down_revision for r in history(None) if r.revision == head)
    assert previous is not None and previous >= AUDIT_REVISION
    down = run_as("boss", ["--db", library, "db", "downgrade", previous, "--yes"])
    assert down.exit_code == 0, down.stderr
    _sql(library, "UPDATE change_log SET reason = 'rewritten' WHERE id = 3")
    before = dump_database(library)
    up = run_as("boss", ["--db", library, "db", "upgrade"])
    assert up.exit_code == 2
    assert "the audit trail" in up.stderr and "is broken (row 3 was altered" in up.stderr
    assert "the upgrade stopped" in up.stderr
    assert dump_database(library) == before
    assert head not in before.split("== alembic_version")[1].splitlines()[1]
    init = run_as("boss", ["--db", library, "init"])
    assert init.exit_code == 2 and "is broken" in init.stderr


def _target(tmp_path: Path) -> str:
    return f"sqlite:///{tmp_path / 'restored.sqlite'}"


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_restore_shows_its_plan_and_needs_yes(library: str, tmp_path: Path) -> None:
    archive = tmp_path / "library.zip"
    assert run_as("boss", ["--db", library, "db", "backup", str(archive)]).exit_code == 0
    target = _target(tmp_path)
    shown = run_as("boss", ["--db", target, "db", "restore", str(archive)])
    assert shown.exit_code == 2, shown.stderr
    assert "audit chains verified: intact" in shown.stdout
    assert "Nothing was changed. Rerun with --yes" in shown.stdout
    engine = make_engine(target)
    try:
        with engine.connect() as conn:  # rolled back: not even the schema stayed
            assert conn.execute(text("SELECT count(*) FROM sqlite_master WHERE type = 'table'")
                                ).scalar_one() == 0
    finally:
        engine.dispose()
    stranger = run_as("rita", ["--db", target, "db", "restore", str(archive), "--yes"])
    assert stranger.exit_code == 2
    assert stranger.stderr.startswith("Error: rita may not restore a backup: that needs the "
                                      "role admin")
    done = run_as("boss", ["--db", target, "db", "restore", str(archive), "--yes"])
    assert done.exit_code == 0, done.stderr
    assert dump_database(target) == dump_database(library)


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_a_forged_archive_is_refused_unless_told(library: str, tmp_path: Path) -> None:
    archive = tmp_path / "library.zip"
    assert run_as("boss", ["--db", library, "db", "backup", str(archive)]).exit_code == 0
    forged = tmp_path / "forged.zip"
    forge_logged_user(archive, forged)
    target = _target(tmp_path)
    refused = run_as("boss", ["--db", target, "db", "restore", str(forged), "--yes"])
    assert refused.exit_code == 2
    assert refused.stderr.startswith(f"Error: {forged}: the audit trail in the backup is broken "
                                     "or forged: change_log: row 2 was altered")
    assert "Traceback" not in refused.stderr
    told = run_as("boss", ["--db", target, "db", "restore", str(forged), "--yes",
                           "--accept-broken-chains"])
    assert told.exit_code == 0, told.stderr
    assert "audit chains broken, restored as they are: change_log: row 2" in told.stdout
