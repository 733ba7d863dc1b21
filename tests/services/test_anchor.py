"""``formdb audit anchor`` and ``audit verify --anchor``: what a chain alone cannot show (its
newest rows removed) and changes made around formdb to library data (property values, limits,
list snapshots, users and roles), found against an anchor file kept outside the library. On
both backends. The values written are made up to provoke a change (an HLB of 15.5 for
Polysorbate 60, whose seed value is 14.9; a 5 % phenoxyethanol limit, Annex V/29 says 1 %).
"""

from __future__ import annotations

import json
import shutil
from datetime import UTC, date, datetime
from pathlib import Path

from sqlalchemy import text

from formdb.store.db import make_engine
from tests.signing import act, new_signer, people, sign

__all__ = ["people"]  # the fixture, imported for its tests

CREAM = Path(__file__).parents[1] / "golden" / "formulas" / "ow-cream.toml"


def _sql(url: str, *statements: str) -> None:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            for statement in statements:
                conn.execute(text(statement))
    finally:
        engine.dispose()


def _verify(who, anchor: Path) -> tuple[int, dict]:
    done = act(who, "audit", "verify", "--anchor", str(anchor), "--format", "json")
    return done.exit_code, json.loads(done.stdout)


def test_removing_the_newest_rows_is_caught_against_an_anchor(
        seeded_library_url: str, tmp_path: Path, people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    cream = tmp_path / "cream.toml"
    shutil.copyfile(CREAM, cream)
    run = act(ana, "review", "run", str(cream))
    key = run.stdout.split()[1].rstrip(":")
    assert sign(rita, key, "rejected", "--reason", "no NOAEL for Tocopherol").exit_code == 0
    anchor = tmp_path / "filed-anchor.json"
    made = act(ana, "audit", "anchor", str(anchor))
    assert made.exit_code == 0, made.stderr
    assert "review_signatures row" in made.stdout
    assert _verify(ana, anchor)[0] == 0
    # the newest signature, the newest run and the newest log rows go, with plain SQL
    _sql(url, "DELETE FROM review_signatures",
         "DELETE FROM review_runs",
         "DELETE FROM change_log WHERE id > (SELECT max(id) - 3 FROM change_log)")
    alone = act(ana, "audit", "verify")
    assert alone.exit_code == 0  # the chains alone are intact, only shorter: the limitation
    code, report = _verify(ana, anchor)
    assert code == 1 and report["intact"] is False
    kinds = {(p["table"], p["kind"]) for p in report["anchor"]["problems"]}
    assert {("review_signatures", "removed-since-anchor"), ("review_runs", "removed-since-anchor"),
            ("change_log", "removed-since-anchor")} <= kinds
    text_report = act(ana, "audit", "verify", "--anchor", str(anchor))
    assert "is gone: rows were removed since the anchor" in text_report.stdout
    assert text_report.stderr.startswith("First break:")


def test_library_data_changed_around_formdb_is_caught(seeded_library_url: str,
                                                      tmp_path: Path, people) -> None:
    url = seeded_library_url
    ana = people(url, "ana")
    anchor = tmp_path / "anchor.json"
    assert act(ana, "audit", "anchor", str(anchor)).exit_code == 0
    kept = json.loads(anchor.read_text(encoding="utf-8"))
    assert {"ingredient", "limit", "user", "list", "source"} <= set(kept["records"])
    # a logged edit is a change, not a break
    edit = act(ana, "ingredient", "edit", "Glycerin", "--set", "density=1.27", "--source",
               "rule-of-thumb", "--reason", "remeasured")
    assert edit.exit_code == 0, edit.stderr
    code, report = _verify(ana, anchor)
    assert code == 0, report["anchor"]
    assert report["anchor"]["changed_logged"] == [
        "ingredient Glycerin: changed since the anchor (logged)"]
    # plain SQL on a property value, a limit, users and roles, and a list snapshot
    now = datetime.now(UTC).isoformat()
    _sql(url,
         "UPDATE property_values SET value_num = 15.5 WHERE property = 'hlb' AND "
         "ingredient_id = (SELECT ingredient_id FROM ingredient_names "
         "WHERE name = 'Polysorbate 60')",
         "UPDATE limits SET max_percent = 5 WHERE key = 'eu-v-29'",
         f"INSERT INTO users (name, active, created_at, created_by) "
         f"VALUES ('mallory', true, '{now}', 'mallory')",
         "INSERT INTO user_roles (user_id, role) "
         "SELECT id, 'admin' FROM users WHERE name = 'mallory'",
         f"INSERT INTO list_snapshots (jurisdiction, annex, file_name, file_created, "
         f"last_update, file_hash, entry_count, imported_at, imported_by, in_force) VALUES "
         f"('EU', 'V', 'annex-v.xlsx', '{date(2025, 10, 31)}', '{date(2025, 10, 31)}', "
         f"'{'0' * 64}', 0, '{now}', 'mallory', true)")
    code, report = _verify(ana, anchor)
    assert code == 1
    details = [p["detail"] for p in report["anchor"]["problems"]]
    for record in ("ingredient Polysorbate 60 was changed", "limit eu-v-29 was changed",
                   "user mallory was added", "list EU Annex V was added"):
        assert any(d.startswith(record) and "no change-log entry" in d for d in details), \
            (record, details)
    assert all(p["kind"] == "unlogged-change" for p in report["anchor"]["problems"])


def test_a_bad_anchor_file_is_one_clear_line(seeded_sqlite_url: str, tmp_path: Path,
                                             people) -> None:
    ana = people(seeded_sqlite_url, "ana")
    bad = tmp_path / "anchor.json"
    bad.write_text('{"form": "something else"}', encoding="utf-8")
    done = act(ana, "audit", "verify", "--anchor", str(bad))
    assert done.exit_code == 2 and done.stderr.startswith(f"Error: --anchor {bad}: not a formdb")
    missing = act(ana, "audit", "verify", "--anchor", str(tmp_path / "none.json"))
    assert missing.exit_code == 2 and "cannot be read" in missing.stderr
    assert len(missing.stderr.strip().splitlines()) == 1


def test_a_broken_chain_is_not_anchored(seeded_sqlite_url: str, tmp_path: Path,
                                        people) -> None:
    ana = people(seeded_sqlite_url, "ana")
    _sql(seeded_sqlite_url, "UPDATE change_log SET reason = 'rewritten' WHERE id = 1")
    out = tmp_path / "anchor.json"
    done = act(ana, "audit", "anchor", str(out))
    assert done.exit_code == 2 and "an anchor would vouch for a broken chain" in done.stderr
    assert not out.exists()


def test_keys_and_policies_set_since_the_anchor_are_named(seeded_library_url: str,
                                                         tmp_path: Path, people) -> None:
    """What decides whose signature counts and which runs are signable, set since the anchor:
    not a break (an admin may do it), but named, so that a key slipped in for someone is seen
    when the filed anchor is checked (README: such a row verifies on its own)."""
    url = seeded_library_url
    ana = people(url, "ana")
    anchor = tmp_path / "anchor.json"
    assert act(ana, "audit", "anchor", str(anchor)).exit_code == 0
    rita = new_signer(people(url, "rita"), tmp_path, "Rita Reviewer")
    assert act(ana, "review", "policy", "set", "--profile", "strict").exit_code == 0
    code, report = _verify(ana, anchor)
    assert code == 0, report["anchor"]
    notes = report["anchor"]["changed_logged"]
    assert any(n.startswith("key ") and f" enrolled for {rita.login} (Rita Reviewer) by "
               in n and n.endswith("since the anchor") for n in notes), notes
    assert any(n.startswith(f"review policy set by {ana.identity} at ")
               and "since the anchor: signable profile strict 1 (" in n for n in notes), notes
    shown = act(ana, "audit", "verify", "--anchor", str(anchor)).stdout
    assert f"enrolled for {rita.login}" in shown
