"""PH01: the formula's pH against each ingredient's working pH range."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity


def reads_ph_windows(formula: ResolvedFormula) -> bool:
    """PH01 compares the ingredients' working pH ranges only with a pH the formula states."""
    return formula.formula.ph is not None


@register
class PhWindow(Rule):
    """The formula's pH is outside the range in which an ingredient works.

    Flags: a warning for each ingredient (once, however many lines it is on) whose library
    working range (ph_min, ph_max) does not contain the formula's pH; an info, naming those
    ingredients, when the formula states no pH.
    Why: weak-acid preservatives work only undissociated: benzoic acid (pKa about 4.2) is poor
    above about pH 5, sorbic acid (pKa about 4.8) above about pH 6; carbomer thickens only once
    neutralised, in a window around pH 5-9. The ranges are library data with their sources.
    Fails: leave-on at pH 6.0 with Sodium Benzoate (working range up to pH 5.0).
    Passes: leave-on at pH 4.5 with Sodium Benzoate.
    Options: none.
    """

    code = "PH01"
    name = "ph-window"
    groups = ("compatibility",)
    default_severity = Severity.WARNING

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        ranged = [ln for ln in formula.lines
                  if ln.ingredient.p.ph_min is not None or ln.ingredient.p.ph_max is not None]
        if not ranged:
            return
        ph = formula.formula.ph
        if not reads_ph_windows(formula) or ph is None:
            names = list(dict.fromkeys(ln.inci for ln in ranged))
            yield self.finding(
                Severity.INFO,
                f"the formula states no pH, so the working pH ranges of {', '.join(names)} "
                "could not be checked",
                ingredients=names, values={"ph": None},
                advice="add the target pH (ph = ...) to the formula file")
            return
        totals: dict[str, float] = {}
        for ln in ranged:  # one finding per ingredient, however many lines it is on
            key = name_key(ln.ingredient.inci_name)
            totals[key] = totals.get(key, 0.0) + ln.percent
        for ln in ranged:
            key = name_key(ln.ingredient.inci_name)
            if key not in totals:
                continue
            percent = totals.pop(key)
            low, high = ln.ingredient.p.ph_min, ln.ingredient.p.ph_max
            window = (f"pH {low:g} to {high:g}" if low is not None and high is not None
                      else f"up to pH {high:g}" if high is not None else f"from pH {low:g}")
            values: dict[str, float | str | None] = {
                "ph": ph, "ph_min": low, "ph_max": high, "percent": percent}
            if high is not None and ph > high:
                yield self.finding(
                    self.default_severity,
                    f"pH {ph:g} is above the working range of {ln.inci} ({window})",
                    ingredients=[ln.inci], values=values,
                    advice=f"bring the pH to {high:g} or below, or replace {ln.inci} with an "
                           f"ingredient that works at pH {ph:g}")
            elif low is not None and ph < low:
                yield self.finding(
                    self.default_severity,
                    f"pH {ph:g} is below the working range of {ln.inci} ({window})",
                    ingredients=[ln.inci], values=values,
                    advice=f"bring the pH to {low:g} or above, or replace {ln.inci} with an "
                           f"ingredient that works at pH {ph:g}")
