"""A sign-off that holds: the review policy, the rules of each meaning, and signatures bound to
the signer's Ed25519 key, on both backends.

The attacks are the ones a hostile colleague tried: a lenient or look-alike profile displacing
the reviewer's run, an approval with open errors and no reason, the author approving their own
run, and a signature written or changed with plain SQL (resealed with the public hash so that
the chain alone would not notice). Ed25519 is RFC 8032; the library is the ``cryptography``
package. The formula is the golden O/W day cream of the invented Larkspur Bench Laboratories on
the bundled seed library; under the strict profile its open items are errors (MOS01, EVD01) and
data gaps (GAP01).
"""

from __future__ import annotations

import base64
import json
import shutil
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any
from uuid import uuid4

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from sqlalchemy import create_engine, select, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError

from formdb.schemas.times import utc
from formdb.services.review import keys as keys_module
from formdb.services.review.keys import load_private_key, signed_text
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import ReviewRun, ReviewSignature
from formdb.store.sealing import SEALED_COLUMNS, canonical, seal
from tests.helpers import drop_roles, library_state, run_formdb
from tests.signing import ENV, Person, act, new_signer, people, sign

__all__ = ["people"]  # the fixture, imported for its tests

CREAM = Path(__file__).parents[1] / "golden" / "formulas" / "ow-cream.toml"


@pytest.fixture
def cream(tmp_path: Path) -> Path:
    target = tmp_path / "day-cream.toml"
    shutil.copyfile(CREAM, target)
    return target


def _run(who: Person, source: Path, *extra: str) -> str:
    done = act(who, "review", "run", str(source), *extra)
    assert done.exit_code == 0, done.stderr
    return done.stdout.split()[1].rstrip(":")


def _status(who: Person) -> dict[str, Any]:
    shown = act(who, "review", "status", "--format", "json")
    data = json.loads(shown.stdout)
    data["exit_code"] = shown.exit_code
    data["by_key"] = {r["run_key"]: r for r in data["runs"]}
    return data


def _open_rules(who: Person, key: str) -> list[str]:
    doc = json.loads(act(who, "review", "report", key, "--format", "json").stdout)
    return [item["rule"] for item in doc["open_items"]]


def _justify(rules: list[str]) -> list[str]:
    return [a for r in sorted(set(rules)) for a in ("--justify", f"{r}=dossier on file")]


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_a_lenient_or_look_alike_profile_cannot_displace_the_reviewers_run(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    strict = _run(people(url, "rita"), cream)
    lenient = act(people(url, "bo"), "review", "run", str(cream), "--profile", "default")
    assert lenient.exit_code == 0, lenient.stderr
    assert "DRAFT" in lenient.stdout and "Supersedes" not in lenient.stdout
    draft = lenient.stdout.split()[1].rstrip(":")
    # a file that calls itself "strict" is refused; under its own name it is a draft
    fake = tmp_path / "strict.toml"
    fake.write_text('name = "strict"\nversion = "1"\nselect = []\n', encoding="utf-8")
    refused = act(people(url, "bo"), "review", "run", str(cream), "--profile", str(fake))
    assert refused.exit_code == 2
    assert "is the name of a packaged profile" in refused.stderr
    fake.write_text('name = "strict-house"\nversion = "1"\nselect = []\n', encoding="utf-8")
    look_alike = _run(people(url, "bo"), cream, "--profile", str(fake))
    status = _status(ana)
    runs = status["by_key"]
    assert runs[strict]["state"] == "current" and runs[strict]["kind"] == "signable"
    assert runs[draft]["kind"] == runs[look_alike]["kind"] == "draft"
    assert runs[strict]["profile_origin"] == "packaged"
    assert runs[look_alike]["profile_origin"] == f"file {fake.resolve()}"
    assert len({runs[k]["profile_hash"] for k in (strict, draft, look_alike)}) == 3
    assert runs[strict]["profile_hash"] == status["policy"]["profile_hash"]
    # drafts are never signed; the strict run still is
    for key in (draft, look_alike):
        no = sign(rita, key, "reviewed")
        assert no.exit_code == 2 and f"run {key} is a draft" in no.stderr
    assert sign(rita, strict, "reviewed").exit_code == 0
    assert _status(ana)["exit_code"] == 0


def test_an_approval_needs_a_written_reason_for_each_open_item(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    key = _run(ana, cream)
    rules = _open_rules(ana, key)
    assert "MOS01" in rules and len(rules) >= 3
    before = library_state(url)
    bare = sign(rita, key, "approved")
    assert bare.exit_code == 2
    assert f"approved with {len(rules)} open item(s): no justification for item 1" in bare.stderr
    partial = sign(rita, key, "approved", "--justify", "MOS01=NOAEL dossier on file")
    assert partial.exit_code == 2 and "no justification for item" in partial.stderr
    wrong = sign(rita, key, "approved", "--justify", f"{len(rules) + 1}=x")
    assert wrong.exit_code == 2 and f"no open item {len(rules) + 1}" in wrong.stderr
    rejected = sign(rita, key, "rejected")
    assert rejected.exit_code == 2 and "needs --reason" in rejected.stderr
    assert library_state(url) == before
    done = sign(rita, key, "approved", "--justify", "1=supplier sheet checked by QA",
                *_justify(rules))
    assert done.exit_code == 0, done.stderr
    assert "Waived open item 1 (" in done.stdout
    doc = json.loads(act(ana, "review", "report", key, "--format", "json").stdout)
    [signature] = doc["signatures"]
    assert len(signature["waivers"]) == len(rules) and signature["valid"]
    assert signature["waivers"][0]["justification"] == "supplier sheet checked by QA"
    assert all(w["justification"] == "dossier on file" for w in signature["waivers"][1:])


def test_the_author_may_not_approve_unless_the_policy_allows_it(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    signer = new_signer(ana, tmp_path, "Dr. Ana Reviewer")
    key = _run(ana, cream)
    justify = _justify(_open_rules(ana, key))
    own = sign(signer, key, "approved", *justify)
    assert own.exit_code == 2 and f"{ana.identity} made run" in own.stderr
    assert sign(signer, key, "reviewed").exit_code == 0  # reviewing one's own run is fine
    allowed = act(people(url, "ada"), "review", "policy", "set", "--profile", "strict",
                  "--author-may-approve")
    assert allowed.exit_code == 0, allowed.stderr
    assert "an author may approve" in allowed.stdout
    again = sign(signer, key, "approved", *justify)
    assert again.exit_code == 0, again.stderr
    assert "supersedes your earlier signature #" in again.stdout
    [run] = _status(ana)["runs"]
    first, second = run["signatures"]
    assert (first["meaning"], first["superseded_by"]) == ("reviewed", second["number"])
    assert (second["meaning"], second["superseded_by"]) == ("approved", None)
    table = act(ana, "review", "status").stdout
    assert f"(superseded by #{second['number']})" in table


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_the_policy_names_the_role_each_meaning_needs(seeded_sqlite_url: str, cream: Path,
                                                      tmp_path: Path, people) -> None:
    """SQLite: users are operating-system accounts here (on PostgreSQL ``user add`` makes
    server logins: test_the_policy_roles_and_key_enrolments_with_server_logins)."""
    url = seeded_sqlite_url
    ana, ada = people(url, "ana"), people(url, "ada")
    for name, role in (("ada", "admin"), ("rita", "reviewer"), ("quinn", "reviewer")):
        added = act(ada, "user", "add", name, "--role", role, "--yes")
        assert added.exit_code == 0, added.stderr
    assert act(ada, "user", "grant", "quinn", "admin", "--yes").exit_code == 0
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer", admin=ada)
    quinn = new_signer(people(url, "quinn"), tmp_path, "Quinn Head of QA", admin=ada)
    not_admin = act(rita.person, "review", "policy", "set", "--profile", "strict", "--role",
                    "approved=admin")
    assert not_admin.exit_code == 2 and "rita may not manage users" in not_admin.stderr
    done = act(ada, "review", "policy", "set", "--profile", "strict", "--role",
               "approved=admin")
    assert done.exit_code == 0 and "approved needs admin" in done.stdout
    key = _run(ana, cream)
    justify = _justify(_open_rules(ana, key))
    refused = sign(rita, key, "approved", *justify)
    assert refused.exit_code == 2
    assert "rita may not sign runs approved: that needs the role admin" in refused.stderr
    assert sign(rita, key, "reviewed").exit_code == 0
    assert sign(quinn, key, "approved", *justify).exit_code == 0
    doc = json.loads(act(ana, "review", "report", key, "--format", "json").stdout)
    assert doc["policy"]["roles"]["approved"] == "admin" and doc["policy"]["set_by"] == "ada"


def test_a_changed_policy_profile_makes_older_runs_unsignable(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    house = tmp_path / "house.toml"
    house.write_text('name = "house"\nversion = "2"\nextends = "strict"\n', encoding="utf-8")
    old = _run(ana, cream)
    assert act(people(url, "ada"), "review", "policy", "set", "--profile",
               str(house)).exit_code == 0
    no = sign(rita, old, "reviewed")
    assert no.exit_code == 2 and "no longer signable" in no.stderr
    new = _run(ana, cream, "--profile", str(house))
    assert sign(rita, new, "reviewed").exit_code == 0
    shown = act(ana, "review", "policy", "show").stdout
    assert "signable profile: house 2" in shown and f"file {house.resolve()}" in shown


# ----- signatures bound to the signer's key --------------------------------------------------


def _signature_rows(url: str) -> list[ReviewSignature]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            rows = list(session.scalars(select(ReviewSignature).order_by(ReviewSignature.id)))
            session.expunge_all()
            return rows
    finally:
        engine.dispose()


def _reseal_insert(url: str, row: dict[str, Any]) -> None:
    """Append a signature row with plain SQL and a correct seal, as someone who knows the
    (public) canonical form would."""
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            last = conn.execute(text("SELECT id, row_hash FROM review_signatures "
                                     "ORDER BY id DESC LIMIT 1")).first()
            seal("review_signatures", [row], int(last[0]) + 1, last[1])
            columns = [*SEALED_COLUMNS["review_signatures"], "row_hash"]
            conn.execute(text(f"INSERT INTO review_signatures ({', '.join(columns)}) VALUES "
                              f"({', '.join(':' + c for c in columns)})"),
                         {c: row.get(c) for c in columns})
            if conn.dialect.name == "postgresql":  # as a careful forger would: no id clash
                conn.execute(text("SELECT setval(pg_get_serial_sequence('review_signatures', "
                                  "'id'), (SELECT max(id) FROM review_signatures))"))
    finally:
        engine.dispose()


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_a_signature_written_or_changed_without_the_key_shows_invalid(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    key = _run(ana, cream)
    assert sign(rita, key, "rejected", "--reason", "no NOAEL for two preservatives") \
        .exit_code == 0
    [real] = _signature_rows(url)
    # 1. a forged row naming the head of QA, with no signature, sealed onto the chain
    forged = {"run_id": real.run_id, "run_hash": real.run_hash, "signer": "Dr. Head of QA",
              "signed_by": rita.login, "meaning": "approved", "signed_at": real.signed_at,
              "comment": None, "waivers_json": None, "key_id": real.key_id,
              "signature": None}
    _reseal_insert(url, forged)
    # 2. a row signed with a key nobody enrolled, claiming rita's key id
    stranger = Ed25519PrivateKey.generate()
    body = signed_text(run_hash=real.run_hash, meaning="approved", reason=None, waivers=[],
                       login=rita.login, printed_name="Rita Reviewer", key_id=str(real.key_id),
                       signed_at=real.signed_at)
    _reseal_insert(url, {**forged, "signer": "Rita Reviewer",
                         "signature": base64.b64encode(stranger.sign(body)).decode()})
    status = _status(ana)
    assert status["exit_code"] == 1 and status["verified"] is False
    checks = [s["check"] for s in status["runs"][0]["signatures"]]
    assert checks[0] == "valid"
    assert checks[1].startswith("INVALID: no key signature")
    assert checks[2] == "INVALID: the signature does not match the signed record"
    # 3. the real rejection turned into an approval with plain SQL (chain left broken)
    engine = make_engine(url)
    with engine.begin() as conn:
        conn.execute(text("UPDATE review_signatures SET meaning = 'approved' WHERE id = :i"),
                     {"i": real.id})
    engine.dispose()
    shown = act(ana, "review", "status")
    assert shown.exit_code == 1 and "does not verify" in shown.stderr
    assert "approved by Rita Reviewer" in shown.stdout and "INVALID" in shown.stdout
    assert f"BROKEN: review_signatures: row {real.id} was altered" in shown.stdout
    page = tmp_path / "report.html"
    report = act(ana, "review", "report", key, "--out", str(page))
    assert report.exit_code == 1
    html = page.read_text(encoding="utf-8")
    assert html.count("INVALID") >= 3 and "DOES NOT VERIFY" in html
    verify = act(ana, "audit", "verify")
    assert verify.exit_code == 1
    # a new signature by the real key is valid beside the invalid ones, which stay shown
    assert sign(rita, key, "reviewed").exit_code == 0
    checks = [s["check"] for s in _status(ana)["runs"][0]["signatures"]]
    assert checks[-1] == "valid" and sum(c.startswith("INVALID") for c in checks) == 3


def test_a_run_edited_with_plain_sql_shows_broken(seeded_library_url: str, cream: Path,
                                                  tmp_path: Path, people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    key = _run(ana, cream)
    engine = make_engine(url)
    with engine.begin() as conn:  # remove the errors from the stored findings, and reseal
        runs = ReviewRun.__table__
        row = dict(conn.execute(select(runs).order_by(runs.c.id.desc())).mappings().first())
        row["findings_json"] = "[]"
        seal("review_runs", [row], [row["id"]], row["prev_hash"])
        conn.execute(text("UPDATE review_runs SET findings_json = '[]', row_hash = :h "
                          "WHERE id = :i"), {"h": row["row_hash"], "i": row["id"]})
    engine.dispose()
    status = _status(ana)
    assert status["exit_code"] == 1
    broken = status["by_key"][key]["broken"]
    assert broken[-1] == "the run's content no longer matches its run hash"
    if url.startswith("postgresql"):  # and the server's seal did not follow the reseal
        assert broken[0].startswith("seal: row ") and "server's seal" in broken[0]
    else:
        assert len(broken) == 1
    # resealed: the public chain alone is fooled; audit verify still checks the run against
    # its run hash, and on PostgreSQL the server's keyed seal does not follow either
    verify = act(ana, "audit", "verify")
    assert verify.exit_code == 1
    assert "(altered)" not in verify.stdout and "(broken-link)" not in verify.stdout
    assert f"run {key} (row " in verify.stdout and "(run-hash)" in verify.stdout
    assert ("(server-seal)" in verify.stdout) == url.startswith("postgresql")


def test_revoked_keys_sign_nothing_new_and_old_signatures_still_verify(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    key = _run(ana, cream)
    assert sign(rita, key, "reviewed").exit_code == 0
    key_id = _signature_rows(url)[0].key_id
    assert key_id is not None
    no_reason = act(people(url, "ada"), "key", "revoke", key_id, "--reason", " ")
    assert no_reason.exit_code == 2
    revoked = act(people(url, "ada"), "key", "revoke", key_id, "--reason", "laptop lost")
    assert revoked.exit_code == 0 and "still verify" in revoked.stdout
    again = sign(rita, key, "reviewed")
    assert again.exit_code == 2 and f"signing key {key_id} was revoked" in again.stderr
    assert _status(ana)["runs"][0]["signatures"][0]["check"] == "valid"
    (tmp_path / "new").mkdir()
    fresh = new_signer(people(url, "rita"), tmp_path / "new", "Rita Reviewer")
    assert sign(fresh, key, "rejected", "--reason", "second look").exit_code == 0
    status = _status(ana)
    assert [s["check"] for s in status["runs"][0]["signatures"]] == ["valid", "valid"]
    listed = act(ana, "key", "list").stdout
    assert "revoked" in listed and "laptop lost" in listed and "in use" in listed


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_a_revoked_key_cannot_sign_a_later_run_even_backdated(
        seeded_library_url: str, cream: Path, tmp_path: Path, people,
        monkeypatch: pytest.MonkeyPatch) -> None:
    """Someone who took rita's key file and passphrase signs after the revocation and dates
    the signature before it: that verifies only for runs made before the revocation. (The
    allowance for clocks that differ is cut to a second so the test need not wait minutes.)"""
    monkeypatch.setattr(keys_module, "CLOCK_SKEW", timedelta(seconds=1))
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    old = _run(ana, cream)
    assert sign(rita, old, "reviewed").exit_code == 0
    [real] = _signature_rows(url)
    assert act(people(url, "ada"), "key", "revoke", str(real.key_id), "--reason",
               "laptop stolen").exit_code == 0
    cream.write_text(cream.read_text(encoding="utf-8") + "\n# second draft\n", encoding="utf-8")
    # the new run is made over the allowance after the (backdated) signature: waited for on
    # the clock (run times may be stored to the second), not slept for a fixed 2 s
    allowance_over = utc(real.signed_at) + keys_module.CLOCK_SKEW
    while datetime.now(UTC).replace(microsecond=0) <= allowance_over:
        time.sleep(0.02)
    new = _run(ana, cream)
    stolen = load_private_key(rita.key, ENV["FORMDB_KEY_PASSPHRASE"])
    runs = {r["run_key"]: r for r in _status(ana)["runs"]}
    for run_key in (old, new):
        body = signed_text(run_hash=runs[run_key]["run_hash"], meaning="approved",
                           reason=None, waivers=[], login=rita.login,
                           printed_name="Rita Reviewer", key_id=str(real.key_id),
                           signed_at=real.signed_at)
        _reseal_insert(url, {"run_id": _run_id(url, run_key),
                             "run_hash": runs[run_key]["run_hash"], "signer": "Rita Reviewer",
                             "signed_by": rita.login, "meaning": "approved",
                             "signed_at": real.signed_at, "comment": None,
                             "waivers_json": None, "key_id": real.key_id,
                             "signature": base64.b64encode(stolen.sign(body)).decode()})
    status = _status(ana)
    on_new = status["by_key"][new]["signatures"]
    assert [s["check"] for s in on_new] == ["INVALID: dated before the run it signs was made"]
    assert status["exit_code"] == 1
    # the limit, pinned: on the run made before the revocation the backdated forgery verifies
    assert [s["check"] for s in status["by_key"][old]["signatures"]] == ["valid", "valid"]
    verify = act(ana, "audit", "verify")
    assert verify.exit_code == 1 and "dated before the run it signs was made" in verify.stdout


def _run_id(url: str, run_key: str) -> int:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return int(conn.execute(text("SELECT id FROM review_runs WHERE run_key = :k"),
                                    {"k": run_key}).scalar_one())
    finally:
        engine.dispose()


def test_wrong_passphrase_unenrolled_or_borrowed_keys_are_refused(
        seeded_library_url: str, cream: Path, tmp_path: Path,
        people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    key = _run(ana, cream)
    before = library_state(url)
    wrong = act(rita.person, "review", "sign", key, "--meaning", "reviewed", "--key",
                str(rita.key), env={"FORMDB_KEY_PASSPHRASE": "not the passphrase"})
    assert wrong.exit_code == 2 and "wrong passphrase" in wrong.stderr
    loose = tmp_path / "loose.pem"
    assert run_formdb(["key", "new", "--out", str(loose)], env=ENV).exit_code == 0
    unenrolled = act(rita.person, "review", "sign", key, "--meaning", "reviewed", "--key",
                     str(loose), env=ENV)
    assert unenrolled.exit_code == 2 and "is not enrolled in this library" in unenrolled.stderr
    bo = people(url, "bo")
    borrowed = act(bo, "review", "sign", key, "--meaning", "reviewed", "--key", str(rita.key),
                   env=ENV)
    assert borrowed.exit_code == 2
    assert f"is enrolled for {rita.login}, not for {bo.identity}" in borrowed.stderr
    overwrite = run_formdb(["key", "new", "--out", str(rita.key)], env=ENV)
    assert overwrite.exit_code == 2 and "never overwritten" in overwrite.stderr
    short = run_formdb(["key", "new", "--out", str(tmp_path / "s.pem")],
                       env={"FORMDB_KEY_PASSPHRASE": "short"})
    assert short.exit_code == 2 and "too short" in short.stderr
    assert library_state(url) == before
    assert oct(rita.key.stat().st_mode & 0o777) == "0o600"
    assert b"ENCRYPTED PRIVATE KEY" in rita.key.read_bytes()


def test_older_rows_keep_their_seal_when_later_columns_are_empty() -> None:
    """Columns added after a table was sealed are left out of the canonical form while
    empty, so a row sealed before they existed hashes the same; a value set later is seen."""
    row = {"id": "1", "run_id": "1", "run_hash": "a" * 64, "signer": "A", "signed_by": "a",
           "meaning": "reviewed", "signed_at": None, "comment": None, "prev_hash": "0" * 64}
    old_form = json.dumps([[c, row.get(c)] for c in SEALED_COLUMNS["review_signatures"][:9]],
                          separators=(",", ":"))
    assert canonical("review_signatures", row) == old_form
    assert canonical("review_signatures", {**row, "signature": "x"}) != old_form


@pytest.mark.slow  # seconds per run: left out of the fast lane
@pytest.mark.postgres
def test_the_policy_roles_and_key_enrolments_with_server_logins(
        seeded_pg_url: str, cream: Path, tmp_path: Path) -> None:
    """The role test above with real server logins, one per duty (``db grant-setup`` and
    ``user add``): the policy's roles are enforced by formdb, and only an admin login enrols a
    key, through the server function; a reviewer cannot slip a key for herself in with SQL."""
    prefix = f"fdbk_{uuid4().hex[:8]}"
    url = seeded_pg_url
    assert run_formdb(["--db", url, "db", "grant-setup", "--prefix", prefix]).exit_code == 0
    try:
        def person(who: str) -> Person:
            login = f"{prefix}_{who}"
            return Person(who, make_url(url).set(username=login).render_as_string(
                hide_password=False), login)

        boss, fay = person("boss"), person("fay")
        for who, role in (("boss", "admin"), ("fay", "formulator"), ("rita", "reviewer"),
                          ("quinn", "reviewer")):
            acting = url if who == "boss" else boss.url
            added = run_formdb(["--db", acting, "user", "add", f"{prefix}_{who}", "--role",
                                role, "--prefix", prefix, "--yes"])
            assert added.exit_code == 0, added.stderr
        assert act(boss, "user", "grant", f"{prefix}_quinn", "admin", "--prefix", prefix,
                   "--yes").exit_code == 0
        rita = new_signer(person("rita"), tmp_path, "Rita Reviewer", admin=boss)
        quinn = new_signer(person("quinn"), tmp_path, "Quinn Head of QA", admin=boss)
        own = run_formdb(["key", "new", "--out", str(tmp_path / "own.pem")], env=ENV)
        assert own.exit_code == 0
        self_enrol = act(rita.person, "key", "enrol", rita.login, "--name", "Rita",
                         "--public-key", str(tmp_path / "own.pem.pub"))
        assert self_enrol.exit_code == 2
        assert f"{rita.login} may not manage users" in self_enrol.stderr
        row = json.dumps([{"id": 999, "at": "2026-12-05T04:00:00+00:00", "by_user": rita.login,
                           "action": "enrol", "login": rita.login, "printed_name": "Rita",
                           "key_id": "x", "public_key": "y"}])
        engine = create_engine(rita.person.url)
        try:
            for sql, said in (
                    ("INSERT INTO key_enrolments (id, at, by_user, action, login, printed_name, "
                     "key_id, public_key) VALUES (999, now(), :l, 'enrol', :l, 'Rita', 'x', "
                     "'y')", "permission denied"),
                    ("SELECT formdb_append('key_enrolments', CAST(:r AS jsonb))",
                     "needs the role admin")):
                with engine.connect() as conn, pytest.raises(DBAPIError, match=said):
                    conn.execute(text(sql), {"l": rita.login, "r": row})
        finally:
            engine.dispose()
        done = act(boss, "review", "policy", "set", "--profile", "strict", "--role",
                   "approved=admin")
        assert done.exit_code == 0, done.stderr
        key = _run(fay, cream)
        justify = _justify(_open_rules(fay, key))
        refused = sign(rita, key, "approved", *justify)
        assert refused.exit_code == 2
        assert "may not sign runs approved: that needs the role admin" in refused.stderr
        assert sign(rita, key, "reviewed").exit_code == 0
        assert sign(quinn, key, "approved", *justify).exit_code == 0
        status = _status(fay)
        assert status["exit_code"] == 0
        assert [s["check"] for s in status["by_key"][key]["signatures"]] == ["valid", "valid"]
    finally:
        drop_roles(url, prefix)
