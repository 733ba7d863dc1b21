"""``formdb impact`` with review runs: a formula with a run is compared with that run, a signed
run that used the old ingredient record is listed as stale, and the review tables' own chains
catch plain-SQL tampering. The benzoate arithmetic and its source are in test_impact.py
(Regulation (EC) No 1223/2009 Annex V entry 1: 0.5 % as acid, leave-on)."""

from __future__ import annotations

import json
from pathlib import Path

from sqlalchemy import text

from formdb.services.review.impact import impact_of
from formdb.services.review.runs import run_review, sign_run
from formdb.store.db import make_engine
from tests.helpers import run_formdb
from tests.libraries import opened
from tests.services.test_impact import _edit, _formulas
from tests.signing import enrolled_key


def _signed_run(url: str, formula: str) -> str:
    summary = run_review(opened(url), f"stored:{formula}", user="larkspur-reviewer")
    key = enrolled_key(url, "larkspur-reviewer", "A. Reviewer")
    sign_run(opened(url), summary.run_key, "reviewed", user="larkspur-reviewer", signing_key=key)
    return summary.run_key


def test_impact_compares_with_the_run_and_names_the_stale_signature(
        seeded_library_url: str, tmp_path: Path) -> None:
    _formulas(seeded_library_url, tmp_path)
    key = _signed_run(seeded_library_url, "Larkspur toner A")
    _edit(seeded_library_url, molar_mass="160")
    report = impact_of(opened(seeded_library_url), "Sodium Benzoate")
    by_name = {f.formula: f for f in report.formulas}
    assert sorted(by_name) == ["Larkspur toner A", "Larkspur toner B"]
    with_run, without = by_name["Larkspur toner A"], by_name["Larkspur toner B"]
    assert with_run.compared_with.startswith(f"review run {key}")
    assert "LIM01" in {k.rule for k in with_run.gone}
    assert without.compared_with == "Sodium Benzoate version 1" and without.verdict_changed
    (stale,) = report.stale_runs
    assert (stale.run_key, stale.formula, stale.used_version, stale.current_version) == (
        key, "Larkspur toner A", 1, 2)
    assert "reviewed by A. Reviewer" in stale.signatures[0] and not stale.superseded
    # --since RUN: every formula against the ingredient as that run used it
    since = impact_of(opened(seeded_library_url), "Sodium Benzoate", since=key)
    assert since.baseline_version == 1 and len(since.changed) == 2
    result = run_formdb(["--db", seeded_library_url, "impact", "Sodium Benzoate",
                         "--format", "json"])
    assert result.exit_code == 1
    assert [r["run"] for r in json.loads(result.stdout)["stale_runs"]] == [key]


def test_review_chains_are_sealed_and_tampering_is_found(seeded_library_url: str,
                                                         tmp_path: Path) -> None:
    _formulas(seeded_library_url, tmp_path)
    _signed_run(seeded_library_url, "Larkspur toner A")
    _signed_run(seeded_library_url, "Larkspur toner B")
    ok = run_formdb(["--db", seeded_library_url, "audit", "verify", "--format", "json"])
    chains = {c["table"]: c for c in json.loads(ok.stdout)["chains"]}
    assert ok.exit_code == 0
    assert chains["review_runs"]["rows"] == 2 and chains["review_signatures"]["rows"] == 2
    engine = make_engine(seeded_library_url)
    try:
        with engine.begin() as conn:  # a signature's meaning rewritten with plain SQL
            first = conn.execute(text("SELECT min(id) FROM review_signatures")).scalar_one()
            conn.execute(text("UPDATE review_signatures SET meaning = 'approved' WHERE id = :i"),
                         {"i": first})
    finally:
        engine.dispose()
    broken = run_formdb(["--db", seeded_library_url, "audit", "verify", "--format", "json"])
    assert broken.exit_code == 1
    chains = {c["table"]: c for c in json.loads(broken.stdout)["chains"]}
    assert chains["change_log"]["intact"] and chains["review_runs"]["intact"]
    assert chains["review_signatures"]["problems"][0] == {
        "row": first, "kind": "altered",
        "detail": chains["review_signatures"]["problems"][0]["detail"]}


def test_impact_checks_with_the_profile_file_the_run_used(seeded_sqlite_url: str,
                                                          tmp_path: Path) -> None:
    """A run made with a profile file is compared under that file (found by the path the run
    records and held to its content hash), not under a packaged profile of another name; a
    file changed since the run is named, and the comparison falls back to the chosen profile."""
    url = seeded_sqlite_url
    _formulas(url, tmp_path)
    house = tmp_path / "house.toml"
    house.write_text('name = "larkspur-house"\nversion = "1"\nextends = "strict"\n',
                     encoding="utf-8")
    summary = run_review(opened(url), "stored:Larkspur toner A", str(house),
                         user="larkspur-reviewer")
    _edit(url, molar_mass="160")
    report = impact_of(opened(url), "Sodium Benzoate")
    toner = next(f for f in report.formulas if f.formula == "Larkspur toner A")
    assert toner.compared_with == f"review run {summary.run_key} (larkspur-house profile)"
    assert not [n for n in report.notes if "profile" in n]
    # the file changed after the run: said, and the chosen profile is used instead
    house.write_text('name = "larkspur-house"\nversion = "2"\nextends = "default"\n',
                     encoding="utf-8")
    changed = impact_of(opened(url), "Sodium Benzoate")
    toner = next(f for f in changed.formulas if f.formula == "Larkspur toner A")
    assert toner.compared_with == f"review run {summary.run_key} (default profile)"
    (note,) = [n for n in changed.notes if "profile" in n]
    assert f"the file {house.resolve()} has changed since" in note
    house.unlink()
    gone = impact_of(opened(url), "Sodium Benzoate")
    (note,) = [n for n in gone.notes if "profile" in n]
    assert "is not available (the file" in note
