"""Bases left free in the batch: after the soaps form (what the neutralisation leaves over), or
with no fatty acid to take them at all.

A strong base is an alkali-metal hydroxide: a base with one cation charge (``cation_valence`` 1)
that gives one water per equivalent (``neutralisation_water`` 1), i.e. sodium and potassium
hydroxide; triethanolamine (no water formed) and magnesium oxide (divalent) are weak or
insoluble and are left to the pH rules. Other acids present (a pH adjuster that is not a base,
an INCI name ending in "Acid", an anionic polymer such as carbomer) take a free strong base up
before any hydroxide is left: each takes its acid value (mg KOH per g, the pharmacopoeial
measure; every acid group with a pKa well below 12 counts, as a titration to the free-alkali pH
does), converted to the base by equivalents, in the order of the formula. An acid with no acid
value in the library may still take some: the free amount is then an upper bound, and says so.
So sodium hydroxide neutralising carbomer in a gel, or citric acid, leaves no free alkali.
"""

from __future__ import annotations

from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.result import FreeBaseFacts
from formdb.schemas.vocab import Role
from formdb.science.acid_base import acid_equivalents, hydroxide_molarity, strong_base_ph

ACID_CLASSES = frozenset({"anionic polymer"})


def is_base(ing: IngredientRecord) -> bool:
    return ing.p.base_equivalents is not None and not ing.has_role(Role.FATTY_ACID)


def is_strong_base(ing: IngredientRecord) -> bool:
    return is_base(ing) and ing.p.cation_valence == 1 and ing.p.neutralisation_water == 1


def is_other_acid(ing: IngredientRecord) -> bool:
    if is_base(ing) or ing.has_role(Role.FATTY_ACID):
        return False
    return (ing.has_role(Role.PH_ADJUSTER) or ing.inci_name.casefold().endswith(" acid")
            or bool(ing.classes & ACID_CLASSES))


def free_bases(formula: ResolvedFormula, work: Work) -> tuple[FreeBaseFacts, ...]:
    """Every strong base with some of it left free once the soaps formed and the other acids
    took their share, with the pH its free part would give."""
    others = [ln for ln in formula.lines if is_other_acid(ln.ingredient)]
    unknown = tuple(ln.ingredient.inci_name for ln in others if ln.ingredient.p.acid_value is None)
    # mol of acid equivalents each acid with an acid value still has to give, formula order
    # (an acid on two lines gives both)
    pool: dict[str, float] = {}
    for ln in others:
        value = ln.ingredient.p.acid_value
        if value is not None:
            name = ln.ingredient.inci_name
            pool[name] = pool.get(name, 0.0) + acid_equivalents(ln.percent, value)
    water = sum(ln.percent for ln in formula.lines if ln.ingredient.has_role(Role.WATER))
    water += work.water_formed
    soaped = {s.facts.base_line_no for s in work.soaps}
    out = []
    for ln in formula.lines:
        ing = ln.ingredient
        free = work.remaining.get(ln.line_no, 0.0)
        if not is_strong_base(ing) or free <= 1e-9:
            continue
        for prop in ("base_equivalents", "cation_valence", "neutralisation_water"):
            work.read(prop, ing.inci_name)  # what makes it a strong base
        taken_by: list[str] = []
        equivalents = ing.p.base_equivalents or 1.0
        if ing.p.molar_mass:
            work.read("molar_mass", ing.inci_name)
            base_mol = free / ing.p.molar_mass * equivalents
            for name, left in pool.items():
                if base_mol <= 1e-12:
                    break
                if left <= 1e-12:
                    continue
                used = min(left, base_mol)
                work.read("acid_value", name)
                pool[name] = left - used
                base_mol -= used
                taken_by.append(name)
            free = max(0.0, base_mol) / equivalents * ing.p.molar_mass
            if free <= 1e-9:
                work.note(f"{ing.inci_name}: taken up by {', '.join(taken_by)} (acid value): "
                          "no free alkali")
                continue
        molarity = low = high = None
        if ing.p.molar_mass and water > 0:
            molarity = hydroxide_molarity(free, ing.p.molar_mass, equivalents, water)
            low, high = strong_base_ph(molarity)
        elif not ing.p.molar_mass:
            work.gap("molar_mass", ing.inci_name, "free alkali pH")
        out.append(FreeBaseFacts(
            base=ing.inci_name, free_percent=free, strong=True, water_phase_percent=water,
            molar_concentration=molarity, ph_low=low, ph_high=high,
            acids_present=unknown if ing.p.molar_mass else tuple(
                ln.ingredient.inci_name for ln in others),
            after_soap=ln.line_no in soaped, taken_by=tuple(taken_by)))
    return tuple(out)
