"""``formdb check --format json`` follows DESIGN.md section 3 exactly.

One formula: one object; several: an array. The keys formula, predicted_type, blend_hlb,
required_hlb, dispersed_fraction and findings (rule, severity, message, ingredients) always
exist; the three numbers are null where they cannot be computed; dispersed_fraction is the
VOLUME fraction of the dispersed phase.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from formdb.report import render
from formdb.report.cautions import cautions
from tests.helpers import run_formdb
from tests.report.factory import formula_toml, result

CONTRACT = ("formula", "predicted_type", "blend_hlb", "required_hlb", "dispersed_fraction",
            "findings")
FINDING_KEYS = ("rule", "severity", "message", "ingredients")


def _check(url: str, folder: Path, formulas: dict[str, list[tuple[str, float]]],
           **keys: object) -> object:
    paths = []
    for stem, lines in formulas.items():
        path = folder / f"{stem}.toml"
        path.write_text(formula_toml(f"Larkspur {stem}", lines, **keys), encoding="utf-8")
        paths.append(str(path))
    out = run_formdb(["--db", url, "check", *paths, "--format", "json"])
    assert out.exit_code in (0, 1), out.stderr
    return json.loads(out.stdout)


def _assert_contract(obj: dict) -> None:
    for key in CONTRACT:
        assert key in obj, key
    assert isinstance(obj["formula"], str)
    assert obj["predicted_type"] in ("O/W", "W/O", None)
    for key in ("blend_hlb", "required_hlb", "dispersed_fraction"):
        assert obj[key] is None or isinstance(obj[key], float), key
    if obj["dispersed_fraction"] is not None:
        assert 0.0 <= obj["dispersed_fraction"] <= 1.0
    assert isinstance(obj["findings"], list)
    for finding in obj["findings"]:
        for key in FINDING_KEYS:
            assert key in finding
        assert isinstance(finding["rule"], str) and finding["rule"]
        assert finding["severity"] in ("error", "warning", "info")
        assert isinstance(finding["message"], str) and finding["message"]
        assert isinstance(finding["ingredients"], list)
        assert all(isinstance(name, str) for name in finding["ingredients"])


LOTION = [("Aqua", 75.0), ("Glycerin", 3.0), ("Paraffinum Liquidum", 15.0),
          ("Sorbitan Oleate", 2.1), ("Polysorbate 80", 4.9)]


def test_one_formula_is_one_object(seeded_sqlite_url: str, tmp_path: Path) -> None:
    obj = _check(seeded_sqlite_url, tmp_path, {"lotion": LOTION}, intended_type="O/W")
    assert isinstance(obj, dict)
    _assert_contract(obj)
    assert list(obj)[:6] == list(CONTRACT)  # the contract keys come first
    # 2.1 % sorbitan oleate (4.3) + 4.9 % polysorbate 80 (15.0) = 30/70: HLB 11.79
    # (PMC4137601 Table 2)
    assert obj["blend_hlb"] == pytest.approx(11.79, abs=0.01)
    assert obj["predicted_type"] == "O/W"
    assert isinstance(obj["required_hlb"], float)


def test_several_formulas_are_an_array(seeded_sqlite_url: str, tmp_path: Path) -> None:
    data = _check(seeded_sqlite_url, tmp_path, {"one": LOTION, "two": LOTION},
                  intended_type="O/W")
    assert isinstance(data, list) and len(data) == 2
    for obj in data:
        _assert_contract(obj)


def test_no_emulsifier_gives_null_blend_hlb(seeded_sqlite_url: str, tmp_path: Path) -> None:
    obj = _check(seeded_sqlite_url, tmp_path,
                 {"bare": [("Aqua", 80.0), ("Paraffinum Liquidum", 20.0)]},
                 intended_type="O/W")
    _assert_contract(obj)
    assert obj["blend_hlb"] is None
    assert obj["findings"], "a formula with oil and water but no emulsifier has findings"


def test_no_oil_with_required_hlb_gives_null_required_hlb(seeded_sqlite_url: str,
                                                          tmp_path: Path) -> None:
    obj = _check(seeded_sqlite_url, tmp_path,
                 {"gel": [("Aqua", 92.0), ("Glycerin", 5.0), ("Polysorbate 20", 3.0)]})
    _assert_contract(obj)
    assert obj["required_hlb"] is None
    assert isinstance(obj["blend_hlb"], float)


def test_no_type_gives_null_dispersed_fraction() -> None:
    data = json.loads(render([result(lines=[("Water", 95.0), ("Glycerin", 5.0)])], "json"))
    _assert_contract(data)
    assert data["predicted_type"] is None and data["dispersed_fraction"] is None
    assert data["blend_hlb"] is None and data["required_hlb"] is None


def test_dispersed_fraction_is_by_volume() -> None:
    # 20 g oil of 0.85 g/mL in 80 g water-phase mass: by volume 23.5/(23.5 + 77.9) = 0.232...
    data = json.loads(render([result(intended_type="O/W")], "json"))
    phases = data["facts"]["phases"]
    by_volume = phases["oil_volume_ml"] / (phases["oil_volume_ml"] + phases["water_volume_ml"])
    by_mass = phases["oil_percent"] / (phases["oil_percent"] + phases["water_percent"])
    assert data["dispersed_fraction"] == pytest.approx(by_volume, abs=1e-3)
    assert abs(data["dispersed_fraction"] - by_mass) > 0.01


def test_cautions_are_carried_and_match_every_format() -> None:
    checked = [result(intended_type="O/W")]
    data = json.loads(render(checked, "json"))
    assert data["cautions"] == cautions(checked)
    flat_text = " ".join(render(checked, "text").replace("|", " ").split())
    for caution in data["cautions"]:
        assert " ".join(caution.split()) in flat_text
    html = render(checked, "html")
    for caution in data["cautions"]:
        assert caution.replace("'", "&#39;") in html


def test_hlb_numbers_are_rounded_to_two_decimals() -> None:
    data = json.loads(render([result(intended_type="O/W")], "json"))
    assert data["blend_hlb"] == round(data["blend_hlb"], 2)
    assert data["dispersed_fraction"] == round(data["dispersed_fraction"], 3)
