"""Issue 13's attacks rerun on a real PostgreSQL server with real login roles, one per duty
(created by `formdb user add`, members of the `db grant-setup` group roles). Logins, group
roles and the test's prefix are private to each test and dropped afterwards; the test server
trusts local connections, so a URL naming a login logs in as it (SCRAM and certificates are
the server's business: see the README's team section)."""

from __future__ import annotations

import json
import zipfile
from collections.abc import Iterator
from pathlib import Path
from uuid import uuid4

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError

from tests.fixtures.tables.library_setup import build_library
from tests.helpers import (
    drop_roles,
    dump_database,
    forge_logged_user,
    fresh_pg_schema,
    library_state,
    run_formdb,
)
from tests.store.edit_workers import edit_workers_context, first_add

pytestmark = [pytest.mark.slow, pytest.mark.postgres]

EDIT = ["ingredient", "edit", "Polysorbate 80", "--set", "hlb=14.9", "--source",
        "rule-of-thumb", "--reason", "login test (made-up value)"]


class Team:
    """A library with grant-setup roles and one login per duty, made through the CLI."""

    def __init__(self, url: str, prefix: str) -> None:
        self.url, self.prefix = url, prefix

    def login(self, who: str) -> str:
        return f"{self.prefix}_{who}"

    def as_(self, who: str) -> str:
        return make_url(self.url).set(username=self.login(who)).render_as_string(
            hide_password=False)

    def formdb(self, who: str, *args: str):  # type: ignore[no-untyped-def]
        return run_formdb(["--db", self.as_(who), *args])

    def sql(self, who: str, statement: str, **params: object) -> None:
        engine = create_engine(self.as_(who))
        try:
            with engine.begin() as conn:
                conn.execute(text(statement), params)
        finally:
            engine.dispose()

    def refused(self, who: str, statement: str, **params: object) -> str:
        """The server's refusal of ``statement`` by ``who`` (the test fails if it runs)."""
        try:
            self.sql(who, statement, **params)
        except DBAPIError as exc:
            return str(exc.orig)
        raise AssertionError(f"{who} was allowed: {statement}")


@pytest.fixture
def team(pg_url: str) -> Iterator[Team]:
    prefix = f"fdbl_{uuid4().hex[:8]}"
    url = build_library(pg_url)
    made = run_formdb(["--db", url, "db", "grant-setup", "--prefix", prefix])
    assert made.exit_code == 0, made.stderr
    t = Team(url, prefix)
    try:
        for who, role in (("boss", "admin"), ("ed", "editor"), ("fay", "formulator"),
                          ("rita", "reviewer")):
            acting = url if who == "boss" else t.as_("boss")  # the first admin, then boss
            added = run_formdb(["--db", acting, "user", "add", t.login(who), "--role", role,
                                "--prefix", prefix, "--yes"])
            assert added.exit_code == 0, added.stderr
        yield t
    finally:
        drop_roles(pg_url, prefix)


def _rows(url: str, sql: str) -> list[tuple[object, ...]]:
    engine = create_engine(url)
    try:
        with engine.connect() as conn:
            return [tuple(r) for r in conn.execute(text(sql))]
    finally:
        engine.dispose()


def test_user_add_makes_a_login_with_its_duty_and_the_login_is_recorded(team: Team) -> None:
    members = _rows(team.url, f"""SELECT m.rolname, g.rolname FROM pg_auth_members a
        JOIN pg_roles m ON m.oid = a.member JOIN pg_roles g ON g.oid = a.roleid
        WHERE m.rolname LIKE '{team.prefix}\\_%' ORDER BY 1, 2""")
    assert (team.login("ed"), f"{team.prefix}_editor") in members
    assert (team.login("rita"), f"{team.prefix}_reviewer") in members
    assert _rows(team.url, f"SELECT rolcanlogin, rolcreaterole FROM pg_roles WHERE rolname = "
                           f"'{team.login('boss')}'") == [(True, False)]
    edited = team.formdb("ed", *EDIT)
    assert edited.exit_code == 0, edited.stderr
    assert (team.login("ed"),) in _rows(
        team.url, "SELECT \"user\" FROM change_log WHERE entity = 'ingredient' AND action = "
                  "'edit'")


def test_a_claimed_name_is_refused_and_a_non_admin_cannot_add_users(team: Team) -> None:
    before = dump_database(team.url, exclude_columns=("at",))
    claimed = team.formdb("fay", "--user", team.login("boss"), "user", "add", "mallory",
                          "--role", "admin", "--prefix", team.prefix, "--yes")
    assert claimed.exit_code == 2
    assert claimed.stderr.startswith(f"Error: you are {team.login('fay')} (the database "
                                     f"login), not {team.login('boss')}:")
    no_admin = team.formdb("fay", "user", "add", f"{team.prefix}_mallory", "--role", "admin",
                           "--prefix", team.prefix, "--yes")
    assert no_admin.exit_code == 2
    assert f"{team.login('fay')} may not manage users: that needs the role admin" in \
        no_admin.stderr
    # nor behind formdb's back: the login may not create roles on the server
    assert "permission denied" in team.refused("fay", f'CREATE ROLE "{team.prefix}_m2" LOGIN')
    after = dump_database(team.url, exclude_columns=("at",))
    assert after.replace("'refused'", "").count("\n") == before.count("\n") + 1
    assert not _rows(team.url, f"SELECT 1 FROM pg_roles WHERE rolname LIKE "
                               f"'{team.prefix}\\_m%'")


def test_nobody_writes_the_log_or_review_records_in_another_name(team: Team) -> None:
    """Issue 13: a formulator login added a correctly hashed log row naming another user; a
    reviewer login inserted an 'approved by Dr. Head of QA' signature with plain SQL."""
    insert_log = ("INSERT INTO change_log (id, at, \"user\", entity, entity_key, action, "
                  "form, payload, reason) VALUES (9999, now(), :named, 'ingredient', 'Glycerin', "
                  "'edit', 2, '{}', 'forged')")
    assert "permission denied" in team.refused("fay", insert_log, named=team.login("boss"))
    forged = json.dumps([{"id": 9999, "at": "2026-12-04T10:00:00+00:00",
                          "user": team.login("boss"), "entity": "ingredient",
                          "entity_key": "Glycerin", "action": "edit", "reason": "forged"}])
    said = team.refused("fay", "SELECT formdb_append('change_log', CAST(:r AS jsonb))", r=forged)
    assert f"must name the login that writes it ({team.login('fay')})" in said
    # a forged sign-off by plain SQL, then through the server function
    run_id = 1
    sign_sql = ("INSERT INTO review_signatures (id, run_id, run_hash, signer, signed_by, "
                "meaning, signed_at) VALUES (9999, :run, 'h', 'Dr. Head of QA', :named, "
                "'approved', now())")
    assert "permission denied" in team.refused("rita", sign_sql, run=run_id,
                                               named=team.login("rita"))
    signature = json.dumps([{"id": 9999, "run_id": run_id, "run_hash": "h",
                             "signer": "Dr. Head of QA", "signed_by": "head.of.qa",
                             "meaning": "approved", "signed_at": "2026-12-04T10:00:00+00:00"}])
    said = team.refused("rita", "SELECT formdb_append('review_signatures', CAST(:r AS jsonb))",
                        r=signature)
    assert "must name the login" in said
    said = team.refused("ed", "SELECT formdb_append('review_signatures', CAST(:r AS jsonb))",
                        r=signature)
    assert "signing a run needs the role reviewer" in said
    assert _rows(team.url, "SELECT count(*) FROM review_signatures") == [(0,)]


def test_plain_sql_changes_are_logged_by_the_server_with_the_login(team: Team) -> None:
    """Issue 13: an editor login changed ingredient values with plain SQL, and nothing logged
    it. The server's statement triggers record it with session_user."""
    team.sql("ed", "UPDATE property_values SET value_num = 19 WHERE property = 'hlb'")
    logged = _rows(team.url, "SELECT login, operation, old_rows, new_rows FROM "
                             "server_change_log WHERE table_name = 'property_values' "
                             "AND operation = 'update'")
    assert len(logged) == 1
    login, _op, old, new = logged[0]
    assert login == team.login("ed")
    assert all(r["value_num"] == 19 for r in json.loads(str(new)))
    assert all(r["value_num"] != 19 for r in json.loads(str(old)))
    listed = team.formdb("boss", "audit", "changes", "--table", "property_values")
    assert listed.exit_code == 0, listed.stderr
    assert f"{team.login('ed')}" in listed.stdout and "update property_values" in listed.stdout
    as_json = json.loads(team.formdb("boss", "audit", "changes", "--login", team.login("ed"),
                                     "--format", "json").stdout)
    assert as_json[0]["operation"] == "update" and as_json[0]["new_rows"][0]["value_num"] == 19
    # formdb's own writes are recorded by the server too, under the login
    assert team.formdb("ed", *EDIT).exit_code == 0
    assert (team.login("ed"),) in _rows(
        team.url, "SELECT DISTINCT login FROM server_change_log WHERE table_name = "
                  "'ingredients'")
    # and nobody but the owner writes the server's record
    assert "permission denied" in team.refused("ed", "DELETE FROM server_change_log")
    assert "permission denied" in team.refused(
        "boss", "INSERT INTO server_change_log (at, login, table_name, operation) VALUES "
                "(now(), 'x', 'y', 'insert')")


def test_a_server_refusal_is_one_line_naming_the_role(pg_url: str) -> None:
    """In an open library (no formdb admin yet) formdb lets everyone act, and the server's
    grants decide: its privilege error is one line naming the duty, exit 2, no SQL."""
    prefix = f"fdbl_{uuid4().hex[:8]}"
    url = build_library(pg_url)
    try:
        assert run_formdb(["--db", url, "db", "grant-setup", "--prefix", prefix]).exit_code == 0
        login = f"{prefix}_stranger"
        admin = create_engine(url, isolation_level="AUTOCOMMIT")
        with admin.connect() as conn:
            conn.execute(text(f'CREATE ROLE "{login}" LOGIN IN ROLE "{prefix}_reviewer"'))
        admin.dispose()
        as_login = make_url(url).set(username=login).render_as_string(hide_password=False)
        refused = run_formdb(["--db", as_login, *EDIT])
        assert refused.exit_code == 2
        lines = refused.stderr.strip().splitlines()
        assert len(lines) == 1, refused.stderr
        assert lines[0].startswith("Error: the database refused your login permission on "
                                   "table "), lines[0]
        assert "that needs the role editor" in lines[0]
        for leak in ("UPDATE", "INSERT", "SELECT", "Polysorbate", "internal problem"):
            assert leak not in refused.stderr
    finally:
        drop_roles(pg_url, prefix)


def test_deactivated_login_cannot_log_in_and_stays_in_history(team: Team) -> None:
    assert team.formdb("ed", *EDIT).exit_code == 0
    done = team.formdb("boss", "user", "deactivate", team.login("ed"), "--prefix", team.prefix,
                       "--yes")
    assert done.exit_code == 0, done.stderr
    assert _rows(team.url, f"SELECT rolcanlogin FROM pg_roles WHERE rolname = "
                           f"'{team.login('ed')}'") == [(False,)]
    gone = team.formdb("ed", "ingredient", "list")
    assert gone.exit_code == 2 and "cannot open database" in gone.stderr
    assert (team.login("ed"),) in _rows(team.url, "SELECT DISTINCT \"user\" FROM change_log")
    revoked = team.formdb("boss", "user", "revoke", team.login("rita"), "reviewer",
                          "--prefix", team.prefix, "--yes")
    assert revoked.exit_code == 0, revoked.stderr
    assert not _rows(team.url, f"""SELECT 1 FROM pg_auth_members a
        JOIN pg_roles m ON m.oid = a.member JOIN pg_roles g ON g.oid = a.roleid
        WHERE m.rolname = '{team.login('rita')}' AND g.rolname = '{team.prefix}_reviewer'""")


def _owner_sql(team: Team, statement: str) -> None:
    engine = create_engine(team.url, isolation_level="AUTOCOMMIT")
    try:
        with engine.connect() as conn:
            conn.execute(text(statement))
    finally:
        engine.dispose()


def test_an_admin_login_cannot_take_over_another_login(team: Team) -> None:
    """On PostgreSQL 15 a login with CREATEROLE may set any other login's password (and then
    log in as that person), grant itself any role (a reviewer's, or pg_execute_server_program,
    which runs programs on the server) and make logins formdb never hears of, all unrecorded.
    Admin logins hold no CREATEROLE: logins change only through formdb_login, which refuses
    all of that and records what it does with the login that asked."""
    boss, ed = team.login("boss"), team.login("ed")
    assert _rows(team.url, f"SELECT rolcreaterole FROM pg_roles WHERE rolname = '{boss}'") == \
        [(False,)]
    assert "permission denied" in team.refused("boss", f"ALTER ROLE \"{ed}\" PASSWORD 'mine'")
    for role in (f"{team.prefix}_reviewer", "pg_execute_server_program"):
        assert "must have admin option" in team.refused(
            "boss", f'GRANT "{role}" TO "{boss}"')
    assert "permission denied" in team.refused(
        "boss", f'CREATE ROLE "{team.prefix}_ghost" LOGIN IN ROLE "{team.prefix}_editor"')
    owner = make_url(team.url).username
    call = "SELECT formdb_login(:op, :target, :grp, :v)"
    for (op, who, grp, v), said in (
            (("create", ed, None, "SCRAM-SHA-256$4096:x"), "keeps its password"),
            (("grant", boss, "pg_execute_server_program", None), "not one of the duties"),
            (("grant", f"{team.prefix}_editor", f"{team.prefix}_admin", None),
             "is not a person's login"),
            (("enable", owner, None, None), "only the database administrator changes it")):
        assert said in team.refused("boss", call, op=op, target=who, grp=grp, v=v), (op, who)
    assert "managing logins needs the role admin" in team.refused(
        "ed", call, op="grant", target=ed, grp=f"{team.prefix}_admin", v=None)
    # what formdb_login did is recorded by the server with the login that asked
    assert team.formdb("boss", "user", "grant", ed, "formulator", "--prefix", team.prefix,
                       "--yes").exit_code == 0
    logged = _rows(team.url, "SELECT login, operation, new_rows FROM server_change_log "
                             "WHERE table_name = 'logins' ORDER BY id")
    assert (boss, "grant") in [(who, op) for who, op, _n in logged]
    assert json.loads(str(logged[-1][2])) == [
        {"login": ed, "role": f"{team.prefix}_formulator", "password": False}]


def test_grant_setup_takes_createrole_from_admin_logins(team: Team) -> None:
    """A library set up by an earlier formdb gave its admin logins CREATEROLE: grant-setup
    takes it away (except from the login running it, which owns formdb_login) and says so."""
    boss = team.login("boss")
    _owner_sql(team, f'ALTER ROLE "{boss}" CREATEROLE')
    again = run_formdb(["--db", team.url, "db", "grant-setup", "--prefix", team.prefix])
    assert again.exit_code == 0, again.stderr
    assert f"CREATEROLE taken from the admin logins {boss} " in again.stdout
    assert _rows(team.url, f"SELECT rolcreaterole FROM pg_roles WHERE rolname = '{boss}'") == \
        [(False,)]


def test_a_login_without_a_duty_reads_and_is_refused_by_its_role(team: Team) -> None:
    """A user added with no role reads (every login is a member of PREFIX_reader) and a write
    is refused by formdb in one line naming the role it needs, although the server refuses
    such a login even the record of its refusal in the change log."""
    x = team.login("x")
    added = team.formdb("boss", "user", "add", x, "--prefix", team.prefix, "--yes")
    assert added.exit_code == 0, added.stderr
    assert f"make {x} a member of {team.prefix}_reader" in added.stdout
    listed = team.formdb("x", "ingredient", "list")
    assert listed.exit_code == 0 and "Polysorbate 80" in listed.stdout, listed.stderr
    before = library_state(team.url, exclude_columns=("at",))
    for args, said in ((EDIT, "may not change the library: that needs the role editor"),
                       (["db", "downgrade", "base", "--yes"],
                        "may not downgrade the schema: that needs the role admin"),
                       (["init", "--seed", "--yes"],
                        "may not seed an existing library: that needs the role admin")):
        refused = team.formdb("x", *args)
        assert refused.exit_code == 2, refused.stdout
        assert refused.stderr.startswith(f"Error: {x} {said}."), refused.stderr
        assert len(refused.stderr.strip().splitlines()) == 1
    assert library_state(team.url, exclude_columns=("at",)) == before


def test_a_login_formdb_does_not_know_is_told_it_has_no_role(team: Team) -> None:
    """A login the database administrator made, in no group role, cannot read the tables:
    formdb says so instead of calling the library empty ("run formdb init")."""
    stranger = team.login("stranger")
    _owner_sql(team, f'CREATE ROLE "{stranger}" LOGIN')
    for args in (["ingredient", "list"], EDIT, ["init", "--seed", "--yes"]):
        refused = team.formdb("stranger", *args)
        assert refused.exit_code == 2, refused.stdout
        lines = refused.stderr.strip().splitlines()
        assert len(lines) == 1, refused.stderr
        assert "run `formdb init`" not in lines[0] and "internal problem" not in lines[0]
        assert lines[0].startswith(f"Error: your login {stranger} may not read the library"), \
            lines[0]


def test_a_deadlock_is_a_clean_conflict(team: Team) -> None:
    """Two logins each holding a row the other wants: the server stops one; formdb's message
    for it is a Conflict with no SQL, parameters or server detail (the 6-way race of first
    adds ended once in 300 attempts in such a server error, reported with its text)."""
    import threading

    from formdb.errors import Conflict
    from formdb.store.db import refusal_of

    first, second = create_engine(team.as_("ed")), create_engine(team.as_("ed"))
    barrier = threading.Barrier(2)
    failures: list[BaseException] = []
    rows = ("Polysorbate 80", "Glycerin")

    def work(engine, order) -> None:  # type: ignore[no-untyped-def]
        try:
            with engine.begin() as conn:
                for n, name in enumerate(order):
                    conn.execute(text("UPDATE ingredients SET version = version WHERE id = "
                                      "(SELECT ingredient_id FROM ingredient_names WHERE "
                                      "name = :n)"), {"n": name})
                    if n == 0:
                        barrier.wait(timeout=30)
        except DBAPIError as exc:
            failures.append(exc)

    try:
        threads = [threading.Thread(target=work, args=(first, rows)),
                   threading.Thread(target=work, args=(second, rows[::-1]))]
        for t in threads:
            t.start()
        for t in threads:
            t.join(timeout=60)
    finally:
        first.dispose()
        second.dispose()
    assert len(failures) == 1, failures
    said = refusal_of(failures[0])
    assert isinstance(said, Conflict), failures[0]
    for leak in ("UPDATE", "ingredient", "Process", "DETAIL", "deadlock detected"):
        assert leak not in str(said) and leak not in said.hint, said


def test_only_the_admin_login_downgrades(team: Team) -> None:
    refused = team.formdb("ed", "db", "downgrade", "base", "--yes")
    assert refused.exit_code == 2
    assert f"{team.login('ed')} may not downgrade the schema: that needs the role admin" in \
        refused.stderr


def test_six_concurrent_first_adds_end_in_one_success_and_clean_conflicts(team: Team) -> None:
    """Issue 13: 20 of 108 concurrent first adds of one name ended in an internal error. Six
    processes of their own (tests.store.edit_workers.first_add), released together."""
    ctx = edit_workers_context()
    for round_ in range(3):
        name = f"Larkspur Race Ester {round_}"
        go, done = ctx.Event(), ctx.Queue()
        procs = [ctx.Process(target=first_add, args=(team.as_("ed"), name, go, done))
                 for _ in range(6)]
        for proc in procs:
            proc.start()
        go.set()
        try:
            results = [done.get(timeout=120) for _ in procs]
        finally:
            for proc in procs:
                proc.join(timeout=120)
        assert [proc.exitcode for proc in procs] == [0] * 6
        assert sum(1 for code, _e in results if code == 0) == 1, results
        for code, err in results:
            if code != 0:
                assert code == 2 and "internal problem" not in err, err
                assert len(err.strip().splitlines()) == 1, err
                assert "already" in err or "same record" in err or "same moment" in err, err


def test_a_password_is_stored_as_a_scram_verifier(team: Team) -> None:
    from click.testing import CliRunner

    from formdb.cli.main import main

    login = f"{team.prefix}_pat"
    with CliRunner().isolation(input="correct horse battery staple\n") as (out, err, _):
        try:
            main(["--db", team.as_("boss"), "user", "add", login, "--role", "formulator",
                  "--password-stdin", "--prefix", team.prefix, "--yes"])
        except SystemExit as exc:
            assert exc.code in (0, None), err.getvalue()
        assert "with a SCRAM password" in out.getvalue().decode()
    [(stored,)] = _rows(team.url, f"SELECT rolpassword FROM pg_authid WHERE rolname = '{login}'")
    assert str(stored).startswith("SCRAM-SHA-256$4096:")
    assert "battery" not in str(stored)


def test_seeding_and_claims_on_the_server(team: Team) -> None:
    """Issue 13: `init --seed` by a user without the admin role; FORMDB_USER naming the admin."""
    before = dump_database(team.url, exclude_columns=("at",))
    for who in ("fay", "ed"):
        refused = team.formdb(who, "init", "--seed", "--yes")
        assert refused.exit_code == 2
        assert f"{team.login(who)} may not seed an existing library: that needs the role " \
               "admin" in refused.stderr
    by_env = run_formdb(["--db", team.as_("fay"), "user", "list"],
                        env={"FORMDB_USER": team.login("boss")})
    assert by_env.exit_code == 2 and f"not {team.login('boss')}" in by_env.stderr
    after = dump_database(team.url, exclude_columns=("at",))
    assert after.count("'refused'") == before.count("'refused'") + 2
    # the admin duty alone does not write library tables: the server says which role it needs
    server = team.formdb("boss", "init", "--seed", "--yes")
    assert server.exit_code == 2 and "that needs the role editor" in server.stderr
    assert team.formdb("boss", "user", "grant", team.login("boss"), "editor", "--prefix",
                       team.prefix, "--yes").exit_code == 0
    shown = team.formdb("boss", "init", "--seed")
    assert shown.exit_code == 2 and "would change it" in shown.stdout
    done = team.formdb("boss", "init", "--seed", "--yes")
    assert done.exit_code == 0, done.stderr


def test_a_login_made_by_the_database_administrator_is_adopted(team: Team) -> None:
    """Certificate logins are often made by whoever runs the server: `user add` adopts the
    role that exists instead of failing, and gives it its duty."""
    login = f"{team.prefix}_cert"
    _owner_sql(team, f'CREATE ROLE "{login}" NOLOGIN')  # the server's administrator
    # an admin may not set the password of a login that exists (it would log in as them)
    from click.testing import CliRunner

    from formdb.cli.main import main

    with CliRunner().isolation(input="taken over by the admin\n") as (_out, err, _):
        with pytest.raises(SystemExit) as stopped:
            main(["--db", team.as_("boss"), "user", "add", login, "--role", "reviewer",
                  "--password-stdin", "--prefix", team.prefix, "--yes"])
        said = err.getvalue().decode()
    assert stopped.value.code == 2, said
    assert f"the database login {login} exists and keeps its password" in said
    assert _rows(team.url, f"SELECT rolpassword IS NULL FROM pg_authid WHERE rolname = "
                           f"'{login}'") == [(True,)]
    plan = team.formdb("boss", "user", "add", login, "--role", "reviewer", "--prefix",
                       team.prefix)
    assert plan.exit_code == 2 and f"adopt the existing database login {login}" in plan.stdout
    assert "(no password: log in by certificate" in plan.stdout
    done = team.formdb("boss", "user", "add", login, "--role", "reviewer", "--prefix",
                       team.prefix, "--yes")
    assert done.exit_code == 0, done.stderr
    assert _rows(team.url, f"SELECT rolcanlogin FROM pg_roles WHERE rolname = '{login}'") == \
        [(True,)]


def test_plain_sql_change_shows_in_the_ingredient_history_with_the_login(team: Team) -> None:
    """Done-when of issue 13: a change made around formdb (plain SQL by an editor login) is in
    the record's history, marked as made outside formdb by that login; formdb's own edit (the
    server records it too) is shown once."""
    assert team.formdb("ed", *EDIT).exit_code == 0  # hlb -> 14.9 through formdb
    team.sql("ed", "UPDATE property_values SET value_num = 12.5 WHERE property = 'hlb' AND "
                   "ingredient_id = (SELECT ingredient_id FROM ingredient_names WHERE "
                   "name = 'Polysorbate 80')")
    team.sql("ed", "UPDATE property_values SET note = 'typed by hand' WHERE property = 'hlb' "
                     "AND ingredient_id = (SELECT ingredient_id FROM ingredient_names WHERE "
                     "name = 'Polysorbate 80')")
    shown = team.formdb("boss", "ingredient", "history", "Polysorbate 80")
    assert shown.exit_code == 0, shown.stderr
    ed = team.login("ed")
    outside = [[c.strip() for c in line.split("│")[1:-1]] for line in shown.stdout.splitlines()
               if "│ outside formdb │" in line]
    # who, action, field, old -> new, and the plain mark in the reason column
    assert [(r[1], r[4], r[5], r[6]) for r in outside] == [
        (ed, "hlb", "14.9", "12.5"), (ed, "hlb note", "HPE6 Table IX", "typed by hand")]
    assert all(r[7].startswith("changed outside formdb") for r in outside)
    # formdb's own edit (recorded by the server as well) is shown once, as formdb's entry
    edits = [line for line in shown.stdout.splitlines() if "│ edit " in line]
    assert len(edits) == 1 and ed in edits[0] and "14.9" in edits[0]
    # another record's history holds none of it
    other = team.formdb("boss", "ingredient", "history", "Glycerin")
    assert other.exit_code == 0, other.stderr
    assert "outside formdb" not in other.stdout


def test_plain_sql_change_shows_in_a_source_history_once(team: Team) -> None:
    """The other record histories (here a source) show plain-SQL changes the same way, and a
    formdb edit once."""
    edited = team.formdb("ed", "source", "edit", "hpe6", "--set", "note=checked at the bench",
                         "--reason", "login test")
    assert edited.exit_code == 0, edited.stderr
    team.sql("ed", "UPDATE sources SET page = '123' WHERE key = 'hpe6'")
    shown = team.formdb("boss", "source", "history", "hpe6")
    assert shown.exit_code == 0, shown.stderr
    lines = [[c.strip() for c in line.split("│")[1:-1]] for line in shown.stdout.splitlines()
             if line.startswith("│ 2")]
    outside = [r for r in lines if r[2] == "outside formdb"]
    assert [(r[1], r[3], r[4], r[5]) for r in outside] == [(team.login("ed"), "page", "", "123")]
    assert outside[0][6].startswith("changed outside formdb")
    assert [(r[1], r[3], r[5]) for r in lines if r[2] == "edit"] == [
        (team.login("ed"), "note", "checked at the bench")]


# --- the history-rewriting attacks, as on SQLite (tests/cli/test_destructive_commands.py) ----

BELOW_AUDIT = "0010_mixture_constituents"


@pytest.fixture
def owned_team(pg_url: str) -> Iterator[Team]:
    """A team whose first admin is the tables' owner (the README's set-up: migrations,
    downgrades and restores run as the owner), then one login per duty."""
    prefix = f"fdbl_{uuid4().hex[:8]}"
    url = build_library(pg_url)
    made = run_formdb(["--db", url, "db", "grant-setup", "--prefix", prefix])
    assert made.exit_code == 0, made.stderr
    t = Team(url, prefix)
    try:
        owner = make_url(url).username or ""
        first = run_formdb(["--db", url, "user", "add", owner, "--role", "admin", "--prefix",
                            prefix, "--yes"])
        assert first.exit_code == 0, first.stderr
        for who, role in (("boss", "admin"), ("ed", "editor"), ("fay", "formulator"),
                          ("rita", "reviewer")):
            added = run_formdb(["--db", url, "user", "add", t.login(who), "--role", role,
                                "--prefix", prefix, "--yes"])
            assert added.exit_code == 0, added.stderr
        yield t
    finally:
        drop_roles(pg_url, prefix)


def test_stepping_down_rewriting_the_log_and_up_is_refused_or_caught(owned_team: Team,
                                                                   ) -> None:
    """Issue 13: step down below the audit revision, edit the log with SQL, step up, and the
    upgrade sealed the rewrite. On the server: the downgrade is refused while sealed rows
    exist (to the admin login and to the tables' owner alike), no writer login may touch the
    log, and a rewrite by the owner between a downgrade and an upgrade stops the upgrade."""
    from formdb.services.admin.database import history
    from formdb.store.db import head_revision

    team = owned_team

    before = library_state(team.url)
    for acting in (team.as_("boss"), team.url):
        refused = run_formdb(["--db", acting, "db", "downgrade", BELOW_AUDIT, "--yes",
                              "--discard-sealed-history"])
        assert refused.exit_code == 2, refused.stdout
        assert len(refused.stderr.strip().splitlines()) == 1, refused.stderr
        # the admin login: the server refuses (no DDL rights), said as such, not as a missing
        # duty of whichever table the migration touched first; the owner: formdb's refusal
        expected = (f"your login {team.login('boss')} may not change the schema of "
                    if acting != team.url else "refused while sealed audit records exist")
        assert "needs the role editor" not in refused.stderr
        assert expected in refused.stderr, refused.stderr
    assert library_state(team.url) == before
    # no writer login rewrites a sealed row with plain SQL
    for who in ("ed", "fay", "rita", "boss"):
        assert "permission denied" in team.refused(
            who, "UPDATE change_log SET reason = 'rewritten'")
    # the owner can (the server does not stop it): one step down, rewrite, up again
    head = head_revision()
    previous = next(r.down_revision for r in history(None) if r.revision == head)
    assert previous is not None
    down = run_formdb(["--db", team.url, "db", "downgrade", str(previous), "--yes"])
    assert down.exit_code == 0, down.stderr
    team_owner = create_engine(team.url)
    try:
        with team_owner.begin() as conn:
            row = conn.execute(text("SELECT min(id) FROM change_log")).scalar_one()
            conn.execute(text("UPDATE change_log SET reason = 'rewritten' WHERE id = :i"),
                         {"i": row})
    finally:
        team_owner.dispose()
    stepped_down = library_state(team.url)
    up = run_formdb(["--db", team.url, "db", "upgrade"])
    assert up.exit_code == 2, up.stdout
    assert "is broken" in up.stderr and "the upgrade stopped" in up.stderr, up.stderr
    assert len(up.stderr.strip().splitlines()) == 1
    assert library_state(team.url) == stepped_down  # nothing resealed, still one step down


def test_a_forged_archive_is_refused_on_the_server(owned_team: Team, pg_server: str,
                                                   tmp_path: Path) -> None:
    """Issue 13: `db restore` must verify the chains it restores: a backup whose change log
    names someone else is refused, naming the broken row, and the target is left empty."""
    team = owned_team
    archive = tmp_path / "library.zip"
    made = run_formdb(["--db", team.url, "db", "backup", str(archive)])
    assert made.exit_code == 0, made.stderr
    forged = tmp_path / "forged.zip"
    forge_logged_user(archive, forged)
    with fresh_pg_schema(pg_server) as target:
        before = library_state(target)
        refused = run_formdb(["--db", target, "db", "restore", str(forged), "--yes"])
        assert refused.exit_code == 2, refused.stdout
        assert refused.stderr.startswith(
            f"Error: {forged}: the audit trail in the backup is broken or forged: change_log: "
            "row 2 was altered"), refused.stderr
        assert len(refused.stderr.strip().splitlines()) == 1
        assert library_state(target) == before
        # the genuine archive restores
        done = run_formdb(["--db", target, "db", "restore", str(archive), "--yes"])
        assert done.exit_code == 0, done.stderr
        assert "audit chains verified: intact" in done.stdout


def test_plain_sql_change_of_a_mixture_shows_in_its_history(team: Team) -> None:
    """A mixture's declared share changed with plain SQL shows in `mixture history`."""
    blend = "Larkspur Test Blend"
    assert team.formdb("ed", "ingredient", "add", blend, "--role", "emulsifier").exit_code == 0
    made = team.formdb("ed", "mixture", "set", blend, "--part", "Polysorbate 80=60", "--part",
                       "Glycerin=40", "--source", "rule-of-thumb")
    assert made.exit_code == 0, made.stderr
    team.sql("ed", "UPDATE mixture_constituents SET percent = 55 WHERE percent = 60")
    shown = team.formdb("boss", "mixture", "history", blend)
    assert shown.exit_code == 0, shown.stderr
    lines = [[c.strip() for c in line.split("│")[1:-1]] for line in shown.stdout.splitlines()
             if line.startswith("│ 2")]
    outside = [r for r in lines if r[2] == "outside formdb"]
    assert [(r[1], r[3], r[4], r[5]) for r in outside] == [
        (team.login("ed"), "Polysorbate 80", "60", "55")]
    assert len([r for r in lines if r[2] != "outside formdb"]) == 2  # formdb's own, once


def test_the_owner_may_discard_the_sealed_history_after_a_backup(owned_team: Team,
                                                                 tmp_path: Path) -> None:
    """The explicit way down below the audit revision on the server (the owner, an admin,
    with --discard-sealed-history --backup): the backup is written first, with every sealed
    row, and the identity trigger does not stop the migrations re-expressing the log."""
    team = owned_team
    backup = tmp_path / "before-downgrade.zip"
    done = run_formdb(["--db", team.url, "db", "downgrade", BELOW_AUDIT,
                       "--discard-sealed-history", "--backup", str(backup), "--yes"])
    assert done.exit_code == 0, done.stderr
    with zipfile.ZipFile(backup) as archive:
        rows = archive.read("tables/change_log.jsonl").decode().splitlines()
    assert rows and all(json.loads(r)["row_hash"] for r in rows)
    assert _rows(team.url, "SELECT version_num FROM alembic_version") == [(BELOW_AUDIT,)]
    # the discard is on the log under the owner's login, and stays once upgraded and sealed
    trace = ("SELECT \"user\", reason FROM change_log WHERE entity = 'database' AND "
             "action = 'discard'")
    [(who, reason)] = _rows(team.url, trace)
    assert who == make_url(team.url).username and "sha256 " in str(reason)
    up = run_formdb(["--db", team.url, "db", "upgrade"])
    assert up.exit_code == 0, up.stderr
    assert _rows(team.url, trace) == [(who, reason)]
    verified = run_formdb(["--db", team.url, "audit", "verify"])
    assert verified.exit_code == 0, verified.stdout + verified.stderr
