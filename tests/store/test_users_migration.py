"""Migration 0009 (users and roles, with its data migration) from every earlier revision to head
and back, with the data in place, on SQLite and PostgreSQL."""

from __future__ import annotations

from datetime import UTC, datetime

import pytest
from alembic.script import ScriptDirectory
from sqlalchemy import DateTime, String, column, insert, select, table, text

from formdb.services.admin.access import add_user, is_open, list_users
from formdb.store.db import alembic_config, downgrade, make_engine, unit_of_work, upgrade
from tests.helpers import library_state

pytestmark = pytest.mark.slow  # left out of the fast lane

REVISION = "0009_users_roles"
AT = datetime(2026, 3, 2, 9, 30, tzinfo=UTC)


def _earlier() -> list[str]:
    script = ScriptDirectory.from_config(alembic_config())
    chain = [r.revision for r in reversed(list(script.walk_revisions()))]
    return chain[:chain.index(REVISION)]


def _history(engine) -> None:  # type: ignore[no-untyped-def]
    log = table("change_log", column("at", DateTime(timezone=True)),
                column("user", String), column("entity", String), column("entity_key", String),
                column("action", String), column("field", String), column("new_value", String))
    rows = [{"at": AT, "user": who, "entity": "ingredient", "entity_key": "Glycerin",
             "action": "edit", "field": "hlb", "new_value": str(i)}
            for i, who in enumerate(["larkspur-ben", "larkspur-ana", "larkspur-ben"], start=1)]
    with engine.begin() as conn:
        conn.execute(insert(log), rows)


def _revision(engine) -> str | None:  # type: ignore[no-untyped-def]
    with engine.connect() as conn:
        return conn.execute(text("SELECT version_num FROM alembic_version")).scalar()


def test_users_come_from_the_change_log_up_and_down(empty_library_url: str) -> None:
    url = empty_library_url
    engine = make_engine(url)
    try:
        for earlier in _earlier():
            downgrade(engine, "base")
            upgrade(engine, earlier)
            _history(engine)
            before = library_state(url)

            upgrade(engine, "head")
            with unit_of_work(engine) as session:
                users = [(u.name, u.roles) for u in list_users(session)]
                closed = not is_open(session)
            authors = ("admin", "editor", "formulator")
            assert users == [("larkspur-ana", authors), ("larkspur-ben", authors)], earlier
            assert closed  # the authors are admins: the library is no longer open

            downgrade(engine, earlier)
            assert _revision(engine) == earlier
            assert library_state(url) == before, earlier

            upgrade(engine, "head")  # up again: the same users, rebuilt from the log
            with unit_of_work(engine) as session:
                assert [(u.name, u.roles) for u in list_users(session)] == users
                # the id counter carries on after the migrated users
                add_user(session, "larkspur-cy", ["reviewer"], actor="larkspur-ana",
                         server_login=False)
    finally:
        engine.dispose()


def test_an_empty_library_stays_open(empty_library_url: str) -> None:
    engine = make_engine(empty_library_url)
    try:
        upgrade(engine, "head")
        with unit_of_work(engine) as session:
            assert is_open(session) and list_users(session) == []
            assert session.execute(select(text("1"))).scalar() == 1
    finally:
        engine.dispose()
