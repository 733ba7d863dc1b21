"""Records of the bench work: a batch's weigh sheet, ingredient prices, screening series.

Built by ``formdb.services.bench_work``, rendered by ``formdb.report.weigh_sheet`` and
``formdb.report.screening``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime


@dataclass(frozen=True)
class PriceRecord:
    """One quoted price of an ingredient: per kg, in a currency, from a supplier, on a date."""

    inci: str
    price_per_kg: float
    currency: str  # ISO 4217 code, e.g. EUR
    supplier: str
    quoted_on: date
    recorded_by: str
    recorded_at: datetime
    note: str | None = None
    id: int | None = None


@dataclass(frozen=True)
class StepView:
    """A process step as the sheet prints it (row counts from 1 in the file's order)."""

    row: int
    phases: tuple[str, ...]
    temperature_c: float | None
    mixing: str | None
    speed_rpm: float | None
    minutes: float | None
    note: str | None


@dataclass(frozen=True)
class WeighLine:
    """One line to weigh: the scaled mass, the mass read off the balance, and why."""

    line_no: int | None  # the formula's line; None for the evaporation allowance
    inci: str
    phase: str | None
    percent: float | None
    target_g: float
    weighed_g: float
    resolution_g: float
    capacity_g: float
    portions: int
    note: str | None = None
    supplier: str | None = None
    lot: str | None = None
    neutralised: str | None = None  # the soap this line forms in the batch, said in words
    price: PriceRecord | None = None
    cost: float | None = None  # in price.currency

    @property
    def rounding_g(self) -> float:
        return self.weighed_g - self.target_g

    @property
    def below_resolution(self) -> bool:
        return self.weighed_g == 0.0


@dataclass(frozen=True)
class PhaseGroup:
    """The lines of one phase, in the order the process first handles the phase."""

    phase: str | None  # None: lines without a phase
    first_step: StepView | None
    lines: tuple[WeighLine, ...]

    @property
    def target_g(self) -> float:
        return sum(w.target_g for w in self.lines)

    @property
    def weighed_g(self) -> float:
        return sum(w.weighed_g for w in self.lines)


@dataclass(frozen=True)
class CostSummary:
    """What the batch costs, per currency (prices in different currencies are never added)."""

    currency: str
    batch_cost: float
    per_kg: float
    priced_g: float  # the weighed mass the prices cover


@dataclass(frozen=True)
class WeighSheet:
    """A batch of a formula: every line scaled, rounded and grouped, with the total checked."""

    formula: str
    source: str
    content_hash: str
    batch_g: float
    groups: tuple[PhaseGroup, ...]
    steps: tuple[StepView, ...]
    evaporation_percent: float
    planned_total_g: float  # batch plus the evaporation allowance
    weighed_total_g: float
    rounding_bound_g: float
    costs: tuple[CostSummary, ...]
    unpriced: tuple[str, ...]
    made_at: datetime
    notes: tuple[str, ...] = ()

    @property
    def lines(self) -> tuple[WeighLine, ...]:
        return tuple(w for g in self.groups for w in g.lines)

    @property
    def total_difference_g(self) -> float:
        return self.weighed_total_g - self.planned_total_g

    @property
    def total_within_bound(self) -> bool:
        return abs(self.total_difference_g) <= self.rounding_bound_g + 1e-9


@dataclass(frozen=True)
class ScreeningNote:
    """What the lab wrote beside one recording of a blend (``screen record --note``): the
    readings it came with, by whom, when, and the emulsion's age then."""

    text: str
    measures: tuple[str, ...]
    observed_by: str
    observed_at: datetime
    after_hours: float | None = None


@dataclass(frozen=True)
class ScreeningBlend:
    """One emulsion of a series: its emulsifier pair's HLB and proportions, and what was seen."""

    number: int
    hlb: float
    low_percent: float  # % w/w of the low-HLB emulsifier in the emulsion
    high_percent: float
    observations: dict[str, float] = field(default_factory=dict)
    observed_by: str | None = None
    observed_at: datetime | None = None
    notes: tuple[ScreeningNote, ...] = ()  # every note recorded, oldest first


@dataclass(frozen=True)
class ScreeningFit:
    """The required HLB fitted to a series: value, standard uncertainty, method and source."""

    required_hlb: float
    uncertainty: float
    method: str
    source: str
    measure: str
    used_blends: tuple[int, ...]
    curvature: float
    after_hours: float | None = None  # the age of the readings fitted, when recorded


@dataclass(frozen=True)
class ScreeningSeries:
    """A stored screening series: the oil phase, the emulsifier pair and every blend."""

    name: str
    emulsion_type: str
    oils: tuple[tuple[str, float], ...]  # INCI name, fraction of the oil phase
    oil_percent: float
    emulsifier_percent: float
    low_emulsifier: str
    high_emulsifier: str
    low_hlb: float
    high_hlb: float
    batch_g: float
    blends: tuple[ScreeningBlend, ...]
    created_by: str
    created_at: datetime
    fit: ScreeningFit | None = None
    water_inci: str = "Aqua"
    sheets: tuple[WeighSheet, ...] = ()
