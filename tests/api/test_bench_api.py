"""formdb.api at the bench: weigh sheets, prices and screening series give the same records the
``formdb batch`` / ``price`` / ``screen`` commands print from.

Masses are % w/w x batch worked by hand; the series' observations are invented for the test (a
stability peak placed at HLB 10.6; the fit's statistics are checked against known optima in
tests/science/test_screening_fit.py); the pair follows the lever rule on the seed's HLB values
(sorbitan stearate 4.7, polysorbate 60 14.9; Griffin 1954, science.md section 1).
"""

from __future__ import annotations

import csv
import io
import math
from datetime import date
from pathlib import Path

import pytest

from formdb import api
from formdb.errors import InvalidData
from formdb.report.weigh_sheet import render_sheet
from tests.helpers import library_state, run_formdb

CREAM = Path(__file__).parents[1] / "fixtures" / "bench_cream.toml"
SERIES = "Larkspur mineral oil/IPM 70:30 (api)"
OILS = [("Paraffinum Liquidum", 70.0), ("Isopropyl Myristate", 30.0)]


def test_weigh_sheet_is_the_sheet_the_batch_command_prints(seeded_library_url: str) -> None:
    printed = run_formdb(["--db", seeded_library_url, "batch", str(CREAM), "--kg", "20",
                          "--format", "csv"])
    assert printed.exit_code == 0, printed.stderr
    with api.open_library(seeded_library_url) as library:
        sheet = api.weigh_sheet(library, CREAM, batch_kg=20)
        by_text = api.weigh_sheet(library, CREAM.read_text("utf-8"), batch_kg=20)
    rendered = render_sheet(sheet, "csv")
    assert isinstance(rendered, str)
    assert list(csv.DictReader(io.StringIO(rendered))) == \
        list(csv.DictReader(io.StringIO(printed.stdout)))
    assert by_text.groups == sheet.groups
    water = next(w for g in sheet.groups for w in g.lines if w.inci == "Aqua")
    assert water.target_g == pytest.approx(0.723 * 20_000)  # 72.3 % of 20 kg, by hand
    assert abs(sheet.weighed_total_g - sheet.planned_total_g) <= sheet.rounding_bound_g


def test_weigh_sheet_refuses_bad_balances_and_a_missing_batch_size(
        seeded_sqlite_url: str) -> None:
    with api.open_library(seeded_sqlite_url) as library:
        with pytest.raises(InvalidData, match="balances"):
            api.weigh_sheet(library, CREAM, batch_kg=20, balances=[(0.0, 200.0)])
        with pytest.raises(InvalidData, match="one of them"):
            api.weigh_sheet(library, batch_kg=20)


def test_prices_cost_the_sheet(seeded_sqlite_url: str) -> None:
    with api.open_library(seeded_sqlite_url) as library:
        quote = api.add_price(library, "Paraffinum Liquidum", 2.8, "EUR", "Northfield Oils",
                              quoted_on=date(2026, 11, 2))
        assert [p.price_per_kg for p in api.prices(library, "Paraffinum Liquidum")] == [2.8]
        sheet = api.weigh_sheet(library, CREAM, batch_kg=20)
    assert quote.supplier == "Northfield Oils"
    oil = next(w for g in sheet.groups for w in g.lines if w.inci == "Paraffinum Liquidum")
    assert oil.cost == pytest.approx(2.8 * oil.weighed_g / 1000)


def test_screening_series_plan_record_fit_store_and_check(seeded_library_url: str) -> None:
    with api.open_library(seeded_library_url) as library:
        planned = api.plan_screening(library, SERIES, low="Sorbitan Stearate",
                                     high="Polysorbate 60", oils=OILS, from_hlb=6, to_hlb=14,
                                     batch_g=200)
        assert len(planned.blends) == 9 and len(planned.sheets) == 9
        # HLB 10 from 4.7 and 14.9: (14.9 - 10) / 10.2 of 5 % = 2.402 % sorbitan stearate
        assert planned.blends[4].low_percent == pytest.approx(2.402, abs=5e-4)
        for blend in planned.blends:
            score = 1 + 8 * math.exp(-((blend.hlb - 10.6) ** 2) / (2 * 2.2 ** 2))
            api.record_screening(library, SERIES, blend.number, stability=round(score, 1),
                                 after_hours=24)
        shown = api.screening_series(library, SERIES)
        # blend 6 is HLB 11: 1 + 8 exp(-0.16 / 9.68) = 8.87, recorded as 8.9
        assert shown.blends[5].observations["stability"] == pytest.approx(8.9)
        fit = api.fit_screening(library, SERIES, store=True)
        assert abs(fit.required_hlb - 10.6) <= fit.uncertainty
        lotion = {"name": "api lotion", "category": "leave-on", "intended_type": "O/W",
                  "ingredients": [
                      {"inci": "Aqua", "percent": 75.0, "phase": "A"},
                      {"inci": "Paraffinum Liquidum", "percent": 14.0, "phase": "B"},
                      {"inci": "Isopropyl Myristate", "percent": 6.0, "phase": "B"},
                      {"inci": "Sorbitan Stearate", "percent": 1.9, "phase": "B"},
                      {"inci": "Polysorbate 60", "percent": 3.1, "phase": "B"}]}
        result = api.check(library, lotion)
    assert result.facts.required_hlb == pytest.approx(fit.required_hlb)


def test_a_flat_series_is_refused_and_nothing_is_stored(seeded_sqlite_url: str) -> None:
    with api.open_library(seeded_sqlite_url) as library:
        api.plan_screening(library, SERIES, low="Sorbitan Stearate", high="Polysorbate 60",
                           oils=OILS, from_hlb=6, to_hlb=14)
        for number in range(1, 10):
            api.record_screening(library, SERIES, number, stability=7)
    before = library_state(seeded_sqlite_url)
    with api.open_library(seeded_sqlite_url) as library, \
            pytest.raises(InvalidData, match="no required HLB fitted"):
        api.fit_screening(library, SERIES, store=True)
    assert library_state(seeded_sqlite_url) == before
