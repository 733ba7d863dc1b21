"""ALG01: fragrance allergens above the labelling threshold must be named on the label."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Role, Severity


@register
class AllergenLabelling(Rule):
    """Labelled fragrance allergens whose total exceeds the threshold must appear on the label.

    Flags: one finding naming every allergen (an ingredient with the role ``allergen``) whose
    total over every line of the formula exceeds the labelling threshold of the formula's
    category, with each total; an info when allergens are present but the library holds no
    threshold for the jurisdiction and category.
    Why: Regulation (EC) No 1223/2009 Annex III (entries 45 and 67-92) and Art. 19(1)(g) require
    the name of each listed allergen in the ingredient list above 0.001 % in leave-on and
    0.01 % in rinse-off products. The total counts every source, so two lines carrying the same
    allergen are summed before the threshold test. Annex III maximum concentrations on some
    allergens still apply (LIM01).
    Fails: leave-on with 0.005 % Limonene (above 0.001 %): Limonene must be named.
    Passes: leave-on with 0.0008 % Limonene; rinse-off with 0.008 % Limonene.
    Options: jurisdiction (whose thresholds apply, default EU).
    """

    code = "ALG01"
    name = "allergen-labelling"
    groups = ("labelling",)
    default_severity = Severity.INFO
    options: ClassVar[dict[str, Option]] = {
        "jurisdiction": Option(str, "EU", "jurisdiction whose labelling thresholds apply"),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        table = facts.allergens
        if table is None:
            present = [ln.ingredient.inci_name for ln in formula.lines
                       if ln.ingredient.has_role(Role.ALLERGEN)]
            if present:
                yield self.finding(
                    Severity.INFO,
                    f"no {options['jurisdiction']} allergen labelling threshold for "
                    f"{formula.formula.category.value} products in the library, so "
                    f"{', '.join(dict.fromkeys(present))} could not be judged",
                    ingredients=present,
                    advice="load the seed library (`formdb init --seed`) or add the threshold")
            return
        if not table.must_label:
            return
        shown = [f"{line.inci} ({line.percent:.4g} %)" for line in table.lines
                 if line.must_label]
        yield self.finding(
            self.default_severity,
            f"must be named on the label (above {table.threshold_percent:g} % in a "
            f"{table.category} product, {table.list_name} {table.entry}): {', '.join(shown)}",
            ingredients=table.must_label,
            values={line.inci: line.percent for line in table.lines if line.must_label}
            | {"threshold_percent": table.threshold_percent},
            advice="name each of them in the ingredient list")
