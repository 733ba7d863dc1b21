"""HLB01: the emulsifier blend's HLB against the oil phase's required HLB."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import BlendSolution, FormulaFacts
from formdb.schemas.vocab import Severity


def solution_text(solution: BlendSolution, formed: set[str]) -> str:
    """'Polysorbate 80 1.64 % + Sorbitan Stearate 1.36 %' (soap formed in place marked)."""
    assert solution.percents is not None
    parts = []
    for name, percent in zip(solution.emulsifiers, solution.percents, strict=True):
        mark = " (formed in place)" if name in formed else ""
        parts.append(f"{name}{mark} {percent:.3g} %")
    return " + ".join(parts)


@register
class HlbBalance(Rule):
    """The emulsifier blend's HLB misses the oil phase's required HLB.

    Flags: a blend HLB (weight average of the emulsifiers' HLB, soap formed in place included)
    outside the required HLB of the oil phase (weight average of the oils' required HLB for the
    intended type, or the predicted one) plus or minus the tolerance. The finding gives the
    proportions of the formula's own emulsifiers that would hit the required HLB, or the range
    they can reach when they cannot.
    Why: Griffin's method (J. Soc. Cosmet. Chem. 1 (1949) 311): an oil phase is emulsified best
    by an emulsifier blend whose HLB matches its required HLB. Required HLB values are guides,
    not exact targets (Pasquali et al., Int. J. Pharm. 356 (2008) 44), hence the tolerance.
    Fails: Paraffinum Liquidum 20 (required HLB 12 for O/W) with Sorbitan Oleate 2.5 and
    Polysorbate 80 2.5: blend HLB 9.65; Sorbitan Oleate 1.40 % + Polysorbate 80 3.60 % would
    give 12.
    Passes: the oil phase F1 of Wangpradit et al., OCL 29 (2022) 29 (required HLB 10.33) with
    Polysorbate 80 1.64 and Sorbitan Stearate 1.36: blend HLB 10.33.
    Options: tolerance (HLB units, default 1.0): half-width of the accepted band.
    """

    code = "HLB01"
    name = "hlb-balance"
    groups = ("emulsion", "hlb")
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Option]] = {
        "tolerance": Option(float, 1.0, "half-width of the accepted HLB band", minimum=0),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        blend, required = facts.blend_hlb, facts.required_hlb
        if blend is None or required is None:
            return
        tolerance = options["tolerance"]
        difference = blend - required
        if abs(difference) <= tolerance + 1e-9:
            return
        kind = facts.working_type.value if facts.working_type else "?"
        side = "above" if difference > 0 else "below"
        values: dict[str, float | str | None] = {
            "blend_hlb": blend, "required_hlb": required, "tolerance_hlb": tolerance,
            "hlb_difference": difference, "emulsion_type": kind,
            "target_low": required - tolerance, "target_high": required + tolerance}
        solution = facts.blend_solution
        formed = {e.inci for e in facts.emulsifiers if e.formed_in_place}
        if solution is not None and solution.reachable and solution.percents is not None:
            text = solution_text(solution, formed)
            values["solution"] = text
            advice = (f"for HLB {required:.2f} use {text} (the same total), or change the "
                      "emulsifier pair")
        elif solution is not None:
            values["reachable_low"] = solution.reachable_low
            values["reachable_high"] = solution.reachable_high
            need = "higher" if required > solution.reachable_high else "lower"
            if len(solution.emulsifiers) == 1:
                reach = (f"the only emulsifier with an HLB, {solution.emulsifiers[0]}, has HLB "
                         f"{solution.reachable_low:.2f}")
            else:
                reach = (f"these emulsifiers reach only HLB {solution.reachable_low:.2f} to "
                         f"{solution.reachable_high:.2f}")
            advice = (f"{reach}: add or swap in one with a {need} HLB "
                      f"(`formdb blend --target {required:.1f}`)")
        else:
            advice = f"choose emulsifiers whose blend reaches HLB {required:.2f}"
        yield self.finding(
            self.default_severity,
            f"blend HLB {blend:.2f} is {side} the required HLB {required:.2f} ± {tolerance:g} "
            f"of the oil phase ({kind})",
            ingredients=[e.inci for e in facts.emulsifiers if e.hlb is not None],
            values=values, advice=advice)
