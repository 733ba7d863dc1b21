"""The HLB side of the facts: the emulsifier system, its blend HLB, the oil phase's required HLB
and the blend that would meet it.

A co-emulsifier with no required HLB that is not itself an oil, wax, fatty alcohol or acid has its
own HLB stand in, as Wangpradit et al., OCL 29 (2022) 29, Table 4 do for glyceryl monostearate
(3.8); a fatty alcohol's HLB never does (cetyl alcohol: HLB 1, required HLB about 15).
"""

from __future__ import annotations

from formdb.facts.phases import is_co_emulsifier_only, is_hydrocolloid
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import (
    BlendSolution,
    EmulsifierFacts,
    HlbSystemFacts,
    LineFacts,
    RequiredHlbFacts,
    ValueRead,
)
from formdb.schemas.vocab import EmulsionType, IonicCharacter, Role, Solubility
from formdb.science.hlb import UnreachableHlb, blend_fractions, blend_hlb, hlb_scale, required_hlb

IONISED = frozenset({IonicCharacter.ANIONIC, IonicCharacter.CATIONIC})
# charged members: off Griffin's scale, which is for non-ionic surfactants (Griffin, J. Soc.
# Cosmet. Chem. 5 (1954) 249). An amphoteric (zwitterionic) member's quoted HLB is on no scale the
# blend can average: lecithin's published values run from 4 to 9 (seed note), and a lecithin O/W
# emulsion (a parenteral lipid emulsion) is not a W/O system for its value of 4
CHARGED = IONISED | {IonicCharacter.AMPHOTERIC}
BLEND_HLB = "blend HLB"  # what a missing HLB blocks (the data gap's "blocks")

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
    polymers: set[int] = set()
    by_no = {ln.line_no: ln for ln in formula.lines}
    for lf in lines:
        if not lf.emulsifier:
            continue
        ing = by_no[lf.line_no].ingredient
        side = lf.phase if lf.phase != "none" else None
        if ing.p.ionic_character is not None:  # decides its scale and what leads the system
            work.read("ionic_character", ing.inci_name)
        if is_hydrocolloid(ing):
            polymers.add(lf.line_no)
        elif ing.p.hlb is None and ing.p.ionic_character not in CHARGED:
            # only a member the blend would average needs an HLB: a gum or protein (a
            # polymer) and a charged member (Davies' scale, or a zwitterion) never enter it
            work.gap("hlb", ing.inci_name, BLEND_HLB)
        members.append((ing.inci_name, lf.percent, ing.p.hlb, ing.p.solubility,
                        ing.p.ionic_character, False, lf.line_no, side))
    members.extend((soap.facts.soap, soap.facts.soap_percent, soap.facts.hlb,
                    soap.solubility, soap.ionic_character, True, None, soap.side)
                   for soap in work.soaps)
    total = sum(m[1] for m in members)
    return [EmulsifierFacts(inci=m[0], percent=m[1], hlb=m[2], solubility=m[3],
                            ionic_character=m[4], share=m[1] / total if total > 0 else 0.0,
                            formed_in_place=m[5], line_no=m[6],
                            side=m[7],
                            scale=None if m[2] is None or m[6] in polymers
                            or m[4] == IonicCharacter.AMPHOTERIC else hlb_scale(
                                m[2], m[5] or m[4] in IONISED))
            for m in members]


def griffin_members(emulsifiers: list[EmulsifierFacts] | tuple[EmulsifierFacts, ...]
                    ) -> list[EmulsifierFacts]:
    """The members whose HLB is on Griffin's scale (the only ones a blend HLB averages)."""
    return [e for e in emulsifiers if e.hlb is not None and e.percent > 0
            and e.scale == "griffin"]


def blend(emulsifiers: list[EmulsifierFacts], emulsifier_percent: float, min_coverage: float,
          work: Work) -> tuple[float | None, float, HlbSystemFacts | None]:
    """The blend HLB on Griffin's scale, the % it covers and the system's scale facts.

    Davies-scale members (ionic surfactants, soaps) are not averaged in. The blend HLB is given
    only when the Griffin members make up at least ``min_coverage`` of the emulsifier system;
    otherwise it rests on too little of the system to judge by (None, with a note).
    """
    if not emulsifiers:
        return None, 0.0, None
    griffin = griffin_members(emulsifiers)
    g_mass = sum(e.percent for e in griffin)
    d_mass = sum(e.percent for e in emulsifiers if e.hlb is not None and e.scale == "davies")
    n_mass = sum(e.percent for e in emulsifiers if e.hlb is None)
    raw = blend_hlb([(e.percent, float(e.hlb or 0.0)) for e in griffin]) if griffin else None
    for e in emulsifiers:  # averaged into the blend and solved with, or kept out of it by its
        # value alone (a nonionic above Griffin's 20); a soap's value is no line's
        by_value = e.scale == "davies" and e.ionic_character not in IONISED
        if e.line_no is not None and (e in griffin or by_value):
            work.read("hlb", e.inci)
    coverage = g_mass / emulsifier_percent if emulsifier_percent > 0 else 0.0
    ionic_mass = sum(e.percent for e in emulsifiers
                     if e.scale == "davies" or e.formed_in_place
                     or (e.hlb is None and e.ionic_character in IONISED))
    led_by = "none" if emulsifier_percent <= 0 else (
        "ionic" if ionic_mass > g_mass else "nonionic")
    enough = raw is not None and coverage + 1e-9 >= min_coverage
    davies = [e.inci for e in emulsifiers if e.scale == "davies"]
    if enough:
        assessment = "Griffin balance: the blend HLB of the nonionic members against the " \
                     "required HLB"
        if davies:
            work.note(f"{', '.join(davies)}: HLB on Davies' scale (ionic), not averaged with "
                      "Griffin's values; the blend HLB is that of the nonionic members")
    elif led_by == "ionic":
        assessment = ("led by ionic members (soap or ionic surfactant): no HLB balance; the "
                      "type is judged by their ionic character and soap valence")
    else:
        assessment = ("no HLB verdict: Griffin-scale values cover "
                      f"{share_below(coverage, min_coverage)} of the "
                      f"emulsifier system, below {min_coverage:.0%}")
    if raw is not None and not enough:
        work.note(f"blend HLB {raw:.2f} of {', '.join(e.inci for e in griffin)} covers "
                  f"{share_below(coverage, min_coverage)} of the emulsifier system (at least "
                  f"{min_coverage:.0%} "
                  "needed): no blend HLB verdict")
    elif raw is not None and n_mass > 0:
        work.note(f"blend HLB covers {g_mass:.4g} of {emulsifier_percent:.4g} % emulsifier "
                  "(the rest has no HLB)")
    system = HlbSystemFacts(
        griffin_percent=g_mass, davies_percent=d_mass, no_hlb_percent=n_mass,
        griffin_value=raw, coverage=coverage, min_coverage=min_coverage,
        led_by=led_by, assessment=assessment)
    return (raw if enough else None), g_mass, system


def required(formula: ResolvedFormula, lines: list[LineFacts], kind: EmulsionType,
             work: Work) -> RequiredHlbFacts:
    """The oil phase's required HLB for one emulsion type, and which members lack a value."""
    by_no = {ln.line_no: ln for ln in formula.lines}
    parts: list[tuple[float, float | None]] = []
    names: list[str] = []
    lows: list[tuple[float, float | None]] = []
    highs: list[tuple[float, float | None]] = []
    ranged = False
    read: list[ValueRead] = []
    prop = "required_hlb_ow" if kind == EmulsionType.OW else "required_hlb_wo"
    for lf in lines:
        if not lf.required_hlb_member:
            continue
        ing = by_no[lf.line_no].ingredient
        value = ing.p.required_hlb_ow if kind == EmulsionType.OW else ing.p.required_hlb_wo
        if value is not None:
            read.append(ValueRead(ingredient=ing.inci_name, property=prop))
        elif is_co_emulsifier_only(ing) and ing.p.hlb is not None \
                and not ing.roles & OWN_NEED_ROLES:
            value = ing.p.hlb
            read.append(ValueRead(ingredient=ing.inci_name, property="hlb"))
            work.note(f"{ing.inci_name}: co-emulsifier without a required HLB; its own HLB "
                      f"{value:g} stands for its need (as Wangpradit et al. 2022 do for "
                      "glyceryl monostearate)")
        parts.append((lf.remaining_percent, value))
        names.append(ing.inci_name)
        low, high = ((ing.p.required_hlb_ow_low, ing.p.required_hlb_ow_high)
                     if kind == EmulsionType.OW else
                     (ing.p.required_hlb_wo_low, ing.p.required_hlb_wo_high))
        ranged = ranged or (value is not None and (low is not None or high is not None))
        if value is not None:  # the band's ends rest on the range's ends that widen it
            for end, widens in (("low", low is not None and low < value),
                                ("high", high is not None and high > value)):
                if widens:
                    read.append(ValueRead(ingredient=ing.inci_name, property=f"{prop}_{end}"))
        lows.append((lf.remaining_percent, None if value is None else min(value, low or value)))
        highs.append((lf.remaining_percent, None if value is None else max(value, high or value)))
    result = required_hlb(parts)
    low_avg = required_hlb(lows).value if ranged else None
    high_avg = required_hlb(highs).value if ranged else None
    return RequiredHlbFacts(
        emulsion_type=kind, value=result.value, covered_percent=result.covered_mass,
        members_percent=sum(p[0] for p in parts),
        missing=tuple(names[i] for i in result.missing), low=low_avg, high=high_avg,
        rests_on=tuple(read))


def share_below(share: float, threshold: float) -> str:
    """A share under a threshold as a percentage with the digits that show it under: 79.9 %
    against 80 % reads "79.9%", never "80%, below 80%"."""
    for digits in range(4):
        if round(share * 100, digits) < round(threshold * 100, digits):
            return f"{share:.{digits}%}"
    return f"{share:.4%}"


def working_required(working: EmulsionType | None, rhlb_ow: RequiredHlbFacts,
                     rhlb_wo: RequiredHlbFacts, min_coverage: float,
                     work: Work) -> tuple[float | None, float | None]:
    """The required HLB for the working type and the share of the counted oil phase it rests
    on; the value is None below ``min_coverage`` (gaps for the members without one).

    The library values read are those of the working type; with none, both types' values are
    shown side by side and both are read.
    """
    for shown in ((rhlb_ow, rhlb_wo) if working is None else
                  (rhlb_ow if working == EmulsionType.OW else rhlb_wo,)):
        for value in shown.rests_on:
            # the ends of a sources' range set HLB01's band, which needs a working type
            if working is not None or not value.property.endswith(("_low", "_high")):
                work.read(value.property, value.ingredient)
    if working is None:
        work.note("no intended type and no prediction: required HLB, dispersed phase and "
                  "interface are not worked out")
        return None, None
    chosen = rhlb_ow if working == EmulsionType.OW else rhlb_wo
    prop = "required_hlb_ow" if working == EmulsionType.OW else "required_hlb_wo"
    coverage = (chosen.covered_percent / chosen.members_percent
                if chosen.members_percent > 0 else None)
    enough = coverage is not None and coverage + 1e-9 >= min_coverage
    detail = "" if enough or coverage is None else (
        f"the values cover {share_below(coverage, min_coverage)} of the oil phase, below "
        f"{min_coverage:.0%}: "
        "no balance verdict")
    for name in chosen.missing:
        work.gap(prop, name, f"required HLB ({working.value})", detail)
    if chosen.value is not None and not enough:
        work.note(f"required HLB ({working.value}) {chosen.value:.2f} rests on "
                  f"{chosen.covered_percent:.4g} of {chosen.members_percent:.4g} % oil phase "
                  f"({share_below(coverage or 0.0, min_coverage)}; at least "
                  f"{min_coverage:.0%} needed): no balance verdict and no ratio advice")
        return None, coverage
    return chosen.value, coverage


def solve(target: float, emulsifiers: list[EmulsifierFacts]) -> BlendSolution | None:
    """The proportions of the present emulsifiers that give ``target`` (or how far they reach)."""
    known = griffin_members(emulsifiers)
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
