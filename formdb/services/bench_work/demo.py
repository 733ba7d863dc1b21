"""The bench part of ``formdb demo``: from a formula to a printable 20 kg weigh sheet, and from
a screening series to a stored, sourced required HLB that the next check uses.

Everything here is set in Larkspur Bench Laboratories, an invented lab: its price quotes and the
observations of its screening series are invented for the demo (and say so); the arithmetic, the
fit and the check are formdb's own.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date
from pathlib import Path

from formdb.schemas.bench import ScreeningFit, ScreeningSeries, WeighSheet
from formdb.schemas.result import CheckResult
from formdb.services.bench_work.prices import add_price
from formdb.services.bench_work.screening import (
    fit_series,
    plan_series,
    record_observations,
    show_series,
)
from formdb.services.bench_work.weigh_sheets import weigh_sheet_for_file
from formdb.services.checking.flow import check_files
from formdb.store.library import Library

HAND_CREAM = "01-hand-cream.toml"
LOTION = "06-light-lotion-hlb-miss.toml"
SERIES = "LB-630 oil phase, sorbitan oleate / polysorbate 80"
# invented quotes of the invented lab: (INCI, EUR per kg, supplier, date)
DEMO_PRICES = (
    ("Aqua", 0.01, "Larkspur utilities", date(2026, 11, 2)),
    ("Glycerin", 1.90, "Larkspur stores", date(2026, 10, 14)),
    ("Paraffinum Liquidum", 2.10, "Larkspur stores", date(2026, 3, 1)),
    ("Paraffinum Liquidum", 2.35, "Larkspur stores", date(2026, 11, 20)),
    ("Polysorbate 60", 6.80, "Larkspur stores", date(2026, 9, 30)),
    ("Sorbitan Stearate", 7.40, "Larkspur stores", date(2026, 9, 30)),
)
DEMO_PEAK_HLB = 10.4  # where the invented observations peak


@dataclass(frozen=True)
class BenchDemo:
    sheet: WeighSheet
    series: ScreeningSeries
    fit: ScreeningFit
    before: CheckResult
    after: CheckResult


def demo_stability(hlb: float) -> float:
    """The invented stability score (0-10) of the demo series' blend at ``hlb``."""
    return round(1.0 + 8.0 * math.exp(-((hlb - DEMO_PEAK_HLB) ** 2) / (2 * 2.0 ** 2)), 1)


def run_bench_demo(library: Library, demo_folder: Path, *, user: str) -> BenchDemo:
    """Prices, the hand cream's 20 kg weigh sheet, then the lotion's screening series: plan,
    observations, fit, store, and the lotion checked before and after."""
    for inci, price, supplier, quoted in DEMO_PRICES:
        add_price(library, inci, price, "EUR", supplier, user=user, quoted_on=quoted,
                  note="invented quote of the demo lab")
    sheet = weigh_sheet_for_file(library, demo_folder / HAND_CREAM, 20.0,
                                 evaporation_percent=2.0)
    lotion = demo_folder / LOTION
    before = check_files(library, [lotion])[0]
    series = plan_series(library, SERIES, user=user, formula=lotion, low="Sorbitan Oleate",
                         high="Polysorbate 80", start=6.0, stop=14.0, step=1.0,
                         oil_percent=19.0, emulsifier_percent=4.0, batch_g=200.0)
    for blend in series.blends:
        record_observations(library, SERIES, blend.number,
                            {"stability": demo_stability(blend.hlb)}, user=user,
                            after_hours=24.0, note="invented observation of the demo lab")
    fit = fit_series(library, SERIES, measure="stability", store=True, user=user)
    after = check_files(library, [lotion])[0]
    return BenchDemo(sheet=sheet, series=show_series(library, SERIES), fit=fit, before=before,
                     after=after)
