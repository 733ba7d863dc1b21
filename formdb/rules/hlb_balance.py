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
from formdb.schemas.vocab import EmulsionType, Severity


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

    Flags: a blend HLB (weight average of the nonionic emulsifiers' HLB on Griffin's scale)
    outside the required HLB of the oil phase (weight average of the oil phase's required HLB
    for the intended type, or the decided one; co-emulsifiers such as glyceryl stearate, fatty
    alcohols and fatty acids not neutralised are counted with the oil phase at their own value)
    plus or minus the tolerance. The finding states the share of the oil phase and of the
    emulsifier system the numbers rest on, and gives the proportions of the formula's own
    emulsifiers that would hit the required HLB, or the range they can reach when they cannot.
    No verdict and no ratio advice when the required HLB covers less than
    [facts] min_required_hlb_coverage (0.8) of the oil phase or the Griffin members less than
    min_blend_hlb_coverage (0.8) of the emulsifier system (the data gap is reported instead).
    Where sources disagree on an oil's required HLB (required_hlb_ow_low/high and
    required_hlb_wo_low/high in the library), the band runs from the weight-averaged low end
    to the high end, plus or minus the tolerance.
    An info when the system is led by ionic members (soaps, ionic surfactants on Davies' scale):
    their values are not averaged with Griffin's, and no HLB balance is judged for them.
    Judges emulsions only (facts.kind): not soap creams, surfactant solutions, gels or
    anhydrous products.
    Why: Griffin's method (J. Soc. Cosmet. Chem. 1 (1949) 311): an oil phase is emulsified best
    by an emulsifier blend whose HLB matches its required HLB. Required HLB values are guides,
    not exact targets (Pasquali et al., Int. J. Pharm. 356 (2008) 44), hence the tolerance.
    Wangpradit et al., OCL 29 (2022) 29, Tables 4-5 count glyceryl monostearate (3.8) and stearic
    acid (15) in the oil phase. Davies' values (sodium lauryl sulfate 40, soaps 18-20; Davies
    1957) lie on another scale. The coverage thresholds are a rule of thumb.
    Fails: Paraffinum Liquidum 20 (required HLB 12 for O/W; 10-12 across its sources) with
    Sorbitan Oleate 3.5 and Polysorbate 80 1.5: blend HLB 7.51; Sorbitan Oleate 1.40 % +
    Polysorbate 80 3.60 % would give 12.
    Passes: the oil phase F1 of Wangpradit et al., OCL 29 (2022) 29 (required HLB 10.33) with
    Polysorbate 80 1.64 and Sorbitan Stearate 1.36: blend HLB 10.33.
    Options: tolerance (HLB units, default 1.0): half-width of the accepted band.
    """

    code = "HLB01"
    name = "hlb-balance"
    groups = ("emulsion", "hlb")
    default_severity = Severity.WARNING
    kinds: ClassVar[frozenset[str] | None] = frozenset({"emulsion"})
    options: ClassVar[dict[str, Option]] = {
        "tolerance": Option(float, 1.0, "half-width of the accepted HLB band", minimum=0,
                            maximum=10),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        blend, required = facts.blend_hlb, facts.required_hlb
        system = facts.hlb_system
        if blend is None and system is not None and system.led_by == "ionic":
            ionic = [e.inci for e in facts.emulsifiers if e.scale == "davies" or e.formed_in_place
                     or e.hlb is None]
            yield self.finding(
                Severity.INFO,
                f"no HLB balance judged: the emulsifier system is {system.assessment} "
                f"(Griffin-scale members {system.griffin_percent:.4g} of "
                f"{facts.emulsifier_percent:.4g} %)",
                ingredients=ionic,
                values={"griffin_percent": system.griffin_percent,
                        "davies_percent": system.davies_percent,
                        "blend_hlb_coverage": system.coverage},
                advice="judge an ionic-led system by its ionic character and soap valence (see "
                       "the emulsion type); Davies' values are not comparable with a required "
                       "HLB")
            return
        if blend is None or required is None:
            return
        tolerance = options["tolerance"]
        difference = blend - required
        req = (facts.required_hlb_ow if facts.working_type == EmulsionType.OW
               else facts.required_hlb_wo)
        low_end = min(req.low, required) if req.low is not None else required
        high_end = max(req.high, required) if req.high is not None else required
        if low_end - tolerance - 1e-9 <= blend <= high_end + tolerance + 1e-9:
            return
        kind = facts.working_type.value if facts.working_type else "?"
        side = "above" if difference > 0 else "below"
        span = (f" (sources range {low_end:.2f}-{high_end:.2f})"
                if high_end - low_end > 1e-9 else "")
        oil_cover = facts.required_hlb_coverage
        blend_cover = system.coverage if system is not None else None
        values: dict[str, float | str | None] = {
            "blend_hlb": blend, "required_hlb": required, "tolerance_hlb": tolerance,
            "hlb_difference": difference, "emulsion_type": kind,
            "target_low": low_end - tolerance, "target_high": high_end + tolerance,
            "required_hlb_coverage": oil_cover, "blend_hlb_coverage": blend_cover}
        rests = (f"; resting on {oil_cover:.0%} of the oil phase and {blend_cover:.0%} of the "
                 "emulsifier system" if oil_cover is not None and blend_cover is not None
                 else "")
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
            f"blend HLB {blend:.2f} is {side} the required HLB {required:.2f}{span} "
            f"± {tolerance:g} of the oil phase ({kind}{rests})",
            ingredients=[e.inci for e in facts.emulsifiers if e.hlb is not None],
            values=values, advice=advice)
