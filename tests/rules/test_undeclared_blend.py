"""MIX01 reads "(and)" as the INCI convention for a blend, and must not fire on a real single
INCI name: every INCI name of the seed and of the Commission's annex exports of 31/10/2025 that
holds "(and)" is checked here (the exports hold one, Annex V/59's "CITRIC ACID (AND) SILVER
CITRATE", an entry of its own: once the annex is imported the entry names it and MIX01 is quiet).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from formdb.rules.undeclared_blend import blend_members
from formdb.services.lists.importing import read_export
from tests.helpers import ANNEX_EXPORTS, needs_annex_exports, run_formdb
from tests.seed.tables import read_seed


def test_blend_members() -> None:
    assert blend_members("Phenoxyethanol (and) Ethylhexylglycerin") == [
        "Phenoxyethanol", "Ethylhexylglycerin"]
    assert blend_members("CETEARYL ALCOHOL (AND) POLYSORBATE 60 ( and )Ceteth-20") == [
        "CETEARYL ALCOHOL", "POLYSORBATE 60", "Ceteth-20"]
    for single in ("Phenoxyethanol", "Sodium Andrographolide", "Sand (andesite) powder",
                   "(and) Glycerin", "Glycerin (and)", "Caprylic/Capric Triglyceride"):
        assert blend_members(single) == [], single


def test_no_seed_name_reads_as_a_blend() -> None:
    """The seed declares no mixtures: a blend name added to it must come with constituents."""
    names = [n.strip() for row in read_seed("ingredients.csv")
             for n in [row["inci_name"], *row["synonyms"].split(";")] if n.strip()]
    assert len(names) > 100
    assert [n for n in names if blend_members(n)] == []


@needs_annex_exports()
def test_the_annex_exports_name_one_blend_and_as_its_own_entry() -> None:
    found = {}
    for path in sorted(ANNEX_EXPORTS.glob("COSING_Annex_*_v2.txt")):
        for entry in read_export(path).entries:
            for name in entry.inci_names:
                if blend_members(name):
                    found[name] = f"{entry.annex}/{entry.ref}"
    assert found == {"CITRIC ACID (AND) SILVER CITRATE": "V/59"}


FORMULA = """name = "Larkspur eye-free toner, draft 2"
category = "leave-on"
[[ingredients]]
inci = "Water"
percent = 99.9
[[ingredients]]
inci = "Citric Acid (and) Silver Citrate"
percent = 0.1
"""


@needs_annex_exports()
@pytest.mark.slow
def test_an_entry_that_names_the_blend_keeps_mix01_quiet(seeded_sqlite_url: str,
                                                          tmp_path: Path) -> None:
    """Annex V imported: the entry V/59 names "CITRIC ACID (AND) SILVER CITRATE" (max 0.2 %),
    LIM03 judges it whole, and MIX01 does not ask for its constituents."""
    url = seeded_sqlite_url
    imported = run_formdb(["--db", url, "lists", "import",
                           str(ANNEX_EXPORTS / "COSING_Annex_V_v2.txt")])
    assert imported.exit_code == 0, imported.stderr
    formula = tmp_path / "toner.toml"
    formula.write_text(FORMULA, encoding="utf-8")
    result = run_formdb(["--db", url, "check", str(formula), "--format", "json"])
    assert result.exit_code in (0, 1), result.stderr
    rules = [f["rule"] for f in json.loads(result.stdout)["findings"]]
    assert "LIM03" in rules and "MIX01" not in rules
