"""TYP01: the predicted emulsion type against the intended one, and the two predictions."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity


def _value(kind: object) -> str | None:
    return getattr(kind, "value", None)


@register
class EmulsionTypeCheck(Rule):
    """The emulsion type predicted from the emulsifiers is not the type intended.

    Flags: an error when the predicted type (Bancroft's rule, or the blend HLB's class when
    Bancroft's rule gives none) differs from the formula's intended_type; a warning when
    Bancroft's rule and the HLB class predict different types.
    Why: Bancroft (J. Phys. Chem. 17 (1913) 501): the phase the emulsifier system dissolves in
    becomes the continuous phase. Griffin's HLB classes (below about 7: W/O, above about 8: O/W)
    say the same from the HLB. A water-soluble system cannot hold a W/O cream; when the two
    predictions disagree the type depends on process and is not reliable.
    Fails: intended W/O with Polysorbate 80 as the only emulsifier (water-soluble, HLB 15:
    predicted O/W).
    Passes: intended W/O with Oleic Acid neutralised by Magnesium Oxide (a divalent soap,
    oil-soluble: predicted W/O).
    Options: none (the HLB class bounds are [facts] hlb_wo_max and hlb_ow_min).
    """

    code = "TYP01"
    name = "emulsion-type"
    groups = ("emulsion",)
    default_severity = Severity.ERROR

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        intended = formula.formula.intended_type
        predicted = facts.predicted_type
        values: dict[str, float | str | None] = {
            "intended_type": _value(intended), "predicted_type": _value(predicted),
            "type_by_bancroft": _value(facts.type_by_bancroft),
            "type_by_hlb": _value(facts.type_by_hlb), "blend_hlb": facts.blend_hlb,
            "water_side_percent": facts.water_side_emulsifier_percent,
            "oil_side_percent": facts.oil_side_emulsifier_percent}
        names = [e.inci for e in facts.emulsifiers]
        if intended is not None and predicted is not None and predicted != intended:
            basis = "Bancroft's rule" if facts.type_by_bancroft else "the blend HLB's class"
            yield self.finding(
                self.default_severity,
                f"intended {intended.value} but the emulsifier system predicts "
                f"{predicted.value} (by {basis})",
                ingredients=names, values=values,
                advice=(f"for {intended.value} the emulsifier system should be mostly "
                        f"{'oil' if intended.value == 'W/O' else 'water'}-soluble, with an HLB "
                        f"{'below about 7' if intended.value == 'W/O' else 'above about 8'}"))
        if facts.types_disagree:
            assert facts.type_by_bancroft is not None and facts.type_by_hlb is not None
            yield self.finding(
                Severity.WARNING,
                f"Bancroft's rule predicts {facts.type_by_bancroft.value} but the blend HLB "
                f"{facts.blend_hlb:.2f} favours {facts.type_by_hlb.value}",
                ingredients=names, values=values,
                advice="the type will depend on process; check the emulsifiers' solubility "
                       "and HLB data, or move the system clearly to one side")
