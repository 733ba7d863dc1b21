"""``formdb review report``: the filed report of a run, HTML (standalone, escaped, printable) and
JSON with every section the issue asks for; the HTML looked at in headless Chromium.

Formula: the golden O/W day cream of the invented Larkspur Bench Laboratories on the bundled
seed library. Its phenoxyethanol (0.8 %) is under Regulation (EC) No 1223/2009 Annex V entry 29
(1 %); the MoS line uses the seed's phenoxyethanol NOAEL (357 mg/kg bw/day, from memory) and the
SCCS Notes of Guidance face cream exposure (seed_data/exposure.csv).
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.helpers import chromium, run_as
from tests.signing import Person, new_signer, sign

ROOT = Path(__file__).parents[2]
CREAM = ROOT / "tests" / "golden" / "formulas" / "ow-cream.toml"


def _formdb(url: str, *args: str, user: str = "ana"):
    return run_as(user, ["--db", url, *args])


def _signed_run(url: str, formula: Path) -> str:
    """A run made by ana and approved by rita (SQLite: both are operating-system accounts),
    every open item justified by its rule."""
    done = _formdb(url, "review", "run", str(formula))
    assert done.exit_code == 0, done.stderr
    key = done.stdout.split()[1].rstrip(":")
    rita = new_signer(Person("rita", url, "rita"), formula.parent, "Dr. Rita Reviewer")
    items = json.loads(_formdb(url, "review", "report", key, "--format", "json").stdout)
    justify = [arg for rule in sorted({i["rule"] for i in items["open_items"]})
               for arg in ("--justify", f"{rule}=accepted for the first lab batch")]
    signed = sign(rita, key, "approved", *justify)
    assert signed.exit_code == 0, signed.stderr
    return key


def test_json_report_has_every_section(seeded_sqlite_url: str, tmp_path: Path) -> None:
    formula = tmp_path / "cream.toml"
    shutil.copyfile(CREAM, formula)
    key = _signed_run(seeded_sqlite_url, formula)
    shown = _formdb(seeded_sqlite_url, "review", "report", key, "--format", "json")
    assert shown.exit_code == 0, shown.stderr
    doc = json.loads(shown.stdout)
    assert list(doc) == ["header", "policy", "verdict", "science", "substances", "label",
                         "limits", "allergens", "margin_of_safety", "compatibility", "findings",
                         "finding_counts", "open_items", "signatures", "chain_heads",
                         "cautions"]
    head = doc["header"]
    assert head["run_key"] == key and head["run_hash"].startswith(key)
    assert (head["profile"], head["state"]) == ("strict", "current")
    assert {"formula_hash", "library_hash", "formdb_version", "created_at"} <= set(head)
    [limit] = [row for row in doc["limits"] if "V/29" in row["cited"]]
    assert limit["verdict"] == "within the limit" and limit["max_percent"] == 1.0
    assert "(list of 2009-11-30)" in limit["cited"]
    [mos] = [line for line in doc["margin_of_safety"]["lines"] if line["inci"] == "Phenoxyethanol"]
    assert mos["absorption_default"] is True and mos["percent"] == 0.8
    assert doc["label"]["text"].startswith("Aqua, Caprylic/Capric Triglyceride")
    assert doc["verdict"] == "open items"  # strict: the missing NOAELs are errors (MOS01)
    assert any(item["rule"] == "MOS01" for item in doc["open_items"])
    assert [(s["signer"], s["meaning"], s["check"]) for s in doc["signatures"]] == [
        ("Dr. Rita Reviewer", "approved", "valid")]
    [signature] = doc["signatures"]  # every open item is waived, in writing, in the report
    assert [w["item"] for w in signature["waivers"]] == [o["item"] for o in doc["open_items"]]
    assert {w["justification"] for w in signature["waivers"]} == {
        "accepted for the first lab batch"}
    assert (head["profile_origin"], head["kind"], head["verified"]) == (
        "packaged", "signable", True)
    assert len(head["profile_hash"]) == 64
    assert [s["title"] for s in doc["science"]] == ["HLB balance", "Emulsion type",
                                                    "Dispersed phase"]
    assert {c["chain"] for c in doc["chain_heads"]} >= {"change_log", "review_runs",
                                                        "review_signatures"}
    assert all(c["intact"] for c in doc["chain_heads"])
    assert not any("seed_data" in c or ".csv" in c for c in doc["cautions"])
    assert any("ethics committee" in c for c in doc["cautions"])
    assert any("not a safety assessment" in c for c in doc["cautions"])


def test_html_escapes_a_script_in_the_formula_name(seeded_sqlite_url: str,
                                                   tmp_path: Path) -> None:
    hostile = tmp_path / "hostile.toml"
    hostile.write_text(CREAM.read_text(encoding="utf-8").replace(
        'name = "Larkspur LB-G01 day cream"', 'name = "<script>alert(1)</script> cream"'),
        encoding="utf-8")
    key = _signed_run(seeded_sqlite_url, hostile)
    out = tmp_path / "report.html"
    done = _formdb(seeded_sqlite_url, "review", "report", key, "--out", str(out))
    assert done.exit_code == 0, done.stderr
    page = out.read_text(encoding="utf-8")
    assert "<script" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt; cream" in page
    assert "Dr. Rita Reviewer" in page and "@page" in page
    # the footer's CSS string carries the formula name escaped: nothing in it ends the string
    footer = page[page.index("@bottom-left"):page.index("@bottom-right")]
    assert "<" not in footer and "\\00003c" in footer


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_screenshot_script_renders_a_png_and_a_pdf(seeded_sqlite_url: str, tmp_path: Path) -> None:
    chromium()
    formula = tmp_path / "cream.toml"
    shutil.copyfile(CREAM, formula)
    key = _signed_run(seeded_sqlite_url, formula)
    page, png = tmp_path / "report.html", tmp_path / "report.png"
    assert _formdb(seeded_sqlite_url, "review", "report", key, "--out", str(page)).exit_code == 0
    subprocess.run([str(ROOT / "scripts" / "screenshot_report.sh"), str(page), str(png),
                    "1000x1400"], check=True, timeout=120, capture_output=True)
    data = png.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 10_000
    pdf = tmp_path / "report.pdf"  # the same script prints the filed copy to PDF
    subprocess.run([str(ROOT / "scripts" / "screenshot_report.sh"), str(page), str(pdf)],
                   check=True, timeout=120, capture_output=True)
    assert pdf.read_bytes()[:5] == b"%PDF-"
