"""ALK01 cites the list entry its verdict rests on, in the entry's own words: the Commission's
Annex III export of 31/10/2025 imported, entry 15a (potassium or sodium hydroxide) reads
"(d) Other uses as pH adjuster" with "(d) up to pH 11" in its Other cell (read in
shared/regulatory/eu-cosing-annexes-2025-10-31; the export also runs entry 15d's words into that
cell, and the finding quotes it as written, never corrected)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.helpers import ANNEX_EXPORTS, needs_annex_exports, run_formdb

# stearic acid 15 % takes 2.11 g of sodium hydroxide (284.48 and 40.00 g/mol, calc), so 0.39 % is
# free: about 0.117 mol/L in the water phase, pH 12.57-13.07 (14 + log10[OH-], Kw 1e-14 at
# 25 degC), which a stated pH 9 cannot be and Annex III/15a (d)'s pH 11 does not allow
SOAP_BATCH = """name = "Larkspur soap base, draft 1"
category = "rinse-off"
ph = 9
[[ingredients]]
inci = "Water"
percent = 82.5
[[ingredients]]
inci = "Stearic Acid"
percent = 15
[[ingredients]]
inci = "Sodium Hydroxide"
percent = 2.5
"""


@needs_annex_exports()
@pytest.mark.slow
def test_free_alkali_cites_annex_iii_15a_in_its_words(seeded_sqlite_url: str,
                                                      tmp_path: Path) -> None:
    imported = run_formdb(["--db", seeded_sqlite_url, "lists", "import",
                           str(ANNEX_EXPORTS / "COSING_Annex_III_v2.txt")])
    assert imported.exit_code == 0, imported.stderr
    formula = tmp_path / "soap.toml"
    formula.write_text(SOAP_BATCH, encoding="utf-8")
    result = run_formdb(["--db", seeded_sqlite_url, "check", str(formula), "--format", "json"])
    assert result.exit_code in (0, 1), result.stderr
    (alk,) = [f for f in json.loads(result.stdout)["findings"] if f["rule"] == "ALK01"]
    assert "the stated pH 9 cannot hold" in alk["message"]
    assert "EU Annex III/15a part (d)" in alk["message"]
    assert '"Other uses as pH adjuster' in alk["message"]
    assert '"up to pH 11' in alk["message"]
    assert "is above it" in alk["message"]
    assert alk["values"]["entry_ph_max"] == 11.0
