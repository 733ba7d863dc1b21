"""GAP01: library values that are missing, and the number each one blocks."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import DataGap, FormulaFacts
from formdb.schemas.vocab import Severity

_LABELS = {
    "hlb": "HLB",
    "required_hlb_ow": "required HLB (O/W)",
    "required_hlb_wo": "required HLB (W/O)",
    "density": "density",
    "solubility": "solubility",
    "molar_mass": "molar mass",
    "cation_valence": "cation valence",
    "viscosity_mpas": "viscosity",
}


def _effect(gap: DataGap, facts: FormulaFacts) -> tuple[str, str | None, float | None]:
    """What the gap does, the name of the number it touches, and that number (None: blocked)."""
    if gap.blocks == "blend HLB":
        value = facts.blend_hlb
        return ("the blend HLB leaves them out" if value is not None
                else "the blend HLB cannot be worked out"), "blend_hlb", value
    if gap.blocks.startswith("required HLB"):
        value = facts.required_hlb
        if value is None:
            return f"the {gap.blocks} cannot be worked out", "required_hlb", None
        return f"the {gap.blocks} leaves them out", "required_hlb", value
    if gap.blocks == "dispersed_fraction":
        value = facts.dispersed_fraction
        if value is None:
            return "the dispersed_fraction cannot be worked out", "dispersed_fraction", None
        return ("the dispersed_fraction takes their phase's mean density "
                f"({facts.phases.estimated_percent:.3g} % of the formula estimated)",
                "dispersed_fraction", value)
    if gap.blocks == "creaming speed":
        return "no creaming speed", "velocity_m_s", None
    if gap.blocks == "soap formed in place":
        return "the soap formed in place is not worked out", None, None
    return f"{gap.blocks} is weakened", None, None


@register
class DataGaps(Rule):
    """A library value the check needs is missing, and the number it blocks.

    Flags: an info for each kind of missing value: an emulsifier without an HLB (blend HLB), an
    oil-phase ingredient without a required HLB for the type worked to (required HLB), a line
    without a density (dispersed_fraction), and likewise missing solubility, molar mass, cation
    valence or continuous-phase viscosity; each names the ingredients and the number affected.
    Why: a number computed over part of the formula can look sound and be wrong; the report
    must say what it left out so the library can be completed.
    Fails: Paraffinum Liquidum 20 with an emulsifier that has no HLB in the library.
    Passes: every emulsifier with an HLB, every oil with a required HLB, every line with a
    density.
    Options: none.
    """

    code = "GAP01"
    name = "data-gap"
    groups = ("data",)
    default_severity = Severity.INFO

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        for gap in facts.gaps:
            label = _LABELS.get(gap.property, gap.property.replace("_", " "))
            effect, number, value = _effect(gap, facts)
            values: dict[str, float | str | None] = {"property": gap.property,
                                                     "blocks": gap.blocks}
            if number is not None:
                values[number] = value
            detail = f" ({gap.detail})" if gap.detail else ""
            yield self.finding(
                self.default_severity,
                f"no {label} in the library for {', '.join(gap.ingredients)}{detail}: {effect}",
                ingredients=gap.ingredients,
                values=values,
                advice=f"add the {label} of {', '.join(gap.ingredients)} with its source "
                       "(`formdb ingredient edit`), then check again")
