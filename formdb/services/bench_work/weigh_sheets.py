"""A weigh sheet for a batch: every line scaled, weighed on the balance that suits it, grouped by
phase in process order, with soap-forming lines flagged, an optional evaporation allowance and the
cost from the library's prices.

The numbers are worked out here (science.weighing does the arithmetic); report.weigh_sheet only
prints them, so text, CSV, XLSX and HTML show the same figures.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime
from pathlib import Path

from formdb.errors import InvalidData
from formdb.facts.compute import compute_facts
from formdb.schemas.bench import (
    CostSummary,
    PhaseGroup,
    PriceRecord,
    StepView,
    WeighLine,
    WeighSheet,
)
from formdb.schemas.formula import FormulaLine, ProcessStep, ResolvedFormula, ResolvedLine
from formdb.schemas.numbers import ascii_float
from formdb.schemas.reference import ReferenceData
from formdb.schemas.vocab import Role
from formdb.science.weighing import DEFAULT_BALANCES, Balance, rounding_bound_g, weigh
from formdb.services.checking.flow import FormulaInput, input_from_text, read_inputs, resolve_all
from formdb.store import queries
from formdb.store.library import Library

MAX_BATCH_KG = 100_000.0
MAX_EVAPORATION_PERCENT = 20.0


def parse_balance(text: str) -> Balance:
    """``RESOLUTION:CAPACITY`` in grams (``0.01:200``) -> a Balance; bad text is an input error."""
    try:
        resolution, capacity = (ascii_float(part) for part in text.split(":"))
        return Balance(resolution, capacity)
    except ValueError as exc:
        detail = str(exc) if "balance" in str(exc) else "write RESOLUTION:CAPACITY in grams"
        raise InvalidData(f"--balance {text!r}: {detail}",
                          hint="e.g. --balance 0.01:200 --balance 1:60000") from None


def _step_view(row: int, step: ProcessStep) -> StepView:
    return StepView(row=row, phases=tuple(step.phases), temperature_c=step.temperature_c,
                    mixing=step.mixing.value if step.mixing else None,
                    speed_rpm=step.speed_rpm, minutes=step.minutes, note=step.note)


def _phase_order(formula: ResolvedFormula, steps: Sequence[StepView]) -> list[str | None]:
    """Phases in the order the process first handles them; the rest in the file's order, then
    the lines without a phase."""
    order: list[str | None] = []
    for step in steps:
        order.extend(p for p in step.phases if p not in order)
    for line in formula.lines:
        if line.phase not in order and line.phase is not None:
            order.append(line.phase)
    if any(line.phase is None for line in formula.lines):
        order.append(None)
    return order


def _neutralised(formula: ResolvedFormula, reference: ReferenceData) -> dict[int, str]:
    """line number -> what it forms in the batch (from the facts' soap stoichiometry)."""
    facts = compute_facts(formula, reference)
    words: dict[int, str] = {}
    for soap in facts.soaps:
        for line_no, partner in ((soap.acid_line_no, soap.base), (soap.base_line_no, soap.acid)):
            text = f"neutralised in the batch: with {partner} forms {soap.soap}"
            words[line_no] = f"{words[line_no]}; {text}" if line_no in words else text
    return words


def choose_price(prices: Sequence[PriceRecord], supplier: str | None) -> PriceRecord | None:
    """The latest quote from the line's supplier when it names one, else the latest of any."""
    pool = [p for p in prices if supplier is None or p.supplier.casefold() == supplier.casefold()]
    if not pool:
        return None
    return max(pool, key=lambda p: (p.quoted_on, p.recorded_at, p.id or 0))


def formula_line(formula: ResolvedFormula, line: ResolvedLine) -> FormulaLine:
    """The file's line behind a resolved line (its note, supplier and lot)."""
    return formula.formula.ingredients[line.line_no - 1]


def _line(formula: ResolvedFormula, line: ResolvedLine, mass_g: float,
          balances: tuple[Balance, ...], neutralised: Mapping[int, str],
          prices: Mapping[str, Sequence[PriceRecord]]) -> WeighLine:
    source = formula_line(formula, line)
    w = weigh(mass_g, balances)
    price = choose_price(prices.get(line.inci, ()), source.supplier)
    return WeighLine(
        line_no=line.line_no, inci=line.inci, phase=line.phase, percent=line.percent,
        target_g=w.target_g, weighed_g=w.weighed_g, resolution_g=w.balance.resolution_g,
        capacity_g=w.balance.capacity_g, portions=w.portions,
        note=source.note, supplier=source.supplier, lot=source.lot,
        neutralised=neutralised.get(line.line_no),
        price=price, cost=price.price_per_kg * w.weighed_g / 1000.0 if price else None)


def _costs(lines: Sequence[WeighLine], batch_g: float) -> tuple[CostSummary, ...]:
    by_currency: dict[str, list[WeighLine]] = {}
    for w in lines:
        if w.price is not None:
            by_currency.setdefault(w.price.currency, []).append(w)
    return tuple(
        CostSummary(currency=currency, batch_cost=sum(w.cost or 0.0 for w in priced),
                    per_kg=sum(w.cost or 0.0 for w in priced) / (batch_g / 1000.0),
                    priced_g=sum(w.weighed_g for w in priced))
        for currency, priced in sorted(by_currency.items()))


def build_sheet(formula: ResolvedFormula, reference: ReferenceData, batch_kg: float, *,
                balances: tuple[Balance, ...] = DEFAULT_BALANCES,
                evaporation_percent: float = 0.0,
                prices: Mapping[str, Sequence[PriceRecord]] | None = None,
                made_at: datetime | None = None) -> WeighSheet:
    """The weigh sheet of ``formula`` for ``batch_kg`` (pure: the caller loads the data)."""
    if not (math.isfinite(batch_kg) and 0 < batch_kg <= MAX_BATCH_KG):
        raise InvalidData(f"--kg {batch_kg:g}: the batch must be above 0 and at most "
                          f"{MAX_BATCH_KG:g} kg")
    if not (math.isfinite(evaporation_percent) and
            0 <= evaporation_percent <= MAX_EVAPORATION_PERCENT):
        raise InvalidData(f"--evaporation-percent {evaporation_percent:g}: must be from 0 to "
                          f"{MAX_EVAPORATION_PERCENT:g} % of the batch")
    prices = prices or {}
    batch_g = batch_kg * 1000.0
    steps = tuple(_step_view(row, step)
                  for row, step in enumerate(formula.formula.process.steps, start=1))
    neutralised = _neutralised(formula, reference)
    notes: list[str] = []
    total_percent = sum(line.percent for line in formula.lines)
    if abs(total_percent - 100.0) > 0.05:
        notes.append(f"the formula adds up to {total_percent:.4g} %, not 100 %: lines are "
                     "scaled as written, so the batch is not the mass asked for")
    lines = [_line(formula, line, line.percent / 100.0 * batch_g, balances, neutralised, prices)
             for line in formula.lines]
    allowance_g = evaporation_percent / 100.0 * batch_g
    if allowance_g > 0:
        water = next((line for line in formula.lines if Role.WATER in line.ingredient.roles),
                     None)
        if water is None:
            raise InvalidData(f"{formula.source}: --evaporation-percent needs a water line "
                              "(an ingredient with the role water) to add the allowance to")
        w = weigh(allowance_g, balances)
        price = choose_price(prices.get(water.inci, ()), formula_line(formula, water).supplier)
        lines.append(WeighLine(
            line_no=None, inci=water.inci, phase=water.phase, percent=None,
            target_g=w.target_g, weighed_g=w.weighed_g, resolution_g=w.balance.resolution_g,
            capacity_g=w.balance.capacity_g, portions=w.portions,
            note=f"evaporation allowance, {evaporation_percent:g} % of the batch: weigh with "
                 f"line {water.line_no}", price=price,
            cost=price.price_per_kg * w.weighed_g / 1000.0 if price else None))
    small = [w for w in lines if w.below_resolution]
    notes.extend(f"{w.inci}: {w.target_g:.4g} g rounds to nothing on a {w.resolution_g:g} g "
                 "balance; weigh it as a premix or on a finer balance" for w in small)
    groups = tuple(
        PhaseGroup(phase=phase,
                   first_step=next((s for s in steps if phase is not None
                                    and phase in s.phases), None),
                   lines=tuple(w for w in lines if w.phase == phase))
        for phase in _phase_order(formula, steps))
    weighings = [weigh(w.target_g, balances) for w in lines]
    unpriced = tuple(dict.fromkeys(w.inci for w in lines if w.price is None))
    return WeighSheet(
        formula=formula.name, source=formula.source, content_hash=formula.content_hash,
        batch_g=batch_g, groups=groups, steps=steps, evaporation_percent=evaporation_percent,
        planned_total_g=batch_g * total_percent / 100.0 + allowance_g,
        weighed_total_g=sum(w.weighed_g for w in lines),
        rounding_bound_g=rounding_bound_g(weighings), costs=_costs(lines, batch_g),
        unpriced=unpriced,
        made_at=made_at or datetime.now(UTC), notes=tuple(notes))


def weigh_sheet_for_file(library: Library, path: Path | None, batch_kg: float | None, *,
                         balances: tuple[Balance, ...] = DEFAULT_BALANCES,
                         evaporation_percent: float = 0.0,
                         stored: str | None = None) -> WeighSheet:
    """Read the formula file (or the stored formula named ``stored``), resolve it in the
    library, load prices, build the sheet. The batch size comes from ``batch_kg`` or else the
    formula's ``batch_kg``. One read unit: the formula, its ingredients and prices agree."""
    if (path is None) == (stored is None):
        raise InvalidData("give a formula FILE or --stored NAME (one of them)")
    item = read_inputs([path])[0] if path is not None else None  # a bad file before the library
    return weigh_sheet_for_input(library, item, batch_kg, balances=balances,
                                 evaporation_percent=evaporation_percent, stored=stored)


def weigh_sheet_for_input(library: Library, item: FormulaInput | None, batch_kg: float | None,
                          *, balances: tuple[Balance, ...] = DEFAULT_BALANCES,
                          evaporation_percent: float = 0.0,
                          stored: str | None = None) -> WeighSheet:
    """The sheet of a formula already read (``item``, e.g. from text), or else of the stored
    formula named ``stored``; as ``weigh_sheet_for_file``."""
    from formdb.services.bench_work.prices import prices_for
    from formdb.services.library.formulas import formula_text

    if (item is None) == (stored is None):
        raise InvalidData("give a formula or the name of a stored formula (one of them)")
    with library.read() as session:
        if item is None:
            item = input_from_text(formula_text(library, str(stored)), f"stored:{stored}")
        size = batch_kg if batch_kg is not None else item.formula.batch_kg
        if size is None:
            raise InvalidData(f"{item.label}: no batch size (give --kg, or batch_kg in the "
                              "formula)")
        reference = queries.load_reference_data(session)
        formula = resolve_all(session, [item])[0]
        prices = prices_for(session, {line.inci for line in formula.lines})
    return build_sheet(formula, reference, size, balances=balances,
                       evaporation_percent=evaporation_percent, prices=prices)
