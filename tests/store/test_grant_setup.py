"""``formdb db grant-setup`` on the real PostgreSQL server: with real logins, a reviewer's
login cannot update ingredients, an editor's can but cannot write users or formulas; no login
inserts into the change log or the review records directly. The
roles are created with a prefix private to the test and dropped afterwards."""

from __future__ import annotations

from collections.abc import Iterator
from uuid import uuid4

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import ProgrammingError

from tests.helpers import drop_roles, run_formdb

pytestmark = [pytest.mark.slow, pytest.mark.postgres]


@pytest.fixture
def prefix(pg_url: str) -> Iterator[str]:
    name = f"fdbt_{uuid4().hex[:8]}"
    yield name
    drop_roles(pg_url, name)


def _login(pg_url: str, prefix: str, duty: str) -> str:
    login = f"{prefix}_{duty}_login"
    admin = create_engine(pg_url, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            conn.execute(text(f'CREATE ROLE "{login}" LOGIN'))
            conn.execute(text(f'GRANT "{prefix}_{duty}" TO "{login}"'))
    finally:
        admin.dispose()
    return make_url(pg_url).set(username=login).render_as_string(hide_password=False)


def _try(url: str, sql: str) -> bool:
    engine = create_engine(url)
    try:
        with engine.begin() as conn:
            conn.execute(text(sql))
        return True
    except ProgrammingError as exc:
        assert "permission denied" in str(exc)
        return False
    finally:
        engine.dispose()


def test_database_roles_mirror_duties(pg_url: str, prefix: str) -> None:
    made = run_formdb(["--db", pg_url, "db", "grant-setup", "--prefix", prefix])
    assert made.exit_code == 0, made.stderr
    engine = create_engine(pg_url)
    with engine.begin() as conn:
        conn.execute(text("INSERT INTO sources (key, citation, evidence) VALUES "
                          "('larkspur-notebook', 'Larkspur notebook (invented)', 'measured')"))
    engine.dispose()
    update = "UPDATE sources SET note = 'x' WHERE key = 'larkspur-notebook'"
    reviewer = _login(pg_url, prefix, "reviewer")
    editor = _login(pg_url, prefix, "editor")
    assert _try(reviewer, "SELECT count(*) FROM ingredients")
    assert not _try(reviewer, update)
    assert not _try(reviewer, "UPDATE ingredients SET retired = true")
    assert _try(editor, update)
    # issue 13: writers lost direct INSERT on the log (rows arrive through formdb_append)
    assert not _try(editor, "INSERT INTO change_log (at, \"user\", entity, entity_key, action, "
                            "form, payload) VALUES (now(), 'ed', 'ingredient', 'x', 'edit', 2, "
                            "'{}')")
    assert not _try(editor, "DELETE FROM change_log")  # history is append-only
    assert not _try(editor, "INSERT INTO user_roles (user_id, role) VALUES (1, 'admin')")
    assert not _try(editor, "UPDATE formulas SET name = 'x'")
    # sign-offs are the reviewer's: a reviewer may file a run and sign it, an editor may not sign
    run = ("INSERT INTO review_runs (run_key, run_hash, formula_name, formula_source, "
           "formula_hash, formula_text, library_hash, records_json, profile_name, "
           "profile_version, formdb_version, created_at, created_by, findings_json, result_json) "
           "VALUES ('{k}', '{k}', 'f', 'f.toml', 'h', 't', 'h', '[]', 'strict', '1', '0', now(), "
           "'rv', '[]', '{{}}')")
    sign = ("INSERT INTO review_signatures (run_id, run_hash, signer, signed_by, meaning, "
            "signed_at) SELECT id, run_hash, 'R. Reviewer', '{who}', 'approved', now() "
            "FROM review_runs")
    # review records too: no login inserts them directly any more (tests/store/test_logins.py
    # files and signs through the server function)
    assert not _try(reviewer, run.format(k="aaaaaaaaaaaa"))
    assert not _try(reviewer, sign.format(who="rv"))
    assert not _try(editor, run.format(k="bbbbbbbbbbbb"))
    assert not _try(editor, sign.format(who="ed"))


def test_grant_setup_on_sqlite_is_one_clear_line(sqlite_url: str) -> None:
    result = run_formdb(["--db", sqlite_url, "db", "grant-setup"])
    assert result.exit_code == 2 and "PostgreSQL only" in result.stderr
