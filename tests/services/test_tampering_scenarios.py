"""Every way a hostile colleague with write access to the tables tried to alter the review
record, and where formdb shows it: ``review status``, the filed report (``review report``),
``audit verify``, and ``audit verify --anchor`` against an anchor written when the report was
filed. On both backends.

The library: the golden O/W day cream (invented Larkspur Bench Laboratories, bundled seed
library) run by ana under the policy's strict profile and rejected by rita with her enrolled
Ed25519 key; then the vanishing cream run by ana and reviewed by rita (the newest run and
signature). The anchor is written after that. Each scenario copies that library and changes it
with plain SQL as the table owner would, without any signer's private key; "resealed" means the
public hash chain was recomputed from the changed row to the head, as anyone who reads the
(public) canonical form can.

Which checks must catch each scenario is stated per backend; what a backend cannot detect is
stated too (README, "what each backend can detect"), so that a regression either way fails.
"""

from __future__ import annotations

import shutil
import sqlite3
from collections.abc import Callable, Iterator
from contextlib import closing, contextmanager
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import Connection, make_url

from formdb.store.db import make_engine, sqlite_path
from formdb.store.models import Base
from formdb.store.sealing import SEALED_COLUMNS, seal
from tests.helpers import chain_rows, fresh_pg_database, reseal
from tests.signing import Person, act, new_signer, people, sign

__all__ = ["people"]  # the fixture, imported for its tests

pytestmark = pytest.mark.slow

GOLDEN = Path(__file__).parents[1] / "golden" / "formulas"
CHECKS = ("status", "report", "verify", "anchor")
ALL = frozenset(CHECKS)
WITH_ANCHOR = frozenset({"anchor"})
NOTHING: frozenset[str] = frozenset()


# ----- plain-SQL changes -----------------------------------------------------------------------

def _append(conn: Connection, table: str, row: dict[str, Any]) -> None:
    """Insert a row at the end of ``table``'s chain with a correct public seal."""
    last = chain_rows(conn, table)[-1]
    row = {**row, "id": last["id"] + 1}
    seal(table, [row], [row["id"]], last["row_hash"])
    columns = [*SEALED_COLUMNS[table], "row_hash"]
    conn.execute(Base.metadata.tables[table].insert().values(
        {c: row.get(c) for c in columns}))


def _set(table: str, where: str, **values: Any) -> Callable[[Connection, dict[str, Any]], None]:
    def change(conn: Connection, ids: dict[str, Any]) -> None:
        sets = ", ".join(f"{k} = :{k}" for k in values)
        conn.execute(text(f"UPDATE {table} SET {sets} WHERE {where.format(**ids)}"), values)
    return change


def _sql(*statements: str) -> Callable[[Connection, dict[str, Any]], None]:
    def change(conn: Connection, ids: dict[str, Any]) -> None:
        for statement in statements:
            conn.execute(text(statement.format(**ids)))
    return change


def _resealed(table: str, which: str, **values: Any) -> Callable[[Connection, dict[str, Any]],
                                                                  None]:
    def change(conn: Connection, ids: dict[str, Any]) -> None:
        reseal(conn, table, ids[which], values)
    return change


def _forged_signature(conn: Connection, ids: dict[str, Any]) -> None:
    real = next(r for r in chain_rows(conn, "review_signatures") if r["id"] == ids["rejection"])
    _append(conn, "review_signatures", {**real, "meaning": "approved", "comment": None,
                                        "signature": None})


def _moved_signature(conn: Connection, ids: dict[str, Any]) -> None:
    """rita's review of the vanishing cream moved onto the day cream, its run hash with it."""
    runs = {r["id"]: r for r in chain_rows(conn, "review_runs")}
    reseal(conn, "review_signatures", ids["review"],
            {"run_id": ids["cream_run"], "run_hash": runs[ids["cream_run"]]["run_hash"]})


def _forged_run_hash(conn: Connection, ids: dict[str, Any]) -> None:
    """The day cream's findings emptied, its run hash recomputed and the chain resealed (the
    run hash is a public function of the stored columns, as the signature's is not)."""
    from formdb.services.review import runs as review_runs
    from formdb.store.models import ReviewRun

    row = next(r for r in chain_rows(conn, "review_runs") if r["id"] == ids["cream_run"])
    run = ReviewRun(**{**row, "findings_json": "[]"})
    new = review_runs._digest(review_runs._run_content(run, None))
    reseal(conn, "review_runs", ids["cream_run"],
            {"findings_json": "[]", "run_hash": new, "run_key": new[:12]})


def _forged_key(conn: Connection, ids: dict[str, Any]) -> None:
    """A key enrolment for rita slipped in with plain SQL (someone else's public key)."""
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from formdb.services.review.keys import key_id_of, public_text

    public = Ed25519PrivateKey.generate().public_key()
    first = chain_rows(conn, "key_enrolments")[0]
    _append(conn, "key_enrolments", {**first, "at": datetime.now(UTC).replace(microsecond=0),
                                     "key_id": key_id_of(public),
                                     "public_key": public_text(public)})


def _lenient_policy(conn: Connection, ids: dict[str, Any], *, resealed: bool) -> None:
    import json

    from formdb.rules.profiles import load_profile

    row = next(r for r in chain_rows(conn, "policy_versions") if r["id"] == ids["policy"])
    data = json.loads(row["policy_json"])
    data["profile"].update(name="default", hash=load_profile("default").content_hash)
    change = {"policy_json": json.dumps(data, sort_keys=True)}
    if resealed:
        reseal(conn, "policy_versions", ids["policy"], change)
    else:
        conn.execute(text("UPDATE policy_versions SET policy_json = :j WHERE id = :i"),
                     {"j": change["policy_json"], "i": ids["policy"]})


@dataclass(frozen=True)
class Scenario:
    name: str
    change: Callable[[Connection, dict[str, Any]], None]
    sqlite: frozenset[str]  # the checks that must catch it on SQLite
    postgresql: frozenset[str]  # ... and on PostgreSQL


SCENARIOS = [
    Scenario("signature meaning rejected -> approved",
             _set("review_signatures", "id = {rejection}", meaning="approved"),
             ALL, ALL),
    Scenario("signature meaning changed and the chain resealed",
             _resealed("review_signatures", "rejection", meaning="approved"),
             ALL, ALL),
    Scenario("signature reason rewritten",
             _set("review_signatures", "id = {rejection}", comment="fine"), ALL, ALL),
    Scenario("signature backdated and resealed",
             _resealed("review_signatures", "rejection",
                       signed_at=datetime(2020, 1, 1, tzinfo=UTC)), ALL, ALL),
    Scenario("forged approval appended and sealed, no key signature", _forged_signature,
             ALL, ALL),
    Scenario("signature moved to another run and resealed", _moved_signature,
             frozenset({"status", "report", "verify", "anchor"}),
             frozenset({"status", "report", "verify", "anchor"})),
    Scenario("run findings emptied",
             _set("review_runs", "id = {cream_run}", findings_json="[]"), ALL, ALL),
    Scenario("run findings emptied and the chain resealed",
             _resealed("review_runs", "cream_run", findings_json="[]"), ALL, ALL),
    Scenario("run findings emptied, run hash recomputed, chain resealed", _forged_run_hash,
             ALL, ALL),
    Scenario("run formula text changed",
             _set("review_runs", "id = {cream_run}", formula_text="name = 'x'"), ALL, ALL),
    Scenario("change-log row edited",
             _set("change_log", "id = {middle_log}", reason="rewritten"),
             frozenset({"status", "report", "verify", "anchor"}),
             frozenset({"status", "report", "verify", "anchor"})),
    Scenario("change-log row edited and the chain resealed",
             _resealed("change_log", "middle_log", reason="rewritten"),
             WITH_ANCHOR, frozenset({"status", "report", "verify", "anchor"})),
    Scenario("change-log row deleted from the middle",
             _sql("DELETE FROM change_log WHERE id = {middle_log}"),
             frozenset({"status", "report", "verify", "anchor"}),
             frozenset({"status", "report", "verify", "anchor"})),
    Scenario("newest change-log rows deleted",
             _sql("DELETE FROM change_log WHERE id > {last_log} - 3"), WITH_ANCHOR,
             WITH_ANCHOR),
    Scenario("newest signature deleted",
             _sql("DELETE FROM review_signatures WHERE id = {review}"), WITH_ANCHOR,
             WITH_ANCHOR),
    Scenario("newest run deleted with its signature",
             _sql("DELETE FROM review_signatures WHERE id = {review}",
                  "DELETE FROM review_runs WHERE id = {lotion_run}"), WITH_ANCHOR, WITH_ANCHOR),
    Scenario("review policy edited to make the lenient profile signable",
             lambda conn, ids: _lenient_policy(conn, ids, resealed=False), ALL, ALL),
    Scenario("review policy edited to make the lenient profile signable, resealed",
             lambda conn, ids: _lenient_policy(conn, ids, resealed=True), WITH_ANCHOR,
             ALL),
    Scenario("property value edited (an ingredient the run used)",
             _sql("UPDATE property_values SET value_num = value_num + 1 WHERE property = 'hlb' "
                  "AND ingredient_id = (SELECT ingredient_id FROM ingredient_names "
                  "WHERE name = 'Polysorbate 60')"),
             frozenset({"status", "report", "anchor"}), frozenset({"status", "report", "anchor"})),
    Scenario("limit the run used edited",
             _sql("UPDATE limits SET max_percent = 5 WHERE key = 'eu-v-29'"),
             frozenset({"status", "report", "anchor"}), frozenset({"status", "report", "anchor"})),
    Scenario("an admin slipped into users and roles",
             _sql("INSERT INTO users (name, active, created_at, created_by) VALUES "
                  "('mallory', true, '2026-01-01 00:00:00', 'mallory')",
                  "INSERT INTO user_roles (user_id, role) SELECT id, 'admin' FROM users "
                  "WHERE name = 'mallory'"), WITH_ANCHOR, WITH_ANCHOR),
    Scenario("list snapshot slipped in",
             _sql("INSERT INTO list_snapshots (jurisdiction, annex, file_name, file_created, "
                  "last_update, file_hash, entry_count, imported_at, imported_by, in_force) "
                  "VALUES ('EU', 'V', 'annex-v.xlsx', '2025-10-31', '2025-10-31', "
                  "'{zeros}', 0, '2026-01-01 00:00:00', 'mallory', true)"),
             WITH_ANCHOR, WITH_ANCHOR),
    Scenario("key enrolment slipped in for rita and sealed", _forged_key, NOTHING, NOTHING),
]


# ----- the library and its copies --------------------------------------------------------------

def _build(url: str, tmp: Path, people: Any) -> tuple[dict[str, Any], dict[str, Person]]:
    ana, rita_person = people(url, "ana"), people(url, "rita")
    rita = new_signer(rita_person, tmp, "Rita Reviewer")
    policy = act(ana, "review", "policy", "set", "--profile", "strict")
    assert policy.exit_code == 0, policy.stderr
    keys = {}
    for name in ("ow-cream.toml", "vanishing-cream.toml"):
        source = tmp / name
        shutil.copyfile(GOLDEN / name, source)
        done = act(ana, "review", "run", str(source))
        assert done.exit_code == 0, done.stderr
        keys[name] = done.stdout.split()[1].rstrip(":")
    assert sign(rita, keys["ow-cream.toml"], "rejected", "--reason",
                "no NOAEL for two preservatives").exit_code == 0
    assert sign(rita, keys["vanishing-cream.toml"], "reviewed").exit_code == 0
    made = act(ana, "audit", "anchor", str(tmp / "anchor.json"))
    assert made.exit_code == 0, made.stderr
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            def one(sql: str) -> Any:
                return conn.execute(text(sql)).scalar_one()
            ids = {"cream_run": one("SELECT min(id) FROM review_runs"),
                   "lotion_run": one("SELECT max(id) FROM review_runs"),
                   "rejection": one("SELECT min(id) FROM review_signatures"),
                   "review": one("SELECT max(id) FROM review_signatures"),
                   "last_log": one("SELECT max(id) FROM change_log"),
                   "middle_log": one("SELECT max(id) - 20 FROM change_log"),
                   "policy": one("SELECT coalesce(max(id), 0) FROM policy_versions"),
                   "cream_key": keys["ow-cream.toml"], "zeros": "0" * 64}
    finally:
        engine.dispose()
    return ids, {"ana": ana, "rita": rita_person}


@contextmanager
def _copy(url: str, tmp: Path) -> Iterator[str]:
    """A copy of the built library, at the same place for every scenario (the last one's file
    removed first): the commands of each scenario are handed the engine the earlier ones made
    for that URL (tests.helpers.command_engine; on SQLite its connections are closed after each
    command), so SQLAlchemy compiles their statements once, not once per scenario."""
    if not url.startswith("postgresql"):
        path = sqlite_path(url)
        assert path is not None
        target = tmp / "copy.sqlite"
        for leftover in (target, tmp / "copy.sqlite-wal", tmp / "copy.sqlite-shm"):
            leftover.unlink(missing_ok=True)
        with closing(sqlite3.connect(path)) as src, closing(sqlite3.connect(target)) as dst:
            src.backup(dst)
        yield f"sqlite:///{target}"
        return
    base = make_url(url)
    admin = create_engine(base.set(database="postgres"), isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            conn.execute(text("SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE "
                              "datname = :d AND pid <> pg_backend_pid()"), {"d": base.database})
    finally:
        admin.dispose()
    with fresh_pg_database(url, template=base.database, name=f"{base.database}_copy") as copied:
        yield copied


def _as(person: Person, url: str) -> Person:
    if not url.startswith("postgresql"):
        return replace(person, url=url)
    return replace(person, url=make_url(person.url).set(database=make_url(url).database)
                   .render_as_string(hide_password=False))


def _caught(ana: Person, key: str, tmp: Path, anchor: Path) -> dict[str, bool]:
    status = act(ana, "review", "status")
    page = tmp / f"report-{datetime.now(UTC).timestamp()}.html"
    report = act(ana, "review", "report", key, "--out", str(page))
    verify = act(ana, "audit", "verify")
    anchored = act(ana, "audit", "verify", "--anchor", str(anchor))
    for done in (status, report, verify, anchored):
        assert done.exit_code in (0, 1, 2), (done.exit_code, done.stderr)
    shown = page.read_text(encoding="utf-8") if page.exists() else ""
    return {"status": status.exit_code == 1 and ("BROKEN" in status.stdout
                                                  or "INVALID" in status.stdout),
            # a filed report of a run that is gone cannot be filed: that is caught too
            "report": (report.exit_code == 1 and ("BROKEN" in shown or "INVALID" in shown))
            or (report.exit_code == 2 and "no review run" in report.stderr),
            "verify": verify.exit_code == 1,
            "anchor": anchored.exit_code == 1}


def test_every_tampering_scenario_is_shown_where_people_look(
        seeded_library_url: str, tmp_path: Path, people) -> None:
    url = seeded_library_url
    backend = "postgresql" if url.startswith("postgresql") else "sqlite"
    ids, who = _build(url, tmp_path, people)
    anchor = tmp_path / "anchor.json"
    untouched = _caught(who["ana"], ids["cream_key"], tmp_path, anchor)
    assert not any(untouched.values()), untouched
    found: dict[str, dict[str, bool]] = {}
    for scenario in SCENARIOS:
        with _copy(url, tmp_path) as copied:
            engine = make_engine(copied)
            try:
                with engine.begin() as conn:
                    scenario.change(conn, ids)
            finally:
                engine.dispose()
            found[scenario.name] = _caught(_as(who["ana"], copied), ids["cream_key"],
                                           tmp_path, anchor)
            if scenario.change is _forged_key:  # not caught, but named against the anchor
                shown = act(_as(who["ana"], copied), "audit", "verify", "--anchor",
                            str(anchor)).stdout
                assert f"enrolled for {who['rita'].identity} (Rita Reviewer)" in shown, shown
    wrong = {}
    for scenario in SCENARIOS:
        expected = getattr(scenario, backend)
        got = {c for c, hit in found[scenario.name].items() if hit}
        if got != expected:
            wrong[scenario.name] = {"expected": sorted(expected), "got": sorted(got)}
    caught = sum(any(found[s.name].values()) for s in SCENARIOS)
    print(f"{backend}: {caught} of {len(SCENARIOS)} tampering scenarios caught")
    for scenario in SCENARIOS:
        hits = [c for c in CHECKS if found[scenario.name][c]]
        print(f"  {scenario.name}: {', '.join(hits) or 'NOT CAUGHT'}")
    assert not wrong, "\n".join(f"{k}: {v}" for k, v in wrong.items())
