"""The kind of product, recognised from the formula (or stated with ``kind``), so each kind gets
only the numbers and rules that apply to it.

Recognition, in this order (thresholds in ``FactsSettings``; the trace threshold is a rule of
thumb: a perfume or a preservative below about 1 % is dissolved or solubilised, not a phase):

1. water phase below the trace threshold: **anhydrous** (ointment, balm, oil);
2. oil content below the trace threshold (oil-phase lines other than emulsifiers):
   **surfactant solution** when ionic or amphoteric surfactants or soaps are present (a soap
   fully neutralised in water is a soap solution or paste), else **aqueous gel**
   with a thickener, else **aqueous solution**;
3. both phases: **soap cream** when soaps (formed in the batch or weighed in) carry most of the
   emulsifier system; **surfactant solution** when ionic or amphoteric surfactants outweigh the
   oil content (a cleanser or shampoo with a little oil); else **emulsion**. An emulsion whose
   dispersed phase exceeds the packing of equal spheres (0.7405) is a high internal phase
   emulsion (set after the phase volumes).
"""

from __future__ import annotations

from formdb.facts.hlb import IONISED
from formdb.facts.phases import is_hydrocolloid
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import EmulsifierFacts, FactsSettings, KindFacts, LineFacts
from formdb.schemas.vocab import IonicCharacter, Role, Solubility

SOAP_CLASS = "carboxylate soap"
SURFACTANT_CHARGES = IONISED | {IonicCharacter.AMPHOTERIC}
EMULSION_KINDS = frozenset({"emulsion", "soap cream"})


def _surfactant_percent(formula: ResolvedFormula, emulsifiers: list[EmulsifierFacts]) -> float:
    by_no = {ln.line_no: ln.ingredient for ln in formula.lines}
    total = 0.0
    for e in emulsifiers:
        if e.formed_in_place or e.line_no is None:
            continue
        ing = by_no[e.line_no]
        # a detergent: a charged surfactant that dissolves in water (lecithin, only
        # dispersible, is an emulsifier of its own dispersion, not a cleanser's surfactant)
        if (e.ionic_character in SURFACTANT_CHARGES and e.scale != "griffin"
                and e.solubility == Solubility.WATER
                and SOAP_CLASS not in ing.classes and not is_hydrocolloid(ing)):
            total += e.percent
    return total


def _soap_percent(formula: ResolvedFormula, emulsifiers: list[EmulsifierFacts]) -> float:
    by_no = {ln.line_no: ln.ingredient for ln in formula.lines}
    return sum(e.percent for e in emulsifiers
               if e.formed_in_place or (e.line_no is not None
                                        and SOAP_CLASS in by_no[e.line_no].classes))


def recognise(formula: ResolvedFormula, lines: list[LineFacts],
              emulsifiers: list[EmulsifierFacts], water_formed: float,
              settings: FactsSettings) -> KindFacts:
    """The product kind (the stated one when the formula gives ``kind``) and why."""
    trace = settings.trace_phase_percent
    oil = sum(lf.remaining_percent for lf in lines if lf.phase == "oil" and not lf.emulsifier)
    water = sum(lf.remaining_percent for lf in lines if lf.phase == "water" and not lf.emulsifier)
    water += water_formed
    stated = formula.formula.kind
    if stated is not None:
        return KindFacts(kind=stated, source="stated", reason="stated in the formula (kind)")
    surfactant = _surfactant_percent(formula, emulsifiers)
    emulsifier_total = sum(e.percent for e in emulsifiers)
    soap = _soap_percent(formula, emulsifiers)
    if water < trace:
        return KindFacts(kind="anhydrous", source="recognised",
                         reason=f"water phase {water:.4g} % is below {trace:g} %")
    if oil < trace:
        ignored = oil if oil > 0 else 0.0
        if surfactant + soap > 0:
            return KindFacts(kind="surfactant solution", source="recognised",
                             reason=f"ionic or amphoteric surfactants and soaps "
                                    f"{surfactant + soap:.4g} % in water; oil content {oil:.4g} % "
                                    f"is a trace (below {trace:g} %)",
                             trace_oil_percent=ignored)
        left = {lf.line_no: lf.remaining_percent for lf in lines}
        thick = any(ln.ingredient.has_role(Role.THICKENER) and left[ln.line_no] > 0
                    for ln in formula.lines)
        return KindFacts(kind="aqueous gel" if thick else "aqueous solution",
                         source="recognised",
                         reason=f"oil content {oil:.4g} % is a trace (below {trace:g} %)"
                                + ("; thickened" if thick else ""),
                         trace_oil_percent=ignored)
    if emulsifier_total > 0 and soap > emulsifier_total / 2:
        return KindFacts(kind="soap cream", source="recognised",
                         reason=f"soap {soap:.4g} of {emulsifier_total:.4g} % emulsifier")
    if surfactant > oil:
        return KindFacts(kind="surfactant solution", source="recognised",
                         reason=f"ionic or amphoteric surfactants {surfactant:.4g} % outweigh "
                                f"the oil content {oil:.4g} %")
    return KindFacts(kind="emulsion", source="recognised",
                     reason=f"oil content {oil:.4g} % and water phase {water:.4g} % w/w, "
                            "emulsifiers apart")
