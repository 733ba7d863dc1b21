"""SED and MoS against the SCCS Notes of Guidance formula with the Table 3A figures.

SED = E_product x C/100 x DAp/100; MoS = PoD_sys / SED; PoD_sys = NOAEL x oral bioavailability
(SCCS Notes of Guidance, 12th revision, SCCS/1647/22; regulatory.md section 2.1, found-S).
E_product: Table 3A p. 27 (regulatory.md section 2.2, found-secondary: a structured summary).
"""

from __future__ import annotations

import csv

import pytest

from formdb.resources import seed_data_dir
from formdb.science.exposure import (
    exposure_per_kg,
    margin_of_safety,
    systemic_exposure_dose,
    systemic_pod,
)


def _table() -> dict[str, dict[str, str]]:
    with open(seed_data_dir() / "exposure.csv", newline="", encoding="utf-8") as handle:
        return {row["product"]: row for row in csv.DictReader(handle)}


def test_seeded_rows_are_the_table_3a_figures() -> None:
    rows = _table()
    # Table 3A p. 27 (via regulatory.md 2.2): E_product per kg bw, after retention
    assert float(rows["body lotion"]["exposure_mg_kg_bw_day"]) == 123.20
    assert float(rows["face cream"]["exposure_mg_kg_bw_day"]) == 24.14
    assert float(rows["hand cream"]["exposure_mg_kg_bw_day"]) == 32.70
    assert float(rows["shower gel"]["retention_factor"]) == 0.01
    assert float(rows["shower gel"]["exposure_mg_kg_bw_day"]) == 2.79


@pytest.mark.parametrize(("product", "percent", "dap", "sed"), [
    # worked by hand: 123.20 x 1/100 x 50/100 = 0.616
    ("body lotion", 1.0, 50.0, 0.616),
    # 24.14 x 0.8/100 x 50/100 = 0.09656
    ("face cream", 0.8, 50.0, 0.09656),
    # 32.70 x 0.5/100 x 100/100 = 0.1635 (100 % absorption, the default of other guidance)
    ("hand cream", 0.5, 100.0, 0.1635),
    # 2.79 x 1/100 x 50/100 = 0.01395 (rinse-off: retention 0.01 is inside E_product)
    ("shower gel", 1.0, 50.0, 0.01395),
])
def test_sed_from_table_3a(product: str, percent: float, dap: float, sed: float) -> None:
    e_product = float(_table()[product]["exposure_mg_kg_bw_day"])
    assert systemic_exposure_dose(e_product, percent, dap) == pytest.approx(sed, rel=1e-12)


def test_mos_of_phenoxyethanol_in_a_body_lotion() -> None:
    # NOAEL 357 mg/kg bw/day: from memory (SCCS/1575/16 as recalled)
    sed = systemic_exposure_dose(123.20, 1.0, 50.0)
    assert margin_of_safety(systemic_pod(357.0, 100.0), sed) == pytest.approx(579.545, abs=1e-3)
    # with the NoG default oral bioavailability of 50 % (from memory): half the margin
    assert margin_of_safety(systemic_pod(357.0, 50.0), sed) == pytest.approx(289.773, abs=1e-3)


def test_grams_per_day_and_body_weight() -> None:
    # hair conditioner, Table 3B p. 28: 0.04 g/day after retention; 60 kg default adult
    assert exposure_per_kg(0.04, 60.0) == pytest.approx(0.66667, abs=1e-5)


@pytest.mark.parametrize(("call", "words"), [
    (lambda: systemic_exposure_dose(123.2, 1.0, -5.0), "dermal absorption"),
    (lambda: systemic_exposure_dose(123.2, 120.0, 50.0), "concentration"),
    (lambda: systemic_exposure_dose(-1.0, 1.0, 50.0), "E_product"),
    (lambda: systemic_pod(0.0, 50.0), "point of departure"),
    (lambda: systemic_pod(357.0, 0.0 - 1), "oral bioavailability"),
    (lambda: exposure_per_kg(0.04, 0.0), "body weight"),
])
def test_bad_values_are_refused(call, words: str) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(ValueError, match=words):
        call()


def test_no_exposure_has_no_margin() -> None:
    assert margin_of_safety(357.0, 0.0) is None
