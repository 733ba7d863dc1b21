"""``formdb source ...`` and the evidence doors of ``formdb ingredient``: sources as records
with a change log, a source per value (``--set hlb=15@KEY``), notes kept on edit, ``verify``.

Library values are handbook values (polysorbate 80 HLB 15, HPE6 Table IX); the supplier data
sheet and its checksum file are invented test data (Larkspur Bench Laboratories).
"""

from __future__ import annotations

import csv
import hashlib
import json
from pathlib import Path

import pytest

from tests.fixtures.tables.library_setup import build_library
from tests.helpers import dump_database, library_state, recorded_as, run_as

TDS = ["--kind", "supplier data sheet", "--citation",
       "Invented supplier, technical data sheet for polysorbate 80 (test data)",
       "--set", "supplier=Invented Supplier", "--set", "document=TDS P80 rev 4",
       "--set", "issued=2025-03-01"]


@pytest.fixture
def library(library_url: str) -> str:
    return build_library(library_url)


def _formdb(url: str, *args: str, user: str = "ana"):
    return run_as(user, ["--db", url, *args])


def _refused(url: str, *args: str, words: str) -> None:
    """Bad input: one Error line naming the problem, exit 2, the library unchanged."""
    before = library_state(url)
    result = _formdb(url, *args)
    assert result.exit_code == 2, result.stdout + result.stderr
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error:"), result.stderr
    assert words in lines[0], lines[0]
    assert library_state(url) == before


def test_source_add_show_edit_history(library: str, tmp_path: Path) -> None:
    document = tmp_path / "tds-p80.pdf"
    document.write_bytes(b"%PDF-1.4 invented data sheet")
    added = _formdb(library, "source", "add", "invented-tds-2025", *TDS, "--file", str(document),
                    "--reason", "supplier sent its sheet")
    assert added.exit_code == 0, added.stderr
    shown = _formdb(library, "source", "show", "invented-tds-2025").stdout
    assert "supplier data sheet" in shown and "TDS P80 rev 4" in shown
    digest = hashlib.sha256(document.read_bytes()).hexdigest()
    assert f"sha256:{digest}" in shown
    assert "evidence" in shown and "supplier " in shown  # the kind sets the grade
    found = _formdb(library, "source", "identify", str(document))
    assert "invented-tds-2025" in found.stdout
    other = tmp_path / "other.pdf"
    other.write_bytes(b"something else")
    assert "no source" in _formdb(library, "source", "identify", str(other)).stdout

    edited = _formdb(library, "source", "edit", "invented-tds-2025", "--set", "lot=L-0425",
                     "--reason", "lot of our drum")
    assert edited.exit_code == 0, edited.stderr
    assert "lot: (none) -> L-0425" in edited.stdout
    history = _formdb(library, "source", "history", "invented-tds-2025").stdout
    assert "supplier sent its sheet" in history and "lot of our drum" in history
    assert "L-0425" in history and recorded_as(library, "ana") in history
    listed = json.loads(_formdb(library, "source", "list", "--format", "json").stdout)
    row = next(r for r in listed if r["key"] == "invented-tds-2025")
    assert row["kind"] == "supplier data sheet" and row["evidence"] == "supplier"


def test_source_bad_input_is_one_line_and_changes_nothing(library: str) -> None:
    # every missing detail in one line, not one per attempt
    _refused(library, "source", "add", "hb", "--kind", "handbook", "--citation", "A handbook",
             words="needs edition and table_ref or page")
    _refused(library, "source", "add", "x", "--kind", "gossip", "--citation", "c",
             words="'gossip' is not one of")
    _refused(library, "source", "add", "hpe6", "--kind", "handbook", "--citation", "c",
             words="already in the library")
    _refused(library, "source", "edit", "no-such-source", "--set", "year=2001",
             words="no source 'no-such-source'")
    _refused(library, "source", "edit", "hpe6", "--set", "colour=red", words="not a field")
    _refused(library, "source", "add", "coa", "--kind", "certificate of analysis",
             "--citation", "c", "--set", "supplier=S", "--set", "document=D",
             "--set", "issued=2025-13-01", words="issued")
    _refused(library, "source", "add", "m", "--kind", "in-house measurement", "--citation", "c",
             "--set", "method=pycnometer", "--set", "issued=2025-01-01", words="measured_by")


def test_source_grade_moves_the_values_citing_it(library: str) -> None:
    """Downgrading a second-hand copy regrades its values, logs and versions each ingredient."""
    before = json.loads(_formdb(library, "ingredient", "list", "--format", "json").stdout)
    cited = {r["inci_name"] for r in before
             if any(p["source"] == "hpe6" for p in r["provenance"].values())}
    assert cited
    result = _formdb(library, "source", "edit", "hpe6", "--kind", "secondary copy",
                     "--reason", "tables seen only in a reproduction")
    assert result.exit_code == 0, result.stderr
    assert "evidence: published -> secondary copy" in result.stdout
    after = json.loads(_formdb(library, "ingredient", "list", "--format", "json").stdout)
    for rec in after:
        if rec["inci_name"] in cited:
            grades = {p["evidence"] for p in rec["provenance"].values() if p["source"] == "hpe6"}
            assert grades == {"secondary copy"}
            old = next(r for r in before if r["inci_name"] == rec["inci_name"])
            assert rec["version"] == old["version"] + 1
    name = sorted(cited)[0]
    history = _formdb(library, "ingredient", "history", name).stdout
    assert "grade" in history and "secondary copy" in history


def test_source_import_export_round_trip(library: str, tmp_path: Path) -> None:
    table = tmp_path / "sources.csv"
    table.write_text(
        "key,citation,kind,edition,table_ref,method,issued,measured_by\n"
        "hpe-9,\"Handbook of Pharmaceutical Excipients, 9th ed.\",handbook,9th,Table IX,,,\n"
        "bench-density,Bench density by pycnometer,in-house measurement,,,pycnometer 25 C,"
        "2026-11-30,A. Analyst\n", encoding="utf-8")
    dry = _formdb(library, "source", "import", str(table), "--dry-run")
    assert dry.exit_code == 0 and "2 would be added" in dry.stdout
    assert _formdb(library, "source", "import", str(table)).exit_code == 0
    again = _formdb(library, "source", "import", str(table))
    assert "0 added, 0 changed, 2 left alone" in again.stdout
    out = tmp_path / "out.csv"
    assert _formdb(library, "source", "export", str(out)).exit_code == 0
    rows = list(csv.DictReader(out.open(encoding="utf-8-sig")))
    assert {r["key"] for r in rows} >= {"hpe-9", "bench-density", "griffin-1954"}
    before = library_state(library)
    assert "left alone" in _formdb(library, "source", "import", str(out)).stdout
    assert library_state(library) == before  # export reads back unchanged

    bad = tmp_path / "bad.csv"
    bad.write_text("key,citation,kind\nok-one,Fine,estimate\nbad-one,Bad,handbook\n",
                   encoding="utf-8")
    before = library_state(library)
    result = _formdb(library, "source", "import", str(bad))
    assert result.exit_code == 2
    assert "row 3" in result.stderr and "needs edition" in result.stderr
    assert library_state(library) == before


def test_value_with_its_own_source_and_notes_kept(library: str) -> None:
    assert _formdb(library, "source", "add", "invented-tds-2025", *TDS).exit_code == 0
    result = _formdb(library, "ingredient", "edit", "Polysorbate 80",
                     "--set", "hlb=14.9@invented-tds-2025", "--set", "density=1.07@crc-water",
                     "--reason", "supplier sheet")
    assert result.exit_code == 0, result.stderr
    rec = json.loads(_formdb(library, "ingredient", "list", "--format", "json").stdout)
    p80 = next(r for r in rec if r["inci_name"] == "Polysorbate 80")
    assert p80["properties"]["hlb"] == 14.9
    assert p80["provenance"]["hlb"]["source"] == "invented-tds-2025"
    assert p80["provenance"]["hlb"]["evidence"] == "supplier"
    assert p80["provenance"]["density"]["source"] == "crc-water"
    # a note survives an edit of its value
    assert _formdb(library, "ingredient", "edit", "Polysorbate 80", "--set",
                   "hlb_note=TDS table 2", "--reason", "where").exit_code == 0
    assert _formdb(library, "ingredient", "edit", "Polysorbate 80", "--set",
                   "hlb=15.0@invented-tds-2025", "--reason", "rev 5").exit_code == 0
    rec = json.loads(_formdb(library, "ingredient", "list", "--format", "json").stdout)
    p80 = next(r for r in rec if r["inci_name"] == "Polysorbate 80")
    assert p80["provenance"]["hlb"]["note"] == "TDS table 2"


def test_unknown_source_says_the_value_is_fine(library: str) -> None:
    _refused(library, "ingredient", "edit", "Polysorbate 80", "--set", "hlb=15@nobody-2025",
             "--reason", "r", words="the value is fine: add the source first")
    _refused(library, "ingredient", "edit", "Polysorbate 80", "--set", "hlb=@x",
             "--reason", "r", words="write the value, then @")


def test_verify_attaches_a_source_without_retyping(library: str) -> None:
    assert _formdb(library, "source", "add", "invented-tds-2025", *TDS).exit_code == 0
    shown = _formdb(library, "ingredient", "show", "Glycerin").stdout
    assert "from-memory" in shown or "rule-of-thumb" in shown or "larkspur" in shown
    rec = json.loads(_formdb(library, "ingredient", "list", "--format", "json").stdout)
    glycerin = next(r for r in rec if r["inci_name"] == "Glycerin")
    prop = next(p for p in ("solubility", "density", "hlb") if p in glycerin["properties"])
    value = glycerin["properties"][prop]
    result = _formdb(library, "ingredient", "verify", "Glycerin", "--value", prop,
                     "--source", "invented-tds-2025", "--note", "TDS p. 2", "--reason", "read")
    assert result.exit_code == 0, result.stderr
    assert f"{prop}_source" in result.stdout
    rec = json.loads(_formdb(library, "ingredient", "list", "--format", "json").stdout)
    glycerin = next(r for r in rec if r["inci_name"] == "Glycerin")
    assert glycerin["properties"][prop] == value
    assert glycerin["provenance"][prop]["evidence"] == "supplier"
    assert glycerin["provenance"][prop]["note"] == "TDS p. 2"
    history = _formdb(library, "ingredient", "history", "Glycerin").stdout
    assert "verify" in history
    _refused(library, "ingredient", "verify", "Glycerin", "--value", prop, "--source",
             "from-memory", words="verifies nothing")
    _refused(library, "ingredient", "verify", "Glycerin", "--value", "hlb_required",
             "--source", "invented-tds-2025", words="not a field")
    _refused(library, "ingredient", "verify", "Glycerin", "--value", prop, "--source", "nope",
             words="no source 'nope'")


def test_reseeding_regrades_values_of_a_downgraded_source(seeded_library_url: str) -> None:
    """A library seeded before a source was downgraded (HPE6 tables seen only in a
    reproduction: secondary copy) gets the new grade on its values at the next init --seed."""
    from sqlalchemy import text

    from formdb.store.db import make_engine

    engine = make_engine(seeded_library_url)
    try:
        with engine.begin() as conn:
            conn.execute(text("UPDATE property_values SET evidence = 'published' "
                              "WHERE source_key = 'hpe6'"))
            conn.execute(text("UPDATE sources SET evidence = 'published', kind = NULL "
                              "WHERE key = 'hpe6'"))
    finally:
        engine.dispose()
    result = run_as("ana", ["--db", seeded_library_url, "init", "--seed", "--yes"])
    assert result.exit_code == 0, result.stderr
    listed = json.loads(run_as("ana", ["--db", seeded_library_url, "ingredient", "list",
                                       "--format", "json"]).stdout)
    grades = {p["evidence"] for r in listed for p in r["provenance"].values()
              if p["source"] == "hpe6"}
    assert grades == {"secondary copy"}
    log = dump_database(seeded_library_url, tables=["change_log"])
    assert "'grade'" in log and '"new_evidence":"secondary copy"' in log
