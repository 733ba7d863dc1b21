"""Which phase each line belongs to, and which lines make up the emulsifier system.

- The emulsifier system: lines with the role ``emulsifier`` (fatty acids excepted: their soap is
  the emulsifier) plus soap formed in place. A ``co-emulsifier`` that is not an emulsifier
  (fatty alcohols, non-self-emulsifying glyceryl stearate) belongs to the oil phase and counts in
  its required HLB.
- Phases: emulsifiers by the side they dissolve on; other lines by solubility, then by role
  (oils, waxes, butters, fatty alcohols and acids, silicones, emollients: oil; water, humectants,
  electrolytes, thickeners, pH adjusters, neutralisers, chelators: water); insoluble solids and
  pigments belong to neither phase.
"""

from __future__ import annotations

from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.result import DEFAULT_TRACE_PHASE_PERCENT, LineFacts, PhaseName
from formdb.schemas.vocab import Role, Solubility

OIL_ROLES = frozenset({Role.OIL, Role.WAX, Role.BUTTER, Role.FATTY_ALCOHOL, Role.FATTY_ACID,
                       Role.SILICONE, Role.EMOLLIENT})
# oil-phase ingredients whose need the emulsifiers must meet (counted in the required HLB)
OIL_NEED_ROLES = OIL_ROLES | {Role.CO_EMULSIFIER, Role.UV_FILTER}
# an additive below the trace threshold is dissolved, not an oil to emulsify (rule of thumb, as
# for the kind: a perfume, a preservative or an antioxidant at a fraction of a percent), so it is
# no member of the required HLB even where another role (ethylhexylglycerin: emollient) says oil
ADDITIVE_ROLES = frozenset({Role.PRESERVATIVE, Role.FRAGRANCE, Role.ANTIOXIDANT, Role.ALLERGEN,
                            Role.COLOURANT})
WATER_ROLES = frozenset({Role.WATER, Role.HUMECTANT, Role.ELECTROLYTE, Role.THICKENER,
                         Role.PH_ADJUSTER, Role.NEUTRALISER, Role.CHELATOR})
SOLID_ROLES = frozenset({Role.PIGMENT})
HLB_WATER_SOLUBLE_ABOVE = 10.0  # rule of thumb: HLB below 10 oil-soluble, above 10 water-soluble


def is_emulsifier(ing: IngredientRecord) -> bool:
    """In the emulsifier system: the emulsifier role, fatty acids excepted (their soap is)."""
    return ing.has_role(Role.EMULSIFIER) and not ing.has_role(Role.FATTY_ACID)


def is_hydrocolloid(ing: IngredientRecord) -> bool:
    """A gum or protein that emulsifies and thickens: a polymer, which has no HLB in Griffin's
    sense (its value is never averaged into a blend) and is never an HLB partner."""
    return ing.has_role(Role.EMULSIFIER) and ing.has_role(Role.THICKENER)


def is_co_emulsifier_only(ing: IngredientRecord) -> bool:
    return ing.has_role(Role.CO_EMULSIFIER) and not is_emulsifier(ing)


def emulsifier_side(ing: IngredientRecord, work: Work) -> tuple[str | None, str]:
    """The side an emulsifier dissolves on (Bancroft), and why."""
    sol = ing.p.solubility
    if sol in (Solubility.WATER, Solubility.DISPERSIBLE, Solubility.OIL):
        work.read("solubility", ing.inci_name)
    if sol in (Solubility.WATER, Solubility.DISPERSIBLE):
        return "water", f"solubility: {sol.value}"
    if sol == Solubility.OIL:
        return "oil", "solubility: oil"
    hlb = ing.p.hlb
    if sol is None and hlb is not None and hlb != HLB_WATER_SOLUBLE_ABOVE:
        side = "water" if hlb > HLB_WATER_SOLUBLE_ABOVE else "oil"
        work.read("hlb", ing.inci_name)
        work.note(f"{ing.inci_name}: no solubility in the library; placed on the {side} side "
                  f"by its HLB {hlb:g} (rule of thumb: above 10 water-soluble, below oil-soluble)")
        work.gap("solubility", ing.inci_name, "type by Bancroft", "placed by HLB instead")
        return side, f"HLB {hlb:g} (no solubility)"
    work.gap("solubility", ing.inci_name, "type by Bancroft")
    return None, "no solubility"


def place_line(ing: IngredientRecord, work: Work) -> tuple[PhaseName, str]:
    """The phase a non-emulsifier line belongs to: solubility first, then its roles."""
    sol = ing.p.solubility
    if ing.has_role(Role.WATER):
        return "water", "role: water"
    if sol is not None:
        work.read("solubility", ing.inci_name)
    if sol == Solubility.OIL:
        return "oil", "solubility: oil"
    if sol in (Solubility.WATER, Solubility.DISPERSIBLE):
        return "water", f"solubility: {sol.value}"
    if sol == Solubility.INSOLUBLE:
        return "none", "insoluble solid"
    for role in sorted(ing.roles):
        if role in OIL_ROLES:
            return "oil", f"role: {role.value}"
    for role in sorted(ing.roles):
        if role in WATER_ROLES:
            return "water", f"role: {role.value}"
    if ing.roles & SOLID_ROLES:
        return "none", "pigment"
    return "none", "no solubility or phase role"


def line_facts(formula: ResolvedFormula, work: Work,
               trace_percent: float = DEFAULT_TRACE_PHASE_PERCENT) -> list[LineFacts]:
    """Each line's phase, volume and what is left of it after soap formation; an additive below
    ``trace_percent`` is not counted in the required HLB."""
    out = []
    for ln in formula.lines:
        ing = ln.ingredient
        emulsifier = is_emulsifier(ing)
        if emulsifier:
            side, reason = emulsifier_side(ing, work)
            phase: PhaseName = side if side in ("oil", "water") else "none"  # type: ignore[assignment]
        else:
            phase, reason = place_line(ing, work)
            if reason == "no solubility or phase role":
                work.gap("solubility", ing.inci_name, "phase assignment (dispersed_fraction)")
        remaining = work.remaining[ln.line_no]
        trace_additive = bool(ing.roles & ADDITIVE_ROLES) and remaining < trace_percent
        member = (phase == "oil" and not emulsifier and remaining > 0 and not trace_additive
                  and (bool(ing.roles & OIL_NEED_ROLES) or ing.p.required_hlb_ow is not None
                       or ing.p.required_hlb_wo is not None))
        density = ing.p.density
        out.append(LineFacts(
            line_no=ln.line_no, inci=ing.inci_name, percent=ln.percent, phase=phase,
            phase_letter=ln.phase,
            phase_reason=reason, density=density,
            volume_ml=remaining / density if density else None, remaining_percent=remaining,
            emulsifier=emulsifier, required_hlb_member=member))
    return out
