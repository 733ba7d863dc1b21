"""BAL01: the percentages must add up to 100."""

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
class PercentTotal(Rule):
    """The formula's percentages do not add up to 100.

    Flags: a formula whose % w/w lines total more or less than 100 by more than the tolerance.
    Why: every other number (phase masses, limits, the HLB balance) is worked out per 100 g; a
    total of 98 or 103 means a line is missing, doubled or mistyped, and a batch sheet scaled from
    it is wrong.
    Fails: Water 70, Paraffinum Liquidum 20, Polysorbate 80 5 (total 95).
    Passes: Water 75, Paraffinum Liquidum 20, Polysorbate 80 5 (total 100).
    Options: tolerance (% w/w, default 0.1): how far from 100 the total may be.
    """

    code = "BAL01"
    name = "percent-total"
    groups = ("composition",)
    default_severity = Severity.ERROR
    options: ClassVar[dict[str, Option]] = {
        "tolerance": Option(float, 0.1, "allowed difference from 100 % w/w", minimum=0,
                            maximum=100),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        total = facts.percent_total
        difference = total - 100.0
        tolerance = options["tolerance"]
        if abs(difference) <= tolerance + 1e-9:
            return
        water = [ln.inci for ln in formula.lines if ln.ingredient.has_role(Role.WATER)]
        if water:
            fix = (f"{'reduce' if difference > 0 else 'raise'} {water[0]} by "
                   f"{abs(difference):.4g} % (or correct the line that is off)")
        else:
            fix = "correct the line that is off so the formula totals 100 %"
        yield self.finding(
            self.default_severity,
            f"percentages total {total:.4g} %, {abs(difference):.4g} % "
            f"{'over' if difference > 0 else 'under'} 100 (tolerance {tolerance:g})",
            ingredients=water[:1],
            values={"percent_total": total, "difference_percent": difference,
                    "tolerance_percent": tolerance},
            advice=fix)
