"""``formdb review run|sign|status``: immutable runs, sign-offs bound to the run hash, and runs
that go stale when the formula or a library record they used changes (21 CFR 11.10(e), 11.50,
11.70 as summarised in regulatory.md section 5: a record shows who, when and what; a signature
shows the printed name, date and time and meaning, and is linked to its record).

The formula is the golden O/W day cream of the invented Larkspur Bench Laboratories on the
bundled seed library; the replacement values the tests write (a glycerin density of 1.27, a
phenoxyethanol limit of 0.5 %) are made up to provoke a change. The limit row it starts from is
Regulation (EC) No 1223/2009 Annex V entry 29, phenoxyethanol 1 % (seed_data/limits.csv); the
face cream retention factor 1 is the SCCS Notes of Guidance's for a leave-on product, and the
phenoxyethanol NOAEL of 357 mg/kg bw/day is the seed's (from memory, SCCS/1575/16).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from sqlalchemy import select, text

from formdb.schemas.change_log import read_payload
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import ChangeLogEntry, ReviewRun, ReviewSignature
from tests.helpers import dump_database, library_state, recorded_as, run_as
from tests.libraries import opened
from tests.signing import act, new_signer, people, sign

__all__ = ["people"]  # the fixture, imported for its tests

CREAM = Path(__file__).parents[1] / "golden" / "formulas" / "ow-cream.toml"
NAME = "Larkspur LB-G01 day cream"


@pytest.fixture
def cream(tmp_path: Path) -> Path:
    target = tmp_path / "day-cream.toml"
    shutil.copyfile(CREAM, target)
    return target


def _formdb(url: str, *args: str, user: str = "ana"):
    return run_as(user, ["--db", url, *args])


def _run(url: str, file: Path | str, user: str = "ana") -> str:
    done = _formdb(url, "review", "run", str(file), user=user)
    assert done.exit_code == 0, done.stderr
    assert done.stdout.startswith("Run ")
    return done.stdout.split()[1].rstrip(":")


def _status(url: str) -> dict[str, dict]:
    shown = _formdb(url, "review", "status", "--format", "json")
    assert shown.exit_code == 0, shown.stderr
    return {s["run_key"]: s for s in json.loads(shown.stdout)["runs"]}


def _runs(url: str) -> list[ReviewRun]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            runs = list(session.scalars(select(ReviewRun).order_by(ReviewRun.id)))
            session.expunge_all()
            return runs
    finally:
        engine.dispose()


def _justify_all(url: str, key: str) -> list[str]:
    """One --justify per rule code of the run's open items."""
    report = _formdb(url, "review", "report", key, "--format", "json")
    rules = sorted({item["rule"] for item in json.loads(report.stdout)["open_items"]})
    return [arg for rule in rules for arg in ("--justify", f"{rule}=accepted for the trial")]


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_run_report_sign_edit_stale_rerun_sign(seeded_library_url: str, cream: Path,
                                               tmp_path: Path, people) -> None:
    url = seeded_library_url
    ana = new_signer(people(url, "ana"), tmp_path, "Dr. Ana Reviewer")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")

    def run_as_ana() -> str:
        done = act(ana.person, "review", "run", str(cream))
        assert done.exit_code == 0, done.stderr
        return done.stdout.split()[1].rstrip(":")

    first = run_as_ana()
    [run] = _runs(url)
    assert run.run_key == first and run.run_hash.startswith(first) and len(run.run_hash) == 64
    assert run.profile_name == "strict" and run.formula_name == NAME
    assert run.formula_text == cream.read_text(encoding="utf-8")
    records = {(r["kind"], r["key"]): r for r in json.loads(run.records_json)}
    # every line's ingredient with its version, the Annex V/29 phenoxyethanol limit, the SCCS
    # face cream exposure row and the phenoxyethanol NOAEL row were read by the check
    assert records[("ingredient", "Glycerin")]["version"] == 1
    assert records[("limit", "eu-v-29")]["values"]["max_percent"] == 1.0
    assert ("exposure", "face cream") in records
    assert ("toxicology", "phenoxyethanol-noael-rat-oral") in records
    assert sum(1 for kind, _ in records if kind == "ingredient") == 12

    report = _formdb(url, "review", "report", first, "--format", "json")
    assert report.exit_code == 0, report.stderr
    assert json.loads(report.stdout)["header"]["state"] == "current"

    signed = sign(ana, first, "reviewed", "--as", "Dr. Ana Reviewer", "--comment",
                  "first look")
    assert signed.exit_code == 0, signed.stderr
    edit = _formdb(url, "ingredient", "edit", "Glycerin", "--set", "density=1.27",
                   "--source", "rule-of-thumb", "--reason", "remeasured", user="ed")
    assert edit.exit_code == 0, edit.stderr

    state = _status(url)[first]
    assert state["state"] == "stale"
    ed = recorded_as(url, "ed")
    assert any(c.startswith("ingredient Glycerin: density 1.26 -> 1.27, source '")
               and f"' -> 'rule-of-thumb' by {ed}" in c  # the seed's source key, whatever it is
               for c in state["changes"]), state["changes"]
    assert [s["meaning"] for s in state["signatures"]] == ["reviewed"]
    table = _formdb(url, "review", "status")
    assert f"{first}  stale" in table.stdout and "density 1.26 -> 1.27" in table.stdout

    refused = sign(rita, first, "approved", *_justify_all(url, first))
    assert refused.exit_code == 2 and "Traceback" not in refused.stderr
    assert refused.stderr.startswith(f"Error: run {first} is stale: ingredient Glycerin: density")

    second = run_as_ana()
    assert second != first
    assert sign(rita, second, "approved", *_justify_all(url, second)).exit_code == 0
    states = _status(url)
    assert states[first]["state"] == "superseded" and states[first]["superseded_by"] == second
    assert states[second]["state"] == "current"
    assert [(s["signer"], s["signed_by"], s["meaning"], s["run_hash"])
            for s in states[second]["signatures"]] == [
        ("Rita Reviewer", rita.login, "approved", _runs(url)[1].run_hash)]
    assert all(s["valid"] for s in states[second]["signatures"])
    old = sign(rita, first, "approved", *_justify_all(url, first))
    assert old.exit_code == 2 and f"superseded by run {second}" in old.stderr


def test_a_run_that_does_not_exist_is_refused(seeded_sqlite_url: str, cream: Path,
                                              tmp_path: Path, people) -> None:
    rita = new_signer(people(seeded_sqlite_url, "rita"), tmp_path, "Rita Reviewer")
    key = _run(seeded_sqlite_url, cream)
    before = library_state(seeded_sqlite_url)
    typo = key[:-1] + ("0" if key[-1] != "0" else "1")
    refused = sign(rita, typo, "reviewed")
    assert refused.exit_code == 2 and "Traceback" not in refused.stderr
    assert refused.stderr.startswith(f"Error: no review run '{typo}'.")
    assert f"did you mean {key}?" in refused.stderr
    assert library_state(seeded_sqlite_url) == before


def test_a_formula_file_changed_on_disk_makes_the_run_stale(seeded_sqlite_url: str,
                                                             cream: Path, tmp_path: Path,
                                                             people) -> None:
    rita = new_signer(people(seeded_sqlite_url, "rita"), tmp_path, "Rita Reviewer")
    key = _run(seeded_sqlite_url, cream)
    cream.write_text(cream.read_text(encoding="utf-8").replace("percent = 72.4",
                                                               "percent = 72.3"),
                     encoding="utf-8")
    [change] = _status(seeded_sqlite_url)[key]["changes"]
    assert change.startswith(f"formula file {cream.resolve()} changed since the run")
    refused = sign(rita, key, "reviewed")
    assert refused.exit_code == 2 and "changed since the run" in refused.stderr


def test_changed_reference_rows_are_named_with_old_and_new(seeded_sqlite_url: str,
                                                       cream: Path) -> None:
    key = _run(seeded_sqlite_url, cream)
    engine = make_engine(seeded_sqlite_url)
    with engine.begin() as conn:
        conn.execute(text("UPDATE limits SET max_percent = 0.5 WHERE key = 'eu-v-29'"))
        conn.execute(text("UPDATE toxicology SET pod_value = 300 "
                          "WHERE key = 'phenoxyethanol-noael-rat-oral'"))
        conn.execute(text("UPDATE exposure SET retention_factor = 0.5 "
                          "WHERE product = 'face cream'"))
    engine.dispose()
    shown = _formdb(seeded_sqlite_url, "review", "status", "--format", "json")
    # changed with plain SQL, so nothing in the change log: the status says BROKEN, exit 1
    assert shown.exit_code == 1 and "does not verify" in shown.stderr
    state = {s["run_key"]: s for s in json.loads(shown.stdout)["runs"]}[key]
    assert state["state"] == "stale"
    assert state["changes"] == [
        "exposure face cream: retention_factor 1.0 -> 0.5",
        "limit eu-v-29: max_percent 1.0 -> 0.5",
        "toxicology phenoxyethanol-noael-rat-oral: pod_value 357.0 -> 300.0"]
    assert state["broken"] == [
        f"{what} changed since the run with no change-log entry: changed around formdb"
        for what in ("exposure face cream", "limit eu-v-29",
                     "toxicology phenoxyethanol-noael-rat-oral")]
    # the same kind of change through formdb is logged: stale, but nothing broken
    other = _run(seeded_sqlite_url, cream)
    edit = _formdb(seeded_sqlite_url, "toxicology", "edit", "phenoxyethanol-noael-rat-oral",
                   "--set", "pod_value=320", "--reason", "dossier update")
    assert edit.exit_code == 0, edit.stderr
    logged = {s["run_key"]: s for s in json.loads(_formdb(
        seeded_sqlite_url, "review", "status", "--format", "json").stdout)["runs"]}[other]
    assert logged["state"] == "stale" and logged["broken"] == []


def test_a_non_reviewer_is_refused_and_logged(seeded_sqlite_url: str, cream: Path,
                                              tmp_path: Path, people) -> None:
    url = seeded_sqlite_url
    for name, role in (("ada", "admin"), ("rita", "reviewer"), ("bo", "editor")):
        added = _formdb(url, "user", "add", name, "--role", role, "--yes", user="ada")
        assert added.exit_code == 0, added.stderr
    ada = people(url, "ada")
    bo = new_signer(people(url, "bo"), tmp_path, "Bo Editor", admin=ada)
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer", admin=ada)
    key = _run(url, cream, user="bo")  # storing a run needs no role: it only records a check
    refused = sign(bo, key, "approved")
    assert refused.exit_code == 2
    assert refused.stderr.startswith(
        "Error: bo may not sign runs approved: that needs the role reviewer.")
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            assert session.scalars(select(ReviewSignature)).all() == []
            logged = session.scalars(select(ChangeLogEntry).where(
                ChangeLogEntry.action == "refused")).all()
            assert [(e.user, read_payload(e.payload).attempted) for e in logged] == [
                ("bo", "sign runs approved")]
    finally:
        engine.dispose()
    allowed = sign(rita, key, "approved", *_justify_all(url, key))
    assert allowed.exit_code == 0, allowed.stderr


def test_bad_input_writes_nothing(seeded_sqlite_url: str, tmp_path: Path, cream: Path,
                                  people) -> None:
    rita = new_signer(people(seeded_sqlite_url, "rita"), tmp_path, "Rita Reviewer")
    before = dump_database(seeded_sqlite_url)
    wrong = tmp_path / "wrong.toml"
    wrong.write_text(cream.read_text(encoding="utf-8").replace('"Glycerin"', '"Glycerine X"'),
                     encoding="utf-8")
    unknown = _formdb(seeded_sqlite_url, "review", "run", str(wrong))
    assert unknown.exit_code == 2 and "unknown ingredient 'Glycerine X'" in unknown.stderr
    missing = _formdb(seeded_sqlite_url, "review", "run", str(tmp_path / "none.toml"))
    assert missing.exit_code == 2 and missing.stderr.startswith("Error: ")
    assert dump_database(seeded_sqlite_url) == before
    key = _run(seeded_sqlite_url, cream)
    after_run = dump_database(seeded_sqlite_url)
    assert after_run != before
    meaning = sign(rita, key, "ok")
    assert meaning.exit_code == 2
    other = sign(rita, key, "reviewed", "--as", "Dr. Head of QA")
    assert other.exit_code == 2
    assert "your key is enrolled under the name 'Rita Reviewer'" in other.stderr
    assert dump_database(seeded_sqlite_url) == after_run


def test_a_stored_formula_is_compared_with_its_stored_text(seeded_sqlite_url: str,
                                                           cream: Path) -> None:
    url = seeded_sqlite_url
    assert _formdb(url, "formula", "import", str(cream)).exit_code == 0
    key = _run(url, f"stored:{NAME}")
    [run] = _runs(url)
    assert run.formula_source == f"stored:{NAME}"
    assert _status(url)[key]["state"] == "current"
    cream.write_text(cream.read_text(encoding="utf-8").replace("percent = 72.4",
                                                               "percent = 72.3"),
                     encoding="utf-8")
    assert _status(url)[key]["state"] == "current"  # the file is not what was reviewed
    changed = _formdb(url, "formula", "import", str(cream), "--reason", "less water")
    assert changed.exit_code == 0, changed.stderr
    [change] = _status(url)[key]["changes"]
    assert change.startswith(f"stored formula {NAME!r} changed since the run")
    unknown = _formdb(url, "review", "run", "stored:No Such Cream")
    assert unknown.exit_code == 2 and "no stored formula 'No Such Cream'" in unknown.stderr


def test_runs_of_the_same_content_in_one_second_get_their_own_keys(seeded_sqlite_url: str,
                                                                    cream: Path) -> None:
    from formdb.services.review.runs import run_review

    keys = [run_review(opened(seeded_sqlite_url), str(cream), user="ana").run_key for _ in range(3)]
    assert len(set(keys)) == 3
    runs = _runs(seeded_sqlite_url)
    assert [r.supersedes_run_id for r in runs] == [None, runs[0].id, runs[1].id]
