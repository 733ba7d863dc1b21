"""Soap formed in place: a fatty-acid line and a base line (one with ``base_equivalents``) react.

A base with a matching soap pair (reference data) is used first; without a pair the
neutralisation is still worked out and the soap is placed by the base's cation valence. The
neutralised acid and base leave their phases; the soap joins the emulsifier system (and the water
side when monovalent, the oil side when divalent or trivalent).
"""

from __future__ import annotations

from formdb.facts.work import SoapMember, Work
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import ReferenceData, SoapPair
from formdb.schemas.result import SoapFacts
from formdb.schemas.vocab import EmulsionType, IonicCharacter, Role, Solubility
from formdb.science.soap import neutralise, soap_favours

SOAP_CLASS = "carboxylate soap"


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
               work: Work) -> tuple[str | None, Solubility | None]:
    """Which side a soap counts on: its library solubility, else its base's cation valence."""
    if record is not None and record.p.solubility is not None:
        sol = record.p.solubility
        if sol in (Solubility.WATER, Solubility.DISPERSIBLE, Solubility.OIL):
            work.read("solubility", record.inci_name)
        if sol in (Solubility.WATER, Solubility.DISPERSIBLE):
            return "water", sol
        if sol == Solubility.OIL:
            return "oil", sol
    valence = base.p.cation_valence
    if valence is not None:
        work.read("cation_valence", base.inci_name)
        return ("water", Solubility.WATER) if valence == 1 else ("oil", Solubility.OIL)
    equivalents = base.p.base_equivalents or 1.0
    work.gap("cation_valence", base.inci_name, "the side of soap formed in place",
             "placed by its base equivalents instead")
    favoured = soap_favours(equivalents)
    return ("water", Solubility.WATER) if favoured == EmulsionType.OW else ("oil", Solubility.OIL)


def form_soaps(formula: ResolvedFormula, reference: ReferenceData, work: Work) -> None:
    """Neutralise every fatty acid with the bases present (paired bases first), into ``work``."""
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
                     work: Work) -> None:
    a, b = acid.ingredient, base.ingredient
    lacking = [ing.inci_name for ing in (a, b) if ing.p.molar_mass is None]
    if lacking:
        for name in lacking:
            work.gap("molar_mass", name, "soap formed in place",
                     f"{a.inci_name} and {b.inci_name} would form a soap")
        return
    assert a.p.molar_mass is not None and b.p.molar_mass is not None
    assert b.p.base_equivalents is not None
    for prop, ing in (("molar_mass", a), ("molar_mass", b), ("base_equivalents", b)):
        work.read(prop, ing.inci_name)
    water_per_eq = b.p.neutralisation_water
    if water_per_eq is not None:
        work.read("neutralisation_water", b.inci_name)
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
    hlb = record.p.hlb if record else None  # Davies' scale: shown, never averaged (no gap)
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
    if record is not None and record.p.ionic_character is not None:
        work.read("ionic_character", record.inci_name)
    work.soaps.append(SoapMember(facts, solubility, ionic, side,
                                 record.p.density if record else None))
