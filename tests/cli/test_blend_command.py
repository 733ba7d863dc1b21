"""``formdb blend``: named emulsifiers, a formula's own, and the errors, on the seed library."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from formdb.store import queries
from formdb.store.db import open_library, unit_of_work
from tests.helpers import library_state, run_formdb
from tests.report.factory import formula_toml

SPAN80_TWEEN80 = ["--using", "Sorbitan Oleate", "--using", "Polysorbate 80"]


def _blend(url: str, *args: str):
    return run_formdb(["--db", url, "blend", *args])


def _json(url: str, *args: str) -> dict:
    result = _blend(url, *args, "--format", "json")
    assert result.exit_code == 0, result.stderr
    return json.loads(result.stdout)


# PMC4137601 Table 2 (https://pmc.ncbi.nlm.nih.gov/articles/PMC4137601/table/tab2): polysorbate
# 80 (HLB 15.00) : sorbitan oleate (HLB 4.30) at 9:1, 8:2 and 7:3 w/w give HLB 13.93, 12.86 and
# 11.79, so each target must come back as that ratio.
@pytest.mark.parametrize(("target", "oleate", "polysorbate"),
                         [("11.79", 0.3, 0.7), ("12.86", 0.2, 0.8), ("13.93", 0.1, 0.9)])
def test_published_two_emulsifier_ratios(seeded_library_url: str, target: str, oleate: float,
                                         polysorbate: float) -> None:
    data = _json(seeded_library_url, "--target", target, *SPAN80_TWEEN80)
    members = {m["inci"]: m for m in data["members"]}
    assert members["Sorbitan Oleate"]["hlb"] == pytest.approx(4.3)
    assert members["Polysorbate 80"]["hlb"] == pytest.approx(15.0)
    assert members["Sorbitan Oleate"]["fraction"] == pytest.approx(oleate, abs=1e-3)
    assert members["Polysorbate 80"]["fraction"] == pytest.approx(polysorbate, abs=1e-3)
    assert data["blend_hlb"] == pytest.approx(float(target), abs=1e-2)
    assert "lever rule" in data["method"]


def test_text_output_shows_the_ratio_and_the_hlb_sources(seeded_library_url: str) -> None:
    result = _blend(seeded_library_url, "--target", "11.79", *SPAN80_TWEEN80, "--total", "5")
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert "30.0 %" in out and "70.0 %" in out  # PMC4137601 Table 2, 7:3
    assert "1.50" in out and "3.50" in out  # at 5 % w/w emulsifier
    assert "HLB sources:" in out and "Traceback" not in out


def test_unreachable_target_states_the_range(seeded_library_url: str) -> None:
    before = library_state(seeded_library_url)
    result = _blend(seeded_library_url, "--target", "17", *SPAN80_TWEEN80)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ")
    assert "4.3 to 15" in lines[0] and "17" in lines[0]
    assert result.stdout == ""
    assert library_state(seeded_library_url) == before


def test_unknown_emulsifier_suggests_names(seeded_library_url: str) -> None:
    result = _blend(seeded_library_url, "--target", "10", "--using", "Sorbitan Olate",
                    "--using", "Polysorbate 80")
    assert result.exit_code == 2
    assert "did you mean" in result.stderr and "Sorbitan Oleate" in result.stderr


def _emulsifier_without_hlb(url: str) -> str | None:
    from sqlalchemy import select

    from formdb.store.models import Ingredient, IngredientRole
    engine = open_library(url)
    try:
        with unit_of_work(engine) as session:
            ids = session.scalars(select(IngredientRole.ingredient_id)
                                  .join(Ingredient, Ingredient.id == IngredientRole.ingredient_id)
                                  .where(IngredientRole.role == "emulsifier"))
            records = queries.records_by_id(session, list(ids))
    finally:
        engine.dispose()
    names = sorted(r.inci_name for r in records.values() if r.p.hlb is None)
    return names[0] if names else None


def test_emulsifier_without_hlb_is_named(seeded_library_url: str) -> None:
    name = _emulsifier_without_hlb(seeded_library_url)
    if name is None:
        pytest.skip("every seed emulsifier has an HLB")
    result = _blend(seeded_library_url, "--target", "10", "--using", name,
                    "--using", "Polysorbate 80")
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and name in lines[0] and "no HLB" in lines[0]


def test_ingredient_without_hlb_and_unknown_name_give_two_lines(seeded_library_url: str) -> None:
    result = _blend(seeded_library_url, "--target", "10", "--using", "Aqua", "--using",
                    "Polysorbat 80x", "--using", "Polysorbate 80")
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 2
    assert "Aqua" in lines[0] and "no HLB" in lines[0] and "unknown" in lines[1]


def test_one_using_is_a_usage_error(seeded_library_url: str) -> None:
    result = _blend(seeded_library_url, "--target", "10", "--using", "Polysorbate 80")
    assert result.exit_code == 2 and "--using" in result.stderr


def test_three_emulsifiers_least_change_from_equal_shares(seeded_library_url: str) -> None:
    names = ["Sorbitan Oleate", "Sorbitan Stearate", "Polysorbate 80"]
    data = _json(seeded_library_url, "--target", "10", *[a for n in names for a in ("--using", n)])
    hlbs = np.array([m["hlb"] for m in data["members"]])
    got = np.array([m["fraction"] for m in data["members"]])
    # Outside check: the least-squares correction of the equal shares s onto the two equality
    # constraints A f = b (sum 1, HLB average = target) is f = s + A^T (A A^T)^-1 (b - A s), the
    # textbook minimum-norm solution; it is the answer when every f stays positive.
    s = np.full(3, 1 / 3)
    a = np.vstack([np.ones(3), hlbs])
    b = np.array([1.0, 10.0])
    expected = s + a.T @ np.linalg.solve(a @ a.T, b - a @ s)
    assert (expected > 0).all()
    assert got == pytest.approx(expected, abs=2e-3)
    assert got.sum() == pytest.approx(1.0, abs=2e-3)
    assert data["blend_hlb"] == pytest.approx(10.0, abs=1e-2)
    assert "least change from equal shares" in data["method"]


def _formula(folder: Path, lines: list[tuple[str, float]], **keys: object) -> Path:
    path = folder / "lotion.toml"
    path.write_text(formula_toml("Larkspur LB-950 lotion", lines, **keys), encoding="utf-8")
    return path


# Wangpradit et al., OCL 29 (2022) 29, Table 5: 3 % emulsifier of polysorbate 80 (HLB 15) with
# sorbitan stearate (HLB 4.7) for a required HLB of 10.33 is 1.64 % and 1.36 %.
WANGPRADIT_LINES = [("Aqua", 82.0), ("Isopropyl Myristate", 15.0), ("Polysorbate 80", 1.5),
                    ("Sorbitan Stearate", 1.5)]


def test_file_with_target_reproduces_the_published_split(seeded_library_url: str,
                                                         tmp_path: Path) -> None:
    path = _formula(tmp_path, WANGPRADIT_LINES, intended_type="O/W")
    data = _json(seeded_library_url, str(path), "--target", "10.33")
    members = {m["inci"]: m for m in data["members"]}
    assert data["total_percent"] == pytest.approx(3.0)
    assert members["Polysorbate 80"]["percent"] == pytest.approx(1.64, abs=0.005)
    assert members["Sorbitan Stearate"]["percent"] == pytest.approx(1.36, abs=0.005)
    assert members["Polysorbate 80"]["present_percent"] == pytest.approx(1.5)


def test_file_solves_for_the_required_hlb_as_check_does(seeded_library_url: str,
                                                        tmp_path: Path) -> None:
    path = _formula(tmp_path, WANGPRADIT_LINES, intended_type="O/W")
    checked = run_formdb(["--db", seeded_library_url, "check", str(path), "--format", "json"])
    facts = json.loads(checked.stdout)
    solution = facts["facts"]["blend_solution"]
    data = _json(seeded_library_url, str(path))
    assert data["target"] == pytest.approx(facts["required_hlb"], abs=1e-2)
    assert "required HLB (O/W, intended)" in data["target_from"]
    by_name = {m["inci"]: m["percent"] for m in data["members"]}
    for name, percent in zip(solution["emulsifiers"], solution["percents"], strict=True):
        assert by_name[name] == pytest.approx(percent, abs=1e-3)
    # the lever rule by hand from the HLBs the report used
    low, high = sorted(data["members"], key=lambda m: m["hlb"])
    x_low = (data["target"] - high["hlb"]) / (low["hlb"] - high["hlb"])
    assert low["fraction"] == pytest.approx(x_low, abs=2e-3)
    assert data["blend_hlb"] == pytest.approx(data["target"], abs=1e-2)


def test_file_without_required_hlb_exits_2(seeded_library_url: str, tmp_path: Path) -> None:
    path = _formula(tmp_path, [("Aqua", 95.0), ("Polysorbate 80", 3.0),
                               ("Sorbitan Oleate", 2.0)])
    result = _blend(seeded_library_url, str(path))
    assert result.exit_code == 2
    assert str(path) in result.stderr and "required HLB" in result.stderr
    assert "Traceback" not in result.stderr


def test_file_whose_emulsifiers_cannot_reach_exits_2(seeded_library_url: str,
                                                     tmp_path: Path) -> None:
    path = _formula(tmp_path, [("Aqua", 80.0), ("Isopropyl Myristate", 15.0),
                               ("Sorbitan Oleate", 2.5), ("Sorbitan Stearate", 2.5)],
                    intended_type="O/W")
    result = _blend(seeded_library_url, str(path))
    assert result.exit_code == 2
    assert "cannot be reached" in result.stderr and "4.3 to 4.7" in result.stderr


def test_file_and_using_together_is_a_usage_error(seeded_library_url: str,
                                                  tmp_path: Path) -> None:
    path = _formula(tmp_path, WANGPRADIT_LINES)
    result = _blend(seeded_library_url, str(path), *SPAN80_TWEEN80)
    assert result.exit_code == 2 and "not both" in result.stderr


def test_blend_of_a_cleanser_says_it_is_not_an_emulsion(seeded_library_url: str,
                                                         tmp_path: Path) -> None:
    # surfactants outweigh the oil: a surfactant solution has no required HLB to solve for
    path = tmp_path / "wash.toml"
    path.write_text(formula_toml("Larkspur LB-413 wash", [
        ("Aqua", 83.0), ("Sodium Laureth Sulfate", 10.0), ("Cocamidopropyl Betaine", 4.0),
        ("Sorbitan Oleate", 1.0), ("Helianthus Annuus Seed Oil", 2.0)]), encoding="utf-8")
    result = run_formdb(["--db", seeded_library_url, "blend", str(path)])
    assert result.exit_code == 2
    assert "surfactant solution" in result.stderr and "not an emulsion" in result.stderr


def test_on_a_terminal_the_colours_work_and_the_data_is_escaped(
        seeded_library_url: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """On a terminal the blend is coloured: the colour codes reach it as codes (they were
    printed as the text '\\u001b[1m' by the terminal filter), while a control sequence in the
    library's text (an HLB source's citation) is still escaped."""
    url = seeded_library_url
    sneaky = "Larkspur handbook \x1b]0;owned\x07 table 3"
    assert run_formdb(["--db", url, "source", "edit", "hpe6", "--citation", sneaky,
                       "--reason", "test"]).exit_code == 0
    monkeypatch.setattr("formdb.cli.checking._wants_color", lambda out, fmt: True)
    for args in (SPAN80_TWEEN80, ["--search", "--top", "2"]):
        result = _blend(url, "--target", "12", *args)
        assert result.exit_code == 0, result.stderr
        assert "\x1b[1m" in result.stdout and "\\u001b[1m" not in result.stdout
    shown = _blend(url, "--target", "12", "--using", "Polysorbate 60", "--using",
                   "Sorbitan Stearate")
    assert "\\u001b]0;owned\\u0007 table 3" in shown.stdout
    assert "\x1b]" not in shown.stdout and "\x07" not in shown.stdout
