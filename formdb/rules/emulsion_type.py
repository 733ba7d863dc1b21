"""TYP01: the emulsion type the emulsifier system gives against the intended one."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts, TypeIndicator
from formdb.schemas.vocab import EmulsionType, Severity

# a blend HLB within this of a threshold is on it (floating point: 0.51 g of HLB 15 with 2.7 g
# of HLB 4.3 is 6 exactly, computed as 5.999999999999999)
EDGE = 1e-9


def _value(kind: object) -> str | None:
    return getattr(kind, "value", None)


def _indicator_text(ind: TypeIndicator) -> str:
    favours = ind.favours.value if ind.favours else "no type"
    return f"{ind.name}: {favours} ({ind.detail})"


def strong_contradiction(facts: FormulaFacts, intended: EmulsionType,
                         options: Mapping[str, Any]) -> str | None:
    """Why the evidence against the intended type is strong, or None when it is not."""
    decision = facts.type_decision
    if decision is None or decision.predicted is None or decision.predicted == intended:
        return None
    blend = facts.blend_hlb
    by_name = {i.name: i for i in decision.indicators}
    hlb = by_name.get("hlb class")
    ionic = by_name.get("soap and ionic")
    if blend is not None and hlb is not None and hlb.favours == decision.predicted:
        if intended == EmulsionType.OW and blend < options["strong_wo_below"] - EDGE:
            return (f"blend HLB {blend:.2f} is below {options['strong_wo_below']:g}, in "
                    "Griffin's W/O range")
        if intended == EmulsionType.WO and blend > options["strong_ow_above"] + EDGE:
            return (f"blend HLB {blend:.2f} is above {options['strong_ow_above']:g}: the "
                    "system is water-soluble")
    griffin = facts.hlb_system.griffin_percent if facts.hlb_system else 0.0
    if hlb is None and griffin <= 0 and ionic is not None and ionic.favours == decision.predicted:
        wanted = "water" if intended == EmulsionType.OW else "oil"
        on_side = [e for e in facts.emulsifiers if e.side == wanted]
        if not on_side:
            kind = "divalent or trivalent soap" if intended == EmulsionType.OW else \
                "monovalent soap or water-soluble ionic surfactant"
            return f"the only emulsifiers are {ionic.detail}: a {kind} gives " \
                   f"{decision.predicted.value}"
    return None


@register
class EmulsionTypeCheck(Rule):
    """The emulsion type the emulsifier system gives is not the type intended.

    Flags: the type decided from the emulsifier system as a whole against the formula's
    intended_type. An error only on strong evidence: a blend HLB below strong_wo_below (6) for an
    intended O/W, above strong_ow_above (10) for an intended W/O, or soap/ionic members alone on
    the wrong side (a divalent soap as the only emulsifier of an O/W). A warning when the
    decided type differs on weaker evidence. An info naming the indicators when they disagree
    among themselves (never an error by itself). Judges emulsions and soap creams (facts.kind).
    Decision table (formdb.science.emulsion_type.decide_type), first row that applies:
      HLB class | soap/ionic  | HLD at 25 °C | solubility split | decided              | strong
      T         | T or none   | any          | any              | T                    | yes
      none      | T           | any          | any              | T                    | yes
      T         | U (differs) | any          | any              | more emulsifier mass | no
      none      | none        | T            | any              | T                    | no
      between   | none        | none         | any              | no prediction        | -
      none      | none        | none         | T                | T                    | no
      none      | none        | none         | none             | no prediction        | -
    (the split decides only where no member has a Griffin HLB; "between": a blend HLB in the
    gap between the classes, which the vote of member masses does not overrule)
    The HLB class is the blend's (Griffin members only; W/O at or below 6, O/W at or above 8);
    soap/ionic: monovalent soaps and water-soluble ionic surfactants O/W, divalent and trivalent
    soaps W/O; HLD: Salager's HLD at 25 °C where the library holds the oils' EACN, the
    emulsifiers' Cc (and, for ionics, the salinity), O/W below -0.5, W/O above +0.5 ([facts]
    hld_band), naming the HLD at the temperature of making and a phase inversion temperature
    crossed on cooling; "not enough data" (no type) where the data are missing. An indicator
    that differs from the decided type is named in the info finding.
    Why: Bancroft (J. Phys. Chem. 17 (1913) 501): the continuous phase is the one the
    emulsifier system dissolves in. The blend HLB measures the system's solubility better than
    a vote of member masses: Griffin's O/W pair sorbitan oleate 3 + polysorbate 80 2 (blend 8.58)
    makes O/W though most of its mass is oil-soluble (Griffin, J. Soc. Cosmet. Chem. 1 (1949)
    311: W/O emulsifiers about 3-6, O/W about 8-18; HLB above about 10 water-soluble). The HLD
    (Bourrel, Salager, Schechter, Wade, J. Colloid Interface Sci. 75 (1980) 451: HLD < 0 O/W,
    > 0 W/O) is read at 25 °C because a temperature change inverts the emulsion where the HLD
    crosses 0 (transitional inversion; the PIT method): the product keeps the type of its
    storage temperature; it supports only, its constants being from memory (HLD01 judges the
    temperature of making).
    Fails: intended W/O with Polysorbate 80 as the only emulsifier (HLB 15 > 10: error);
    intended O/W with Sorbitan Oleate alone (HLB 4.3 < 6: error).
    Passes: intended O/W with Sorbitan Oleate 3 and Polysorbate 80 2 (blend 8.58: O/W); intended
    W/O with Oleic Acid and Magnesium Oxide (magnesium oleate, divalent soap: W/O).
    Options: strong_wo_below (default 6.0) and strong_ow_above (default 10.0): the blend HLBs
    beyond which a contradiction of the intended type is an error; the class bounds are [facts]
    hlb_wo_max and hlb_ow_min.
    """

    code = "TYP01"
    name = "emulsion-type"
    groups = ("emulsion",)
    default_severity = Severity.ERROR
    kinds: ClassVar[frozenset[str] | None] = frozenset({"emulsion", "soap cream"})
    options: ClassVar[dict[str, Option]] = {
        "strong_wo_below": Option(float, 6.0, "blend HLB below which an intended O/W is "
                                              "contradicted strongly", minimum=0, maximum=60),
        "strong_ow_above": Option(float, 10.0, "blend HLB above which an intended W/O is "
                                               "contradicted strongly", minimum=0,
                            maximum=60),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        decision = facts.type_decision
        if decision is None:
            return
        intended = formula.formula.intended_type
        predicted = decision.predicted
        values: dict[str, float | str | None] = {
            "intended_type": _value(intended), "predicted_type": _value(predicted),
            "type_by_bancroft": _value(facts.type_by_bancroft),
            "type_by_hlb": _value(facts.type_by_hlb), "blend_hlb": facts.blend_hlb,
            "decided_by": decision.row,
            "water_side_percent": facts.water_side_emulsifier_percent,
            "oil_side_percent": facts.oil_side_emulsifier_percent}
        names = [e.inci for e in facts.emulsifiers]
        if intended is not None and predicted is not None and predicted != intended:
            why = strong_contradiction(facts, intended, options)
            want = ("mostly oil-soluble, with a blend HLB below about 6" if intended.value == "W/O"
                    else "mostly water-soluble, with a blend HLB above about 8")
            yield self.finding(
                self.default_severity if why else Severity.WARNING,
                f"intended {intended.value} but the emulsifier system gives {predicted.value} "
                f"({why or decision.row})",
                ingredients=names, values=values,
                advice=f"for {intended.value} the emulsifier system should be {want}; "
                       + ("change the system" if why else
                          "the evidence is not decisive: make a small batch and test the type "
                          "by dilution or conductivity"))
        if facts.types_disagree:
            given = [i for i in decision.indicators if i.favours is not None]
            yield self.finding(
                Severity.INFO,
                "the type indicators disagree: " + "; ".join(_indicator_text(i) for i in given)
                + f"; decided: {_value(predicted) or 'none'} ({decision.row})",
                ingredients=names, values=values,
                advice="information, not a fault: the decided type rests on the system as a "
                       "whole; confirm it on the first batch by dilution or conductivity")
