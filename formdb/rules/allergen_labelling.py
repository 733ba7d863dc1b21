"""ALG01: fragrance allergens above the labelling threshold must be named on the label."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.facts.allergen_table import allergen_entries, binding, placing_date
from formdb.facts.composition import substances
from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.lists import (
    ALLERGEN_EXTENSION_ACT,
    ALLERGEN_EXTENSION_AVAILABLE,
    ALLERGEN_EXTENSION_PLACING,
)
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
    0.01 % in rinse-off products. Regulation (EU) 2023/1545 extended the list (80 entries, with
    the imported Annex III): products placed on the market from 31 July 2026 follow it, those
    placed before may be made available until 31 July 2028. The formula's ``placed_on`` says
    which list applies (without it, the list in force today); an extended allergen that does
    not bind yet is noted. The total counts every source, so two lines carrying the same
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
        yield from self._pending(formula, reference, options)
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

    def _pending(self, formula: ResolvedFormula, reference: ReferenceData,
                 options: Mapping[str, Any]) -> Iterable[Finding]:
        """Allergens of the 2023 extension in a product placed before they bind."""
        placed = placing_date(formula)
        if placed >= ALLERGEN_EXTENSION_PLACING or not reference.list_entries:
            return
        for item in substances(formula, reference).values():
            entries = allergen_entries(item.record, reference, options["jurisdiction"])
            if entries and not binding(entries, placed) and \
                    not item.record.has_role(Role.ALLERGEN):
                labels = ", ".join(e.label for e in entries)
                yield self.finding(
                    Severity.INFO,
                    f"{item.record.inci_name} ({item.percent:.4g} %, {labels}) is an allergen "
                    f"added by Reg. {ALLERGEN_EXTENSION_ACT}: not yet to be named for a product "
                    f"placed on {placed:%d/%m/%Y}; products placed from "
                    f"{ALLERGEN_EXTENSION_PLACING:%d/%m/%Y} must name it above the threshold, "
                    f"and those placed before may be made available until "
                    f"{ALLERGEN_EXTENSION_AVAILABLE:%d/%m/%Y}",
                    ingredients=[item.record.inci_name],
                    values={"percent": item.percent, "placed_on": placed.isoformat()},
                    advice="name it on the label now if the product may be placed on the "
                           f"market after {ALLERGEN_EXTENSION_PLACING:%d/%m/%Y}")
