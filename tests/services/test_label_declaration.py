"""``formdb label FILE``: the label's ingredient list.

Order: Regulation (EC) No 1223/2009 Art. 19(1)(g) as the issue states it (from memory: above 1 %
in descending order of weight, then the rest in any order, colourants after); allergens above
0.001 % leave-on / 0.01 % rinse-off named (Annex III; regulatory.md section 1.3, found-P/S).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from formdb.errors import ConfigError
from formdb.services.checking.labelling import declaration
from tests.helpers import run_formdb
from tests.rules.library import formula, reference


def test_order_names_and_allergens() -> None:
    mini = formula("cream", [("Aqua", 60.0), ("Glycerin", 5.0), ("CI 77491", 0.5),
                             ("Paraffinum Liquidum", 20.0), ("Phenoxyethanol", 1.0),
                             ("Limonene", 0.005), ("Water", 8.495), ("Linalool", 0.0005),
                             ("Mineral Oil", 5.0)])
    result = declaration(mini, reference())
    # Water and Aqua are one ingredient, declared by its INCI name: 68.495 %; Mineral Oil is
    # Paraffinum Liquidum: 25 %; Phenoxyethanol at exactly 1 % joins the unordered rest
    assert [e.name for e in result.entries] == [
        "Water", "Paraffinum Liquidum", "Glycerin", "Phenoxyethanol", "Limonene", "Linalool",
        "CI 77491"]
    by_name = {e.name: e for e in result.entries}
    assert by_name["Water"].percent == pytest.approx(68.495)
    assert by_name["Water"].given_as == ("Aqua", "Water")
    assert by_name["Phenoxyethanol"].group == "1 % or less"
    assert by_name["CI 77491"].group == "colourant"
    # leave-on: Limonene 0.005 % > 0.001 % is named; Linalool 0.0005 % is not above
    assert result.allergens_named == ("Limonene",)
    assert result.text.startswith("Water, Paraffinum Liquidum, Glycerin")


def test_rinse_off_threshold_is_ten_times_higher() -> None:
    mini = formula("wash", [("Water", 89.995), ("Sodium Lauryl Sulfate", 10.0),
                            ("Limonene", 0.005)], category="rinse-off")
    assert declaration(mini, reference()).allergens_named == ()


def test_an_unknown_jurisdiction_is_refused() -> None:
    with pytest.raises(ConfigError, match="no label naming rules for jurisdiction 'XX'"):
        declaration(formula("x", [("Water", 100.0)]), reference(), "XX")


WASH = '''name = "Larkspur LB-S03 shower gel"
category = "rinse-off"

[[ingredients]]
inci = "Water"
percent = 81.46

[[ingredients]]
inci = "Sodium Laureth Sulfate"
percent = 10.0

[[ingredients]]
inci = "Cocamidopropyl Betaine"
percent = 8.0

[[ingredients]]
inci = "Fragrance"
percent = 0.5

[[ingredients]]
inci = "Limonene"
percent = 0.03

[[ingredients]]
inci = "Linalool"
percent = 0.01
'''


def test_the_command_prints_the_declaration(seeded_sqlite_url: str, tmp_path: Path) -> None:
    path = tmp_path / "wash.toml"
    path.write_text(WASH, encoding="utf-8")
    done = run_formdb(["--db", seeded_sqlite_url, "label", str(path)])
    assert done.exit_code == 0, done.stderr
    # the seed library's INCI names: Aqua for Water, Parfum for Fragrance; rinse-off 0.01 %:
    # Limonene 0.03 % is named, Linalool 0.01 % is not above the threshold
    assert ("Ingredients: Aqua, Sodium Laureth Sulfate, Cocamidopropyl Betaine, Parfum, "
            "Limonene, Linalool") in done.stdout
    assert "Allergens named (above the labelling threshold): Limonene" in done.stdout
    bad = tmp_path / "bad.toml"
    bad.write_text(WASH.replace('"Linalool"', '"Larkspur Unknown Ester"'), encoding="utf-8")
    refused = run_formdb(["--db", seeded_sqlite_url, "label", str(bad)])
    assert refused.exit_code == 2
    assert "unknown ingredient 'Larkspur Unknown Ester'" in refused.stderr
    assert "Traceback" not in refused.stderr


def test_allergens_declared_by_a_mixture_are_named() -> None:
    # Parfum's demo allergen certificate (tests/rules/library.toml): Limonene 2 % of it, so
    # 0.5 % Parfum carries 0.01 % Limonene (> 0.001 % leave-on) and 0.0005 % Linalool (not above)
    mini = formula("cream", [("Water", 94.5), ("Glycerin", 5.0), ("Fragrance", 0.5)])
    result = declaration(mini, reference())
    assert [e.name for e in result.entries] == ["Water", "Glycerin", "Parfum", "Limonene"]
    assert result.allergens_named == ("Limonene",)
    limonene = result.entries[-1]
    assert limonene.percent == pytest.approx(0.01)
    assert limonene.given_as == ("line 3 (Fragrance): 2 % of 0.5 %",)


def test_a_declared_blend_is_declared_as_its_constituents() -> None:
    # Art. 19(1)(g) lists ingredients, not supplier blends: the invented demo blend "Sodium
    # Benzoate (and) Potassium Sorbate" (50:50, tests/rules/library.toml) at 0.8 % is declared as
    # 0.4 % of each; Sodium Benzoate on a line of its own adds up with the blend's share
    mini = formula("cream", [("Water", 93.0), ("Glycerin", 5.0),
                             ("Sodium Benzoate (and) Potassium Sorbate", 0.8),
                             ("Sodium Benzoate", 0.2), ("Fragrance", 1.0)])
    result = declaration(mini, reference())
    names = [e.name for e in result.entries]
    assert "Sodium Benzoate (and) Potassium Sorbate" not in names
    by_name = {e.name: e for e in result.entries}
    assert by_name["Sodium Benzoate"].percent == pytest.approx(0.6)
    assert by_name["Potassium Sorbate"].percent == pytest.approx(0.4)
    assert by_name["Potassium Sorbate"].given_as == ("Sodium Benzoate (and) Potassium Sorbate",)
    # a fragrance stays one word on the label, its allergens named beside it
    assert "Parfum" in names and "Limonene" in names
