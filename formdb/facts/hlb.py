"""The HLB side of the facts: the emulsifier system, its blend HLB, the oil phase's required HLB
and the blend that would meet it.

A co-emulsifier with no required HLB that is not itself an oil, wax, fatty alcohol or acid has its
own HLB stand in, as Wangpradit et al., OCL 29 (2022) 29, Table 4 do for glyceryl monostearate
(3.8); a fatty alcohol's HLB never does (cetyl alcohol: HLB 1, required HLB about 15).
"""

from __future__ import annotations

from formdb.facts.phases import is_co_emulsifier_only
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import BlendSolution, EmulsifierFacts, LineFacts, RequiredHlbFacts
from formdb.schemas.vocab import EmulsionType, IonicCharacter, Role, Solubility
from formdb.science.hlb import UnreachableHlb, blend_fractions, blend_hlb, required_hlb

# an ingredient with one of these roles has a required HLB of its own, far from its HLB as an
# emulsifier (cetyl alcohol: HLB 1, required HLB about 15; science.md section 1), so its HLB
# never stands in for a missing required HLB
OWN_NEED_ROLES = frozenset({Role.OIL, Role.WAX, Role.BUTTER, Role.FATTY_ALCOHOL,
                            Role.FATTY_ACID, Role.SILICONE})


def emulsifiers(formula: ResolvedFormula, lines: list[LineFacts],
                work: Work) -> list[EmulsifierFacts]:
    """The emulsifier lines, then the soap formed in place, each with its share of the system."""
    members: list[tuple[str, float, float | None, Solubility | None, IonicCharacter | None,
                        bool, int | None, str | None]] = []
    by_no = {ln.line_no: ln for ln in formula.lines}
    for lf in lines:
        if not lf.emulsifier:
            continue
        ing = by_no[lf.line_no].ingredient
        side = lf.phase if lf.phase != "none" else None
        if ing.p.hlb is None:
            work.gap("hlb", ing.inci_name, "blend HLB")
        members.append((ing.inci_name, lf.percent, ing.p.hlb, ing.p.solubility,
                        ing.p.ionic_character, False, lf.line_no, side))
    members.extend((soap.facts.soap, soap.facts.soap_percent, soap.facts.hlb,
                    soap.solubility, soap.ionic_character, True, None, soap.side)
                   for soap in work.soaps)
    total = sum(m[1] for m in members)
    return [EmulsifierFacts(inci=m[0], percent=m[1], hlb=m[2], solubility=m[3],
                            ionic_character=m[4], share=m[1] / total if total > 0 else 0.0,
                            formed_in_place=m[5], line_no=m[6],
                            side=m[7])
            for m in members]


def blend(emulsifiers: list[EmulsifierFacts], emulsifier_percent: float,
          work: Work) -> tuple[float | None, float]:
    """The blend HLB of the members with an HLB, and the % it covers."""
    known = [(e.percent, float(e.hlb)) for e in emulsifiers if e.hlb is not None and e.percent > 0]
    value = blend_hlb(known) if known else None
    if value is not None and len(known) < len(emulsifiers):
        work.note(f"blend HLB covers {sum(m for m, _ in known):.4g} of "
                  f"{emulsifier_percent:.4g} % emulsifier (the rest has no HLB)")
    return value, sum(m for m, _ in known)


def required(formula: ResolvedFormula, lines: list[LineFacts], kind: EmulsionType,
             work: Work) -> RequiredHlbFacts:
    """The oil phase's required HLB for one emulsion type, and which members lack a value."""
    by_no = {ln.line_no: ln for ln in formula.lines}
    parts: list[tuple[float, float | None]] = []
    names: list[str] = []
    for lf in lines:
        if not lf.required_hlb_member:
            continue
        ing = by_no[lf.line_no].ingredient
        value = ing.p.required_hlb_ow if kind == EmulsionType.OW else ing.p.required_hlb_wo
        if value is None and is_co_emulsifier_only(ing) and ing.p.hlb is not None \
                and not ing.roles & OWN_NEED_ROLES:
            value = ing.p.hlb
            work.note(f"{ing.inci_name}: co-emulsifier without a required HLB; its own HLB "
                      f"{value:g} stands for its need (as Wangpradit et al. 2022 do for "
                      "glyceryl monostearate)")
        parts.append((lf.remaining_percent, value))
        names.append(ing.inci_name)
    result = required_hlb(parts)
    return RequiredHlbFacts(
        emulsion_type=kind, value=result.value, covered_percent=result.covered_mass,
        members_percent=sum(p[0] for p in parts),
        missing=tuple(names[i] for i in result.missing))


def working_required(working: EmulsionType | None, rhlb_ow: RequiredHlbFacts,
                     rhlb_wo: RequiredHlbFacts, work: Work) -> float | None:
    """The required HLB for the working type (gaps for the members without one)."""
    if working is None:
        work.note("no intended type and no prediction: required HLB, dispersed phase and "
                  "interface are not worked out")
        return None
    chosen = rhlb_ow if working == EmulsionType.OW else rhlb_wo
    prop = "required_hlb_ow" if working == EmulsionType.OW else "required_hlb_wo"
    for name in chosen.missing:
        work.gap(prop, name, f"required HLB ({working.value})")
    return chosen.value


def solve(target: float, emulsifiers: list[EmulsifierFacts]) -> BlendSolution | None:
    """The proportions of the present emulsifiers that give ``target`` (or how far they reach)."""
    known = [e for e in emulsifiers if e.hlb is not None and e.percent > 0]
    if not known:
        return None
    hlbs = tuple(float(e.hlb) for e in known if e.hlb is not None)
    names = tuple(e.inci for e in known)
    present = sum(e.percent for e in known)
    method = {1: "a single emulsifier", 2: "lever rule of two emulsifiers"}.get(
        len(known), "least change from the present proportions")
    low, high = min(hlbs), max(hlbs)
    try:
        fractions = blend_fractions(target, hlbs, start=[e.percent for e in known])
    except UnreachableHlb as exc:
        return BlendSolution(target_hlb=target, emulsifiers=names, hlbs=hlbs, reachable=False,
                             reachable_low=exc.low, reachable_high=exc.high, method=method)
    return BlendSolution(target_hlb=target, emulsifiers=names, hlbs=hlbs, reachable=True,
                         reachable_low=low, reachable_high=high, fractions=tuple(fractions),
                         percents=tuple(f * present for f in fractions), method=method)
