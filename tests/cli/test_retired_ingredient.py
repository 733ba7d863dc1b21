"""A formula that uses a retired ingredient is told so (RET01), on a line and through a
declared blend; restoring the ingredient silences it. The expectation is the tool's own
meaning of `formdb ingredient retire` (taken out of use, kept for old formulas)."""

from __future__ import annotations

import shlex
from pathlib import Path

import pytest

from tests.helpers import check_findings, run_formdb

FORMULA = """name = "Larkspur hand cream, draft 5"
category = "leave-on"
[[ingredients]]
inci = "Water"
percent = 93.0
[[ingredients]]
inci = "Polysorbate 60"
percent = 3.0
[[ingredients]]
inci = "Glycerin"
percent = 4.0
"""


def _ret01(url: str, formula: Path) -> list[dict[str, object]]:
    return [f for f in check_findings(url, formula) if f["rule"] == "RET01"]


@pytest.mark.slow
def test_a_retired_ingredient_is_named_until_it_is_restored(seeded_sqlite_url: str,
                                                            tmp_path: Path) -> None:
    url = seeded_sqlite_url
    formula = tmp_path / "cream.toml"
    formula.write_text(FORMULA, encoding="utf-8")
    assert _ret01(url, formula) == []
    retired = run_formdb(["--db", url, "ingredient", "retire", "Polysorbate 60",
                          "--reason", "supplier grade discontinued"])
    assert retired.exit_code == 0, retired.stderr
    (finding,) = _ret01(url, formula)
    assert finding["severity"] == "warning" and finding["ingredients"] == ["Polysorbate 60"]
    assert "retired in the library" in str(finding["message"])
    assert "line 2" in str(finding["message"])
    # the advice's command works as written
    text = run_formdb(["--db", url, "check", str(formula)])
    assert "formdb ingredient restore 'Polysorbate 60'" in " ".join(text.stdout.split())
    restored = run_formdb(["--db", url, *shlex.split("ingredient restore 'Polysorbate 60'"),
                           "--reason", "grade back in stock"])
    assert restored.exit_code == 0, restored.stderr
    assert _ret01(url, formula) == []


@pytest.mark.slow
def test_a_retired_constituent_of_a_declared_blend_is_named(seeded_sqlite_url: str,
                                                            tmp_path: Path) -> None:
    url = seeded_sqlite_url
    blend = "Polysorbate 60 (and) Sorbitan Stearate"
    added = run_formdb(["--db", url, "ingredient", "add", blend, "--role", "emulsifier",
                        "--reason", "supplier blend received"])
    assert added.exit_code == 0, added.stderr
    declared = run_formdb(["--db", url, "mixture", "set", blend, "--part", "Polysorbate 60=70",
                           "--part", "Sorbitan Stearate=30", "--source", "rule-of-thumb",
                           "--reason", "supplier specification"])
    assert declared.exit_code == 0, declared.stderr
    assert run_formdb(["--db", url, "ingredient", "retire", "Sorbitan Stearate",
                       "--reason", "replaced"]).exit_code == 0
    formula = tmp_path / "cream.toml"
    formula.write_text(FORMULA.replace('"Polysorbate 60"', f'"{blend}"'), encoding="utf-8")
    (finding,) = _ret01(url, formula)
    assert finding["ingredients"] == ["Sorbitan Stearate"]
    assert f"in {blend} (line 2)" in str(finding["message"])
