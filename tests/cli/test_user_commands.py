"""Identity and user administration through the command line, on SQLite (the identity is the
operating-system account; another account is simulated with tests.helpers.run_as).
The attacks of issue 13 rerun here: a typed admin name (--user, FORMDB_USER) is refused; a
user without the admin role cannot add, grant, revoke or deactivate; every change shows its
plan and needs --yes; a deactivated user stays in the history and may no longer act."""

from __future__ import annotations

import pytest
from sqlalchemy import select

from formdb.schemas.change_log import read_payload
from formdb.store.db import make_engine, unit_of_work
from formdb.store.identity import os_account
from formdb.store.models import ChangeLogEntry, User
from tests.fixtures.tables.library_setup import build_library
from tests.helpers import dump_database, library_state, run_as, run_formdb

EDIT = ["ingredient", "edit", "Polysorbate 80", "--set", "hlb=14.9", "--source",
        "rule-of-thumb", "--reason", "roles test (made-up value)"]


@pytest.fixture
def library(sqlite_url: str) -> str:
    url = build_library(sqlite_url)
    assert run_as("boss", ["--db", url, "user", "add", "boss", "--role", "admin",
                           "--yes"]).exit_code == 0
    return url


def _field(payload: str) -> str | None:
    """The field an entry changed (the action a refusal attempted)."""
    read = read_payload(payload)
    return read.attempted or (read.changes[0].field if read.changes else None)


def _log(url: str, entity: str = "user") -> list[tuple[str, str, str, str | None]]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return [(e.user, e.entity_key, e.action, _field(e.payload)) for e in session.scalars(
                select(ChangeLogEntry).where(ChangeLogEntry.entity == entity)
                .order_by(ChangeLogEntry.id))]
    finally:
        engine.dispose()


def test_a_typed_name_is_refused_unless_it_is_you(library: str) -> None:
    """Issue 13: `formdb --user boss user add mallory --role admin` worked for anyone."""
    before = library_state(library)
    claimed = run_as("mallory", ["--db", library, "--user", "boss", "user", "add", "mallory",
                                 "--role", "admin", "--yes"])
    assert claimed.exit_code == 2
    assert claimed.stderr.startswith("Error: you are mallory (the operating-system account), "
                                     "not boss:")
    assert len(claimed.stderr.strip().splitlines()) == 1
    by_env = run_as("mallory", ["--db", library, "user", "add", "mallory", "--role", "admin",
                                "--yes"], env={"FORMDB_USER": "boss"})
    assert by_env.exit_code == 2 and "not boss" in by_env.stderr
    assert library_state(library) == before
    # naming yourself is allowed (a script that always passed --user keeps working)
    me = os_account()
    listed = run_formdb(["--db", library, "--user", me, "user", "list"])
    assert listed.exit_code == 0, listed.stderr


def test_only_an_admin_changes_users_and_every_change_needs_yes(library: str) -> None:
    # mallory (no role) is refused before any plan is shown, and the refusal is logged
    before = library_state(library, exclude_columns=("at",))
    for args in (["user", "add", "mallory", "--role", "admin", "--yes"],
                 ["user", "grant", "boss", "editor", "--yes"],
                 ["user", "revoke", "boss", "admin", "--yes"],
                 ["user", "deactivate", "boss", "--yes"]):
        refused = run_as("mallory", ["--db", library, *args])
        assert refused.exit_code == 2, args
        assert refused.stderr.startswith("Error: mallory may not manage users: that needs the "
                                         "role admin."), refused.stderr
        assert refused.stdout == ""
    refusals = _log(library, "access")
    assert [r[0] for r in refusals] == ["mallory"] * 4

    # the admin without --yes: the plan, exit 2, nothing written
    plan = run_as("boss", ["--db", library, "user", "add", "ed", "--role", "editor"])
    assert plan.exit_code == 2
    assert "Planned, not done yet (add user):" in plan.stdout
    assert "add user ed with roles editor" in plan.stdout
    assert "Rerun with --yes" in plan.stdout and "nothing was changed" in plan.stderr
    assert len(plan.stderr.strip().splitlines()) == 1
    assert "'ed'" not in dump_database(library)
    done = run_as("boss", ["--db", library, "user", "add", "ed", "--role", "editor", "--yes"])
    assert done.exit_code == 0, done.stderr
    assert "Done (add user):" in done.stdout
    assert library_state(library, exclude_columns=("at",)) != before


def test_revoke_and_deactivate_keep_history(library: str) -> None:
    assert run_as("boss", ["--db", library, "user", "add", "ed", "--role", "editor",
                           "--role", "formulator", "--yes"]).exit_code == 0
    assert run_as("ed", ["--db", library, *EDIT]).exit_code == 0

    revoked = run_as("boss", ["--db", library, "user", "revoke", "ed", "editor", "--yes"])
    assert revoked.exit_code == 0, revoked.stderr
    refused = run_as("ed", ["--db", library, *EDIT])
    assert refused.exit_code == 2 and "ed may not change the library" in refused.stderr
    missing = run_as("boss", ["--db", library, "user", "revoke", "ed", "editor", "--yes"])
    assert missing.exit_code == 2 and "does not have the role editor" in missing.stderr

    plan = run_as("boss", ["--db", library, "user", "deactivate", "ed"])
    assert plan.exit_code == 2 and "deactivate ed" in plan.stdout
    gone = run_as("boss", ["--db", library, "user", "deactivate", "ed", "--yes"])
    assert gone.exit_code == 0, gone.stderr
    listing = run_as("boss", ["--db", library, "user", "list"])
    assert "ed  formulator  (inactive)" in listing.stdout
    # the deactivated user stays: its row, its edits on the log, and the grants and revocation
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            ed = session.scalar(select(User).where(User.name == "ed"))
            assert ed is not None and ed.active is False
            edits = session.scalars(select(ChangeLogEntry).where(
                ChangeLogEntry.user == "ed", ChangeLogEntry.entity == "ingredient")).all()
            assert edits, "the deactivated user's edits stay in the history"
    finally:
        engine.dispose()
    assert [(who, key, action) for who, key, action, _f in _log(library)] == [
        ("boss", "boss", "add"), ("boss", "ed", "add"), ("boss", "ed", "revoke"),
        ("boss", "ed", "deactivate")]
    store = run_as("ed", ["--db", library, "user", "list"])
    assert store.exit_code == 0  # reading needs no role
    back = run_as("boss", ["--db", library, "user", "reactivate", "ed", "--yes"])
    assert back.exit_code == 0 and "formulator" in back.stdout


def test_the_last_admin_cannot_be_removed(library: str) -> None:
    for args in (["user", "revoke", "boss", "admin", "--yes"],
                 ["user", "deactivate", "boss", "--yes"]):
        refused = run_as("boss", ["--db", library, *args])
        assert refused.exit_code == 2
        assert "boss is the last active admin" in refused.stderr
    assert run_as("boss", ["--db", library, "user", "add", "ada", "--role", "admin",
                           "--yes"]).exit_code == 0
    assert run_as("boss", ["--db", library, "user", "revoke", "boss", "admin",
                           "--yes"]).exit_code == 0


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_seeding_an_existing_library_needs_the_admin_and_yes(library: str) -> None:
    """Issue 13: `init --seed` by an unknown user put an editor's changes back to the seed."""
    assert run_as("boss", ["--db", library, "user", "add", "ed", "--role", "editor",
                           "--yes"]).exit_code == 0
    assert run_as("ed", ["--db", library, *EDIT]).exit_code == 0
    before = dump_database(library, exclude_columns=("at",))
    for who in ("rita", "ed"):
        refused = run_as(who, ["--db", library, "init", "--seed", "--yes"])
        assert refused.exit_code == 2
        assert refused.stderr.startswith(f"Error: {who} may not seed an existing library: that "
                                         "needs the role admin."), refused.stderr
    shown = run_as("boss", ["--db", library, "init", "--seed"])
    assert shown.exit_code == 2, shown.stderr
    assert "would change it (nothing was changed yet)" in shown.stdout
    assert "Rerun with --yes" in shown.stdout
    after = dump_database(library, exclude_columns=("at",))
    assert after.count("\n") == before.count("\n") + 2  # the two refusals, nothing else
    done = run_as("boss", ["--db", library, "init", "--seed", "--yes"])
    assert done.exit_code == 0, done.stderr
    assert "ingredient Polysorbate 80: hlb kept '14.9' (seed '15')" in done.stdout
    show = run_formdb(["--db", library, "ingredient", "show", "Polysorbate 80"])
    assert "14.9" in show.stdout


def test_the_api_refuses_a_user_who_is_not_you(library: str, tmp_path) -> None:  # type: ignore[no-untyped-def]
    from formdb import api
    from formdb.store.identity import ClaimRefused

    table = tmp_path / "one.csv"
    table.write_text("inci_name,hlb,hlb_source\nLarkspur Api Ester,9,rule-of-thumb\n",
                     encoding="utf-8")
    library_obj = api.open_library(library)
    try:
        with pytest.raises(ClaimRefused, match="not boss"):
            api.import_ingredients(library_obj, table, user="boss")
    finally:
        library_obj.close()


def test_audit_changes_on_sqlite_says_there_is_no_server(library: str) -> None:
    shown = run_formdb(["--db", library, "audit", "changes"])
    assert shown.exit_code == 0 and "there is no server" in shown.stdout
