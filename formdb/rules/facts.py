"""Work out a formula's facts once: phases, soap formed in place, HLB balance, type, packing.

This is the arithmetic a chemist does by hand before a batch, on 100 g of the formula as written.
The science (``formdb.science``) does each calculation; this module decides what goes in:

- Soap formed in place: a fatty-acid line and a base line (one with ``base_equivalents``) react.
  A base with a matching soap pair (reference data) is used first; without a pair the
  neutralisation is still worked out and the soap is placed by the base's cation valence. The
  neutralised acid and base leave their phases; the soap joins the emulsifier system (and the
  water side when monovalent, the oil side when divalent or trivalent).
- The emulsifier system: lines with the role ``emulsifier`` (fatty acids excepted: their soap is
  the emulsifier) plus soap formed in place. A ``co-emulsifier`` that is not an emulsifier
  (fatty alcohols, non-self-emulsifying glyceryl stearate) belongs to the oil phase and counts in
  its required HLB. A co-emulsifier with no required HLB that is not itself an oil, wax, fatty
  alcohol or acid has its own HLB stand in, as Wangpradit et al., OCL 29 (2022) 29, Table 4 do
  for glyceryl monostearate (3.8); a fatty alcohol's HLB never does (cetyl alcohol: HLB 1,
  required HLB about 15).
- Phases: emulsifiers by the side they dissolve on; other lines by solubility, then by role
  (oils, waxes, butters, fatty alcohols and acids, silicones, emollients: oil; water, humectants,
  electrolytes, thickeners, pH adjusters, neutralisers, chelators: water); insoluble solids and
  pigments belong to neither phase.
- A line without a density takes its phase's mean density (noted, and a data gap).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from formdb.rules.allergen_table import allergen_table
from formdb.rules.composition import has_mixtures, substances
from formdb.rules.exposure_sheet import exposure_sheet
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import ReferenceData, SoapPair
from formdb.schemas.result import (
    BlendSolution,
    CreamingFacts,
    DataGap,
    EmulsifierFacts,
    FactsSettings,
    FormulaFacts,
    InterfaceFacts,
    LineFacts,
    PhaseFacts,
    PhaseName,
    RequiredHlbFacts,
    SoapFacts,
    SubstanceFacts,
)
from formdb.schemas.vocab import EmulsionType, IonicCharacter, Role, Solubility
from formdb.science.emulsion_type import bancroft_type
from formdb.science.hlb import UnreachableHlb, blend_fractions, blend_hlb, hlb_class, required_hlb
from formdb.science.interface import emulsifier_needed_g, interfacial_area_m2, specific_area
from formdb.science.packing import CLOSE_PACKING, RANDOM_CLOSE_PACKING, volume_fraction
from formdb.science.soap import neutralise, soap_favours
from formdb.science.stokes import creaming_velocity

OIL_ROLES = frozenset({Role.OIL, Role.WAX, Role.BUTTER, Role.FATTY_ALCOHOL, Role.FATTY_ACID,
                       Role.SILICONE, Role.EMOLLIENT})
# oil-phase ingredients whose need the emulsifiers must meet (counted in the required HLB)
OIL_NEED_ROLES = OIL_ROLES | {Role.CO_EMULSIFIER, Role.UV_FILTER}
WATER_ROLES = frozenset({Role.WATER, Role.HUMECTANT, Role.ELECTROLYTE, Role.THICKENER,
                         Role.PH_ADJUSTER, Role.NEUTRALISER, Role.CHELATOR})
SOLID_ROLES = frozenset({Role.PIGMENT})
# an ingredient with one of these roles has a required HLB of its own, far from its HLB as an
# emulsifier (cetyl alcohol: HLB 1, required HLB about 15; science.md section 1), so its HLB
# never stands in for a missing required HLB
OWN_NEED_ROLES = frozenset({Role.OIL, Role.WAX, Role.BUTTER, Role.FATTY_ALCOHOL,
                            Role.FATTY_ACID, Role.SILICONE})
SOAP_CLASS = "carboxylate soap"
WATER_DENSITY = 0.99705  # g/mL at 25 degC (CRC Handbook; IAPWS), for water formed by neutralising
HLB_WATER_SOLUBLE_ABOVE = 10.0  # rule of thumb: HLB below 10 oil-soluble, above 10 water-soluble


@dataclass
class SoapMember:
    """Soap formed in the batch with what the phase and emulsifier sums need."""

    facts: SoapFacts
    solubility: Solubility | None
    ionic_character: IonicCharacter | None
    side: str | None
    density: float | None


@dataclass
class _Work:
    """Scratch state while the facts are being worked out."""

    remaining: dict[int, float]
    soaps: list[SoapMember] = field(default_factory=list)
    water_formed: float = 0.0
    gaps: dict[tuple[str, str], tuple[list[str], str]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    def gap(self, prop: str, ingredient: str, blocks: str, detail: str = "") -> None:
        names, old = self.gaps.setdefault((prop, blocks), ([], detail))
        if ingredient not in names:
            names.append(ingredient)
        if detail and not old:
            self.gaps[(prop, blocks)] = (names, detail)

    def note(self, text: str) -> None:
        if text not in self.notes:
            self.notes.append(text)


def _keys(ing: IngredientRecord) -> set[str]:
    return {name_key(ing.inci_name)} | {name_key(s) for s in ing.synonyms}


def _soap_pair(reference: ReferenceData, acid: IngredientRecord,
               base: IngredientRecord) -> SoapPair | None:
    acid_keys, base_keys = _keys(acid), _keys(base)
    for pair in reference.soap_pairs:
        if name_key(pair.acid_inci) in acid_keys and name_key(pair.base_inci) in base_keys:
            return pair
    return None


def soap_record(reference: ReferenceData, inci: str) -> IngredientRecord | None:
    wanted = name_key(inci)
    for key, record in reference.soaps.items():
        if name_key(key) == wanted or name_key(record.inci_name) == wanted:
            return record
    return None


def _soap_side(record: IngredientRecord | None, base: IngredientRecord,
               work: _Work) -> tuple[str | None, Solubility | None]:
    """Which side a soap counts on: its library solubility, else its base's cation valence."""
    if record is not None and record.p.solubility is not None:
        sol = record.p.solubility
        if sol in (Solubility.WATER, Solubility.DISPERSIBLE):
            return "water", sol
        if sol == Solubility.OIL:
            return "oil", sol
    valence = base.p.cation_valence
    if valence is not None:
        return ("water", Solubility.WATER) if valence == 1 else ("oil", Solubility.OIL)
    equivalents = base.p.base_equivalents or 1.0
    work.gap("cation_valence", base.inci_name, "the side of soap formed in place",
             "placed by its base equivalents instead")
    favoured = soap_favours(equivalents)
    return ("water", Solubility.WATER) if favoured == EmulsionType.OW else ("oil", Solubility.OIL)


def _form_soaps(formula: ResolvedFormula, reference: ReferenceData, work: _Work) -> None:
    acids = [ln for ln in formula.lines if ln.ingredient.has_role(Role.FATTY_ACID)]
    bases = [ln for ln in formula.lines if ln.ingredient.p.base_equivalents is not None
             and not ln.ingredient.has_role(Role.FATTY_ACID)]
    if not acids or not bases:
        return
    for acid in acids:
        ordered = sorted(bases, key=lambda b: (_soap_pair(reference, acid.ingredient,
                                                          b.ingredient) is None, b.line_no))
        for base in ordered:
            if work.remaining[acid.line_no] <= 0:
                break
            if work.remaining[base.line_no] <= 0:
                continue
            _neutralise_pair(acid, base, reference, work)


def _neutralise_pair(acid: ResolvedLine, base: ResolvedLine, reference: ReferenceData,
                     work: _Work) -> None:
    a, b = acid.ingredient, base.ingredient
    lacking = [ing.inci_name for ing in (a, b) if ing.p.molar_mass is None]
    if lacking:
        for name in lacking:
            work.gap("molar_mass", name, "soap formed in place",
                     f"{a.inci_name} and {b.inci_name} would form a soap")
        return
    assert a.p.molar_mass is not None and b.p.molar_mass is not None
    assert b.p.base_equivalents is not None
    water_per_eq = b.p.neutralisation_water
    if water_per_eq is None:
        water_per_eq = 0.0
        work.note(f"{b.inci_name}: no neutralisation water in the library, taken as 0 "
                  "(no water formed)")
    result = neutralise(work.remaining[acid.line_no], a.p.molar_mass,
                        work.remaining[base.line_no], b.p.molar_mass,
                        b.p.base_equivalents, water_per_eq)
    if result.soap_mass <= 0:
        return
    pair = _soap_pair(reference, a, b)
    record = soap_record(reference, pair.soap_inci) if pair else None
    if pair is not None and record is None:
        work.note(f"soap pair {a.inci_name} + {b.inci_name} names {pair.soap_inci}, which is "
                  "not in the library; the soap is placed by its base's valence")
    side, solubility = _soap_side(record, b, work)
    acid_used = work.remaining[acid.line_no] - result.acid_left_mass
    base_used = work.remaining[base.line_no] - result.base_left_mass
    work.remaining[acid.line_no] = result.acid_left_mass
    work.remaining[base.line_no] = result.base_left_mass
    work.water_formed += result.water_formed_mass
    label = record.inci_name if record else f"soap of {a.inci_name} with {b.inci_name}"
    hlb = record.p.hlb if record else None
    if hlb is None:
        work.gap("hlb", label, "blend HLB",
                 "soap formed in place" + ("" if record else " (no soap pair in the library)"))
    facts = SoapFacts(
        acid=a.inci_name, base=b.inci_name, soap=label, soap_in_library=record is not None,
        soap_percent=result.soap_mass, acid_used_percent=acid_used, base_used_percent=base_used,
        acid_left_percent=result.acid_left_mass, base_left_percent=result.base_left_mass,
        water_formed_percent=result.water_formed_mass, limiting=result.limiting,
        cation_valence=b.p.cation_valence,
        favours=EmulsionType.OW if side == "water" else EmulsionType.WO,
        hlb=hlb, source=pair.source if pair else None, acid_line_no=acid.line_no,
        base_line_no=base.line_no,
        classes=tuple(sorted(set(record.classes if record else ()) | {SOAP_CLASS})))
    ionic = record.p.ionic_character if record and record.p.ionic_character else \
        IonicCharacter.ANIONIC
    work.soaps.append(SoapMember(facts, solubility, ionic, side,
                                 record.p.density if record else None))


def is_emulsifier(ing: IngredientRecord) -> bool:
    """In the emulsifier system: the emulsifier role, fatty acids excepted (their soap is)."""
    return ing.has_role(Role.EMULSIFIER) and not ing.has_role(Role.FATTY_ACID)


def is_co_emulsifier_only(ing: IngredientRecord) -> bool:
    return ing.has_role(Role.CO_EMULSIFIER) and not is_emulsifier(ing)


def emulsifier_side(ing: IngredientRecord, work: _Work) -> tuple[str | None, str]:
    """The side an emulsifier dissolves on (Bancroft), and why."""
    sol = ing.p.solubility
    if sol in (Solubility.WATER, Solubility.DISPERSIBLE):
        return "water", f"solubility: {sol.value}"
    if sol == Solubility.OIL:
        return "oil", "solubility: oil"
    hlb = ing.p.hlb
    if sol is None and hlb is not None and hlb != HLB_WATER_SOLUBLE_ABOVE:
        side = "water" if hlb > HLB_WATER_SOLUBLE_ABOVE else "oil"
        work.note(f"{ing.inci_name}: no solubility in the library; placed on the {side} side "
                  f"by its HLB {hlb:g} (rule of thumb: above 10 water-soluble, below oil-soluble)")
        work.gap("solubility", ing.inci_name, "type by Bancroft", "placed by HLB instead")
        return side, f"HLB {hlb:g} (no solubility)"
    work.gap("solubility", ing.inci_name, "type by Bancroft")
    return None, "no solubility"


def place_line(ing: IngredientRecord) -> tuple[PhaseName, str]:
    """The phase a non-emulsifier line belongs to: solubility first, then its roles."""
    sol = ing.p.solubility
    if ing.has_role(Role.WATER):
        return "water", "role: water"
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


def _line_facts(formula: ResolvedFormula, work: _Work) -> list[LineFacts]:
    out = []
    for ln in formula.lines:
        ing = ln.ingredient
        emulsifier = is_emulsifier(ing)
        if emulsifier:
            side, reason = emulsifier_side(ing, work)
            phase: PhaseName = side if side in ("oil", "water") else "none"  # type: ignore[assignment]
        else:
            phase, reason = place_line(ing)
            if reason == "no solubility or phase role":
                work.gap("solubility", ing.inci_name, "phase assignment (dispersed_fraction)")
        remaining = work.remaining[ln.line_no]
        member = (phase == "oil" and not emulsifier and remaining > 0
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


def _emulsifiers(formula: ResolvedFormula, lines: list[LineFacts],
                 work: _Work) -> list[EmulsifierFacts]:
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
                            side=m[7])  # type: ignore[arg-type]
            for m in members]


def _required(formula: ResolvedFormula, lines: list[LineFacts], kind: EmulsionType,
              work: _Work) -> RequiredHlbFacts:
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


def _solve(target: float, emulsifiers: list[EmulsifierFacts]) -> BlendSolution | None:
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


@dataclass
class _Phase:
    mass: float = 0.0
    parts: list[tuple[float, float | None, str]] = field(default_factory=list)

    def add(self, mass: float, density: float | None, name: str) -> None:
        if mass > 0:
            self.mass += mass
            self.parts.append((mass, density, name))

    def mean_density(self) -> float | None:
        known = [(m, d) for m, d, _ in self.parts if d]
        volume = sum(m / d for m, d in known if d)
        return sum(m for m, _ in known) / volume if volume > 0 else None

    def filled(self) -> list[tuple[float, float]] | None:
        """(mass, density) with missing densities at the phase mean; None if nothing known."""
        if not self.parts:
            return []
        mean = self.mean_density()
        if mean is None:
            return None
        return [(m, d if d else mean) for m, d, _ in self.parts]

    def volume(self) -> float | None:
        filled = self.filled()
        return None if filled is None else sum(m / d for m, d in filled)

    def missing(self) -> list[str]:
        return [name for _, d, name in self.parts if not d]

    def main_part(self) -> str | None:
        return max(self.parts, key=lambda p: p[0])[2] if self.parts else None


def _phases(lines: list[LineFacts], work: _Work) -> tuple[_Phase, _Phase, float, list[str]]:
    oil, water = _Phase(), _Phase()
    other, neither = 0.0, []
    for lf in lines:
        if lf.phase == "oil":
            oil.add(lf.remaining_percent, lf.density, lf.inci)
        elif lf.phase == "water":
            water.add(lf.remaining_percent, lf.density, lf.inci)
        elif lf.remaining_percent > 0:
            other += lf.remaining_percent
            neither.append(lf.inci)
    for soap in work.soaps:
        target = oil if soap.side == "oil" else water if soap.side == "water" else None
        if target is None:
            other += soap.facts.soap_percent
            neither.append(soap.facts.soap)
        else:
            target.add(soap.facts.soap_percent, soap.density, soap.facts.soap)
    water.add(work.water_formed, WATER_DENSITY, "water formed by neutralisation")
    return oil, water, other, neither


def compute_facts(formula: ResolvedFormula, reference: ReferenceData,
                  settings: FactsSettings | None = None) -> FormulaFacts:
    """Every hand-worked number of one formula (pure: no database, no rule options)."""
    settings = settings or FactsSettings()
    work = _Work(remaining={ln.line_no: ln.percent for ln in formula.lines})
    _form_soaps(formula, reference, work)
    lines = _line_facts(formula, work)
    emulsifiers = _emulsifiers(formula, lines, work)
    emulsifier_percent = sum(e.percent for e in emulsifiers)
    by_no = {ln.line_no: ln.ingredient for ln in formula.lines}
    co_emulsifiers = tuple(lf.inci for lf in lines if is_co_emulsifier_only(by_no[lf.line_no]))

    known = [(e.percent, float(e.hlb)) for e in emulsifiers if e.hlb is not None and e.percent > 0]
    blend = blend_hlb(known) if known else None
    if blend is not None and len(known) < len(emulsifiers):
        work.note(f"blend HLB covers {sum(m for m, _ in known):.4g} of "
                  f"{emulsifier_percent:.4g} % emulsifier (the rest has no HLB)")

    water_side = sum(e.percent for e in emulsifiers if e.side == "water")
    oil_side = sum(e.percent for e in emulsifiers if e.side == "oil")
    by_bancroft = (bancroft_type(water_side, oil_side, margin=settings.bancroft_margin)
                   if water_side + oil_side > 0 else None)
    by_hlb = (hlb_class(blend, wo_max=settings.hlb_wo_max, ow_min=settings.hlb_ow_min)
              if blend is not None else None)
    predicted = by_bancroft or by_hlb
    disagree = by_bancroft is not None and by_hlb is not None and by_bancroft != by_hlb
    if emulsifiers and water_side + oil_side > 0 and by_bancroft is None:
        work.note("Bancroft's rule predicts no type: the emulsifier system is split about "
                  "evenly between water- and oil-soluble members")

    intended = formula.formula.intended_type
    working = intended or predicted
    source = "intended" if intended else ("predicted" if predicted else None)
    rhlb_ow = _required(formula, lines, EmulsionType.OW, work)
    rhlb_wo = _required(formula, lines, EmulsionType.WO, work)
    chosen = None
    if working is not None:
        chosen = rhlb_ow if working == EmulsionType.OW else rhlb_wo
        prop = "required_hlb_ow" if working == EmulsionType.OW else "required_hlb_wo"
        for name in chosen.missing:
            work.gap(prop, name, f"required HLB ({working.value})")
    else:
        work.note("no intended type and no prediction: required HLB, dispersed phase and "
                  "interface are not worked out")
    required = chosen.value if chosen else None
    tol = settings.hlb_tolerance
    solution = _solve(required, emulsifiers) if required is not None else None

    oil, water, other, neither = _phases(lines, work)
    if neither:
        work.note(f"in neither liquid phase: {', '.join(neither)}")
    for phase in (oil, water):
        for name in phase.missing():
            work.gap("density", name, "dispersed_fraction",
                     "estimated at its phase's mean density")
    oil_volume, water_volume = oil.volume(), water.volume()

    dispersed_name = None if working is None else (
        "oil" if working == EmulsionType.OW else "water")
    fraction = None
    if dispersed_name is not None:
        disp, cont = (oil, water) if dispersed_name == "oil" else (water, oil)
        d_parts, c_parts = disp.filled(), cont.filled()
        if d_parts is None or c_parts is None:
            work.note("dispersed_fraction: a phase has no ingredient with a density")
        elif d_parts or c_parts:
            fraction = volume_fraction(d_parts, c_parts)

    interface = _interface(formula, settings, fraction, oil_volume if dispersed_name == "oil"
                           else water_volume, emulsifier_percent)
    creaming = _creaming(formula, settings, dispersed_name, oil, water, work)

    phases = PhaseFacts(
        oil_percent=oil.mass, water_percent=water.mass, other_percent=other,
        oil_volume_ml=oil_volume, water_volume_ml=water_volume,
        oil_density=oil.mass / oil_volume if oil_volume else None,
        water_density=water.mass / water_volume if water_volume else None,
        missing_density=tuple(oil.missing() + water.missing()),
        estimated_percent=sum(m for p in (oil, water) for m, d, _ in p.parts if not d),
        neither=tuple(neither))

    return FormulaFacts(
        settings=settings,
        percent_total=sum(ln.percent for ln in formula.lines),
        lines=tuple(lines), emulsifiers=tuple(emulsifiers),
        emulsifier_percent=emulsifier_percent, co_emulsifiers=co_emulsifiers,
        soaps=tuple(s.facts for s in work.soaps), blend_hlb=blend,
        blend_hlb_covered_percent=sum(m for m, _ in known),
        required_hlb_ow=rhlb_ow, required_hlb_wo=rhlb_wo,
        working_type=working, working_type_source=source,  # type: ignore[arg-type]
        required_hlb=required,
        target_low=required - tol if required is not None else None,
        target_high=required + tol if required is not None else None,
        blend_solution=solution,
        water_side_emulsifier_percent=water_side, oil_side_emulsifier_percent=oil_side,
        type_by_bancroft=by_bancroft, type_by_hlb=by_hlb, predicted_type=predicted,
        types_disagree=disagree, phases=phases,
        dispersed_phase=dispersed_name,  # type: ignore[arg-type]
        dispersed_fraction=fraction, packing_limit=CLOSE_PACKING,
        random_close_packing=RANDOM_CLOSE_PACKING, interface=interface, creaming=creaming,
        exposure=exposure_sheet(formula, reference, settings),
        allergens=allergen_table(formula, reference, settings),
        substances=tuple(
            SubstanceFacts(inci=item.record.inci_name, percent=item.percent,
                           sources=tuple(item.sources))
            for item in sorted(substances(formula, reference).values(),
                               key=lambda i: (-i.percent, i.record.inci_name))
        ) if has_mixtures(formula, reference) else (),
        gaps=tuple(DataGap(property=prop, ingredients=tuple(names), blocks=blocks,
                           detail=detail)
                   for (prop, blocks), (names, detail) in work.gaps.items()),
        notes=tuple(work.notes))


def _interface(formula: ResolvedFormula, settings: FactsSettings, fraction: float | None,
               dispersed_volume_ml: float | None,
               emulsifier_percent: float) -> InterfaceFacts | None:
    if fraction is None or dispersed_volume_ml is None or dispersed_volume_ml <= 0:
        return None
    process = formula.formula.process
    if process.droplet_diameter_um is not None:
        d_um, d_source = process.droplet_diameter_um, "stated in the formula"
    else:
        d_um, d_source = settings.droplet_diameter_um, settings.droplet_diameter_source
    if process.surface_excess_mg_m2 is not None:
        gamma, g_source = process.surface_excess_mg_m2, "stated in the formula"
    else:
        gamma, g_source = settings.surface_excess_mg_m2, settings.surface_excess_source
    d_m = d_um * 1e-6
    area = interfacial_area_m2(dispersed_volume_ml * 1e-6, d_m)
    needed = emulsifier_needed_g(area, gamma)
    return InterfaceFacts(
        droplet_diameter_um=d_um, droplet_source=d_source,
        specific_area_m2_per_ml=specific_area(fraction, d_m) * 1e-6, area_m2=area,
        surface_excess_mg_m2=gamma, surface_excess_source=g_source,
        emulsifier_needed_percent=needed, emulsifier_present_percent=emulsifier_percent,
        coverage_ratio=emulsifier_percent / needed if needed > 0 else None)


def _creaming(formula: ResolvedFormula, settings: FactsSettings, dispersed_name: str | None,
              oil: _Phase, water: _Phase, work: _Work) -> CreamingFacts | None:
    if dispersed_name is None:
        return None
    disp, cont = (oil, water) if dispersed_name == "oil" else (water, oil)
    d_vol, c_vol = disp.volume(), cont.volume()
    if not d_vol or not c_vol or disp.mass <= 0 or cont.mass <= 0:
        return None
    rho_d, rho_c = disp.mass / d_vol * 1000.0, cont.mass / c_vol * 1000.0
    main = cont.main_part()
    records = {ln.ingredient.inci_name: ln.ingredient for ln in formula.lines}
    viscosity = records[main].p.viscosity_mpas if main in records else None
    if main is not None and viscosity is None:
        work.gap("viscosity_mpas", main, "creaming speed",
                 "the main ingredient of the continuous phase")
    d_um = formula.formula.process.droplet_diameter_um or settings.droplet_diameter_um
    velocity = None
    if viscosity is not None and rho_d != rho_c:
        velocity = creaming_velocity(d_um * 1e-6, rho_d, rho_c, viscosity / 1000.0)
        work.note(f"creaming speed uses the viscosity of {main} alone; thickeners and crowded "
                  "drops slow creaming, so the real speed is lower (Stokes, dilute limit)")
    elif viscosity is not None:
        velocity = 0.0
    return CreamingFacts(
        droplet_diameter_um=d_um, dispersed_density_kg_m3=rho_d, continuous_density_kg_m3=rho_c,
        density_difference_kg_m3=rho_c - rho_d, continuous_viscosity_mpas=viscosity,
        viscosity_from=main if viscosity is not None else None, velocity_m_s=velocity,
        velocity_mm_per_day=velocity * 1000.0 * 86400.0 if velocity is not None else None)
