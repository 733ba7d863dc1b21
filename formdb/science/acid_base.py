"""pH of a strong base left free in water: pOH = -log10[OH-], pH = 14 - pOH at 25 degC.

Kw = 1.0e-14 at 25 degC (any physical chemistry text). A fully dissociated base (sodium or
potassium hydroxide) gives [OH-] = equivalents x moles / litres of water. Activity, temperature
and whatever buffers the formula holds move the real pH, so a report gives a range: the ideal
value as the upper end, half a unit below as the lower (rule of thumb).
"""

from __future__ import annotations

import math

PKW_25C = 14.0
KOH_MOLAR_MASS = 56.106  # g/mol, from IUPAC standard atomic weights (K 39.098, O 15.999, H 1.008)
RANGE_BELOW = 0.5  # rule of thumb: activity, temperature and buffers lower the ideal value


def acid_equivalents(mass_g: float, acid_value_mg_koh_g: float) -> float:
    """mol of base ``mass_g`` of an acid neutralises, from its acid value (mg KOH that neutralise
    the free acids of 1 g: the pharmacopoeial definition, Ph. Eur. 2.5.1, recalled from memory),
    one KOH being one equivalent."""
    for name, value in (("mass_g", mass_g), ("acid_value_mg_koh_g", acid_value_mg_koh_g)):
        if not math.isfinite(value) or value < 0:
            raise ValueError(f"{name} must be a finite number >= 0, got {value}")
    return mass_g * acid_value_mg_koh_g / 1000.0 / KOH_MOLAR_MASS


def hydroxide_molarity(mass_g: float, molar_mass: float, equivalents: float,
                       water_g: float) -> float:
    """mol/L of OH- from ``mass_g`` of base dissolved in ``water_g`` of water (about 1 g/mL)."""
    for name, value in (("mass_g", mass_g), ("molar_mass", molar_mass),
                        ("equivalents", equivalents), ("water_g", water_g)):
        if not math.isfinite(value) or value < 0:
            raise ValueError(f"{name} must be a finite number >= 0, got {value}")
    if molar_mass <= 0 or water_g <= 0:
        raise ValueError("molar_mass and water_g must be above zero")
    return mass_g / molar_mass * equivalents / (water_g / 1000.0)


def strong_base_ph(hydroxide_mol_l: float) -> tuple[float, float]:
    """(low, high) pH to expect from a fully dissociated base at ``hydroxide_mol_l`` mol/L."""
    if not math.isfinite(hydroxide_mol_l) or hydroxide_mol_l <= 0:
        raise ValueError(f"hydroxide_mol_l must be above zero, got {hydroxide_mol_l}")
    high = min(PKW_25C, PKW_25C + math.log10(hydroxide_mol_l))
    return high - RANGE_BELOW, high
