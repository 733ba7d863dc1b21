"""Roles as data: open mode until the first admin, then editors change the library, formulators
store formulas, admins manage users; a refused action is one clear line, logged, and changes
nothing else. The services on both backends (on PostgreSQL without server logins here; those
are tests/store/test_logins.py); the command line on SQLite, where the identity is the
operating-system account (another account is simulated with tests.helpers.run_as)."""

from __future__ import annotations

from pathlib import Path

import pytest
from sqlalchemy import select

from formdb.errors import Forbidden
from formdb.schemas.admin import Action
from formdb.schemas.change_log import read_payload
from formdb.services.admin.access import add_user, grant, is_open, list_users, require
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import ChangeLogEntry
from tests.fixtures.tables.library_setup import build_library
from tests.helpers import dump_database, run_as

EDIT = ["ingredient", "edit", "Polysorbate 80", "--set", "hlb=14.9", "--source",
        "rule-of-thumb", "--reason", "access test (made-up value)"]


@pytest.fixture
def library(library_url: str) -> str:
    return build_library(library_url)


@pytest.fixture
def sqlite_library(sqlite_url: str) -> str:
    return build_library(sqlite_url)


def _as(url: str, user: str, *args: str):  # type: ignore[no-untyped-def]
    return run_as(user, ["--db", url, *args])


def _refusals(url: str) -> list[ChangeLogEntry]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return list(session.scalars(select(ChangeLogEntry).where(
                ChangeLogEntry.action == "refused")))
    finally:
        engine.dispose()


def test_open_mode_until_the_first_admin(library: str) -> None:
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            assert is_open(session)
            require(session, "anyone", Action.SIGN_RUNS)  # open: allowed, nothing logged
            add_user(session, "bo", ["formulator"], actor="anyone", server_login=False)
            assert is_open(session)  # users without an admin keep it open
            add_user(session, "ada", ["admin", "editor"], actor="anyone", server_login=False)
            assert not is_open(session)
            assert [(u.name, u.roles) for u in list_users(session)] == [
                ("ada", ("admin", "editor")), ("bo", ("formulator",))]
    finally:
        engine.dispose()
    assert _refusals(library) == []


def test_roles_decide_and_refusals_are_logged(sqlite_library: str) -> None:
    library = sqlite_library
    assert _as(library, "ada", "user", "add", "ada", "--role", "admin",
               "--role", "editor", "--yes").exit_code == 0
    assert _as(library, "ada", "user", "add", "bo", "--role", "formulator",
               "--yes").exit_code == 0
    before = dump_database(library)

    refused = _as(library, "bo", *EDIT)
    assert refused.exit_code == 2 and "Traceback" not in refused.stderr
    assert refused.stderr.startswith("Error: bo may not change the library: that needs the "
                                     "role editor.")
    assert "formdb user grant bo editor" in refused.stderr
    no_admin = _as(library, "bo", "user", "grant", "bo", "editor", "--yes")
    assert no_admin.exit_code == 2 and "may not manage users" in no_admin.stderr
    stranger = _as(library, "eve", *EDIT)
    assert stranger.exit_code == 2 and "eve may not change the library" in stranger.stderr

    logged = _refusals(library)
    assert [(e.user, read_payload(e.payload).attempted) for e in logged] == [
        ("bo", "change the library"), ("bo", "manage users"), ("eve", "change the library")]
    # apart from the three refusal rows the library is exactly as it was
    assert dump_database(library, exclude_columns=()).count("refused") == 3
    assert _strip_refusals(dump_database(library)) == _strip_refusals(before)

    assert _as(library, "ada", "user", "grant", "bo", "editor", "--yes").exit_code == 0
    assert _as(library, "bo", *EDIT).exit_code == 0
    listing = _as(library, "bo", "user", "list")
    assert "bo  editor, formulator" in listing.stdout and "Open mode" not in listing.stdout


def _strip_refusals(dump: str) -> str:
    return "\n".join(line for line in dump.splitlines() if "'refused'" not in line)


def test_formulators_store_formulas(sqlite_library: str, tmp_path: Path) -> None:
    library = sqlite_library
    formula = tmp_path / "access-test.toml"
    formula.write_text('name = "Larkspur access test"\ncategory = "leave-on"\n\n'
                       '[[ingredients]]\ninci = "Water"\npercent = 95\n\n'
                       '[[ingredients]]\ninci = "Glycerin"\npercent = 5\n', encoding="utf-8")
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            add_user(session, "ada", ["admin"], actor="ada")
            add_user(session, "cy", ["editor"], actor="ada")
    finally:
        engine.dispose()
    refused = _as(library, "cy", "formula", "import", str(formula))
    assert refused.exit_code == 2 and "cy may not store formulas" in refused.stderr
    with pytest.raises(Forbidden):
        engine = make_engine(library)
        try:
            with unit_of_work(engine) as session:
                grant(session, "cy", "formulator", actor="cy")
        finally:
            engine.dispose()
    assert _as(library, "ada", "user", "grant", "cy", "formulator", "--yes").exit_code == 0
    stored = _as(library, "cy", "formula", "import", str(formula))
    assert stored.exit_code == 0, stored.stderr


def test_bad_role_and_duplicate_user_are_one_line(sqlite_library: str) -> None:
    library = sqlite_library
    bad = _as(library, "ada", "user", "add", "ada", "--role", "boss")
    assert bad.exit_code == 2 and "'boss' is not a role" in bad.stderr
    assert _as(library, "ada", "user", "add", "ada", "--role", "admin", "--yes").exit_code == 0
    again = _as(library, "ada", "user", "add", "ada", "--yes")
    assert again.exit_code == 2 and "already exists" in again.stderr
