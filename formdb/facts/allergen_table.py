"""The allergen table of a formula: each labelled allergen summed over every source.

A substance counts when its library record has the role ``allergen`` or when an imported Annex
III entry in force names it with the labelling condition (Art. 19(1)(g)); its % in the product
is the sum over every line that carries it and every mixture that declares it as a constituent
(synonyms resolve to one record). It must be named on the label when the total exceeds the
threshold of the formula's category (Regulation (EC) No 1223/2009 Annex III: 0.001 % leave-on,
0.01 % rinse-off).

The allergens added by Regulation (EU) 2023/1545 bind products placed on the market from
31 July 2026: a formula states its placing date (``placed_on``); without one, the list in
force today applies.
"""

from __future__ import annotations

from datetime import date
from functools import lru_cache

from formdb.facts.composition import substances
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.lists import ALLERGEN_EXTENSION_ACT, ALLERGEN_EXTENSION_PLACING, ListEntry
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import AllergenFacts, AllergenLine, FactsSettings
from formdb.schemas.vocab import Role


def placing_date(formula: ResolvedFormula) -> date:
    """The formula's placing date, else today (the list in force now)."""
    return formula.formula.placed_on or date.today()


@lru_cache(maxsize=1 << 14)
def _key(inci: str) -> str:
    return name_key(inci)


def allergen_entries(record: IngredientRecord, reference: ReferenceData,
                     jurisdiction: str) -> tuple[ListEntry, ...]:
    """The imported Annex III allergen entries that name the substance."""
    if not reference.list_entries:
        return ()
    return tuple(e for e in reference.list_entries.get(_key(record.inci_name), ())
                 if e.allergen and e.jurisdiction.casefold() == jurisdiction.casefold())


def binding(entries: tuple[ListEntry, ...], placed: date) -> bool:
    """True when one of the entries binds a product placed on ``placed``."""
    return any(not e.extended_allergen or placed >= ALLERGEN_EXTENSION_PLACING for e in entries)


def allergen_table(formula: ResolvedFormula, reference: ReferenceData,
                   settings: FactsSettings) -> AllergenFacts | None:
    category = formula.formula.category.value
    jurisdiction = settings.label_jurisdiction
    rows = [t for t in reference.label_thresholds
            if t.role == Role.ALLERGEN.value and t.category == category
            and t.jurisdiction.casefold() == jurisdiction.casefold()]
    placed = placing_date(formula)
    totals = {}
    extended = False
    for key, item in substances(formula, reference).items():
        entries = allergen_entries(item.record, reference, jurisdiction)
        if item.record.has_role(Role.ALLERGEN) or binding(entries, placed):
            totals[key] = (item.record.inci_name, item.percent, item.sources)
            extended = extended or any(e.extended_allergen for e in entries)
    if not totals or not rows:
        return None
    row = min(rows, key=lambda t: t.threshold_percent)
    lines = tuple(AllergenLine(inci=name, percent=total, sources=tuple(sources),
                               must_label=total > row.threshold_percent)
                  for name, total, sources in totals.values())
    entry = row.entry
    if extended:
        if ALLERGEN_EXTENSION_ACT not in entry:
            entry += f", extended by Reg. {ALLERGEN_EXTENSION_ACT}"
        else:
            entry = entry.replace(ALLERGEN_EXTENSION_ACT, f"extended by Reg. "
                                  f"{ALLERGEN_EXTENSION_ACT}")
        entry += (f" (the added allergens bind products placed from "
                  f"{ALLERGEN_EXTENSION_PLACING:%d/%m/%Y}; placing date {placed:%d/%m/%Y})")
    return AllergenFacts(
        jurisdiction=row.jurisdiction, category=category, threshold_percent=row.threshold_percent,
        entry=entry, list_name=row.list_name, label_rule=row.label_rule, source=row.source,
        list_date=row.list_date.isoformat(), lines=lines,
        must_label=tuple(line.inci for line in lines if line.must_label))
