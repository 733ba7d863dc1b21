"""Soap formed in the batch: a fatty acid neutralised by a base becomes an emulsifier.

Stoichiometry of a monocarboxylic acid RCOOH with a base carrying ``base_equivalents`` acid-
neutralising equivalents per formula unit (triethanolamine 1, sodium hydroxide 1, magnesium oxide
2). Per equivalent, ``water_per_equivalent`` molecules of water leave (none for an amine, which
forms an ammonium salt; 1 for a hydroxide; 0.5 for an oxide, MgO + 2 RCOOH -> Mg(RCOO)2 + H2O).
The smaller of acid moles and base equivalents is neutralised; the rest is left over.
Masses in grams, molar masses in g/mol, amounts in mol.

A cream whose only emulsifier is such a soap is not "without emulsifier"; monovalent soaps favour
O/W, divalent and trivalent ones W/O (see ``soap_favours``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from formdb.schemas.vocab import EmulsionType

WATER_MOLAR_MASS = 18.015  # g/mol, H2O from IUPAC standard atomic weights (computed)
_EXACT = 1e-9  # relative: acid and base this close are an exact match


@dataclass(frozen=True)
class Neutralisation:
    """What a fatty acid and a base give: amounts in mol, masses in g.

    ``acid_mol``: acid charged; ``base_equivalents_mol``: base equivalents charged;
    ``acid_neutralised_mol``: acid turned into soap (= equivalents used); ``soap_mol``: soap formula
    units (acid neutralised / base equivalents, e.g. half of it for a magnesium soap);
    ``soap_molar_mass``: g/mol per soap formula unit; ``limiting``: "acid" when the acid runs out
    first (base left over), "base" when the base does, "exact" when neither is left.
    """

    acid_mol: float
    base_equivalents_mol: float
    acid_neutralised_mol: float
    soap_mol: float
    soap_molar_mass: float
    soap_mass: float
    water_formed_mass: float
    acid_left_mass: float
    base_left_mass: float
    limiting: str


def _positive(name: str, value: float, *, allow_zero: bool = False) -> None:
    if not math.isfinite(value) or value < 0 or (value == 0 and not allow_zero):
        rule = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name} must be a finite number {rule}, got {value}")


def neutralise(
    acid_mass_g: float,
    acid_molar_mass: float,
    base_mass_g: float,
    base_molar_mass: float,
    base_equivalents: float,
    water_per_equivalent: float,
) -> Neutralisation:
    """Soap, water and leftovers from neutralising a monocarboxylic fatty acid with a base.

    Soap mass per mole of acid neutralised is M_acid + M_base/equivalents - water_per_equivalent x
    M(H2O), with M(H2O) = 18.015 g/mol. Mass is conserved: acid + base = soap + water + leftovers.
    """
    _positive("acid_mass_g", acid_mass_g, allow_zero=True)
    _positive("base_mass_g", base_mass_g, allow_zero=True)
    _positive("acid_molar_mass", acid_molar_mass)
    _positive("base_molar_mass", base_molar_mass)
    _positive("base_equivalents", base_equivalents)
    _positive("water_per_equivalent", water_per_equivalent, allow_zero=True)
    per_acid = acid_molar_mass + base_molar_mass / base_equivalents \
        - water_per_equivalent * WATER_MOLAR_MASS
    if per_acid <= 0:
        raise ValueError("water_per_equivalent is too large: the soap would have no mass")
    acid_mol = acid_mass_g / acid_molar_mass
    equivalents = base_mass_g / base_molar_mass * base_equivalents
    used = min(acid_mol, equivalents)
    if math.isclose(acid_mol, equivalents, rel_tol=_EXACT, abs_tol=1e-15):
        limiting, acid_left, base_left = "exact", 0.0, 0.0
    elif acid_mol < equivalents:
        limiting, acid_left, base_left = "acid", 0.0, (equivalents - used) / base_equivalents
    else:
        limiting, acid_left, base_left = "base", acid_mol - used, 0.0
    return Neutralisation(
        acid_mol=acid_mol,
        base_equivalents_mol=equivalents,
        acid_neutralised_mol=used,
        soap_mol=used / base_equivalents,
        soap_molar_mass=per_acid * base_equivalents,
        soap_mass=used * per_acid,
        water_formed_mass=used * water_per_equivalent * WATER_MOLAR_MASS,
        acid_left_mass=acid_left * acid_molar_mass,
        base_left_mass=base_left * base_molar_mass,
        limiting=limiting,
    )


def soap_favours(base_equivalents: float) -> EmulsionType:
    """The type a soap favours by its cation's valence: monovalent (Na, K, amines) are water-
    soluble, O/W; divalent and trivalent (Mg, Ca, Al) are oil-soluble, W/O (Bancroft 1913)."""
    _positive("base_equivalents", base_equivalents)
    return EmulsionType.OW if base_equivalents < 1.5 else EmulsionType.WO
