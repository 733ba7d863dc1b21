"""The allergen table of a formula: each labelled allergen summed over every source.

A substance counts when its library record has the role ``allergen``; its % in the product is
the sum over every line that carries it and every mixture that declares it as a constituent
(synonyms resolve to one record). It must be named on
the label when the total exceeds the threshold of the formula's category (Regulation (EC)
No 1223/2009 Annex III: 0.001 % leave-on, 0.01 % rinse-off).
"""

from __future__ import annotations

from formdb.facts.composition import substances
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import AllergenFacts, AllergenLine, FactsSettings
from formdb.schemas.vocab import Role


def allergen_table(formula: ResolvedFormula, reference: ReferenceData,
                   settings: FactsSettings) -> AllergenFacts | None:
    category = formula.formula.category.value
    rows = [t for t in reference.label_thresholds
            if t.role == Role.ALLERGEN.value and t.category == category
            and t.jurisdiction.casefold() == settings.label_jurisdiction.casefold()]
    totals = {key: (item.record.inci_name, item.percent, item.sources)
              for key, item in substances(formula, reference).items()
              if item.record.has_role(Role.ALLERGEN)}
    if not totals or not rows:
        return None
    row = min(rows, key=lambda t: t.threshold_percent)
    lines = tuple(AllergenLine(inci=name, percent=total, sources=tuple(sources),
                               must_label=total > row.threshold_percent)
                  for name, total, sources in totals.values())
    return AllergenFacts(
        jurisdiction=row.jurisdiction, category=category, threshold_percent=row.threshold_percent,
        entry=row.entry, list_name=row.list_name, label_rule=row.label_rule, source=row.source,
        list_date=row.list_date.isoformat(), lines=lines,
        must_label=tuple(line.inci for line in lines if line.must_label))
