"""Soap formed in the batch, checked against molar masses from the molecular formulas.

All molar masses are computed from molecular formulas with IUPAC standard atomic weights
(conventional values); the expected soap masses are "computed from molar masses".
"""

from __future__ import annotations

import pytest

from formdb.schemas.vocab import EmulsionType
from formdb.science.soap import WATER_MOLAR_MASS, Neutralisation, neutralise, soap_favours

ATOMIC = {"C": 12.011, "H": 1.008, "O": 15.999, "N": 14.007, "Na": 22.990, "Mg": 24.305}


def mm(**atoms: int) -> float:
    return sum(ATOMIC[el] * n for el, n in atoms.items())


STEARIC_ACID = mm(C=18, H=36, O=2)        # 284.48
OLEIC_ACID = mm(C=18, H=34, O=2)          # 282.46
TRIETHANOLAMINE = mm(C=6, H=15, N=1, O=3)  # 149.19
SODIUM_HYDROXIDE = mm(Na=1, O=1, H=1)     # 39.997
MAGNESIUM_OXIDE = mm(Mg=1, O=1)           # 40.304
TEA_STEARATE = mm(C=24, H=51, N=1, O=5)   # C17H35COO- HN+(CH2CH2OH)3
SODIUM_STEARATE = mm(C=18, H=35, Na=1, O=2)  # 306.46
MAGNESIUM_OLEATE = mm(C=36, H=66, Mg=1, O=4)  # Mg(C17H33COO)2, 587.2


def test_the_molar_masses_in_the_brief() -> None:
    # Computed from molar masses (IUPAC standard atomic weights).
    assert pytest.approx(284.48, abs=0.01) == STEARIC_ACID
    assert pytest.approx(282.46, abs=0.01) == OLEIC_ACID
    assert pytest.approx(149.19, abs=0.01) == TRIETHANOLAMINE
    assert pytest.approx(39.997, abs=0.001) == SODIUM_HYDROXIDE
    assert pytest.approx(40.304, abs=0.001) == MAGNESIUM_OXIDE
    assert mm(H=2, O=1) == pytest.approx(WATER_MOLAR_MASS, abs=0.001)


def _conserved(n: Neutralisation, acid_g: float, base_g: float) -> None:
    out = n.soap_mass + n.water_formed_mass + n.acid_left_mass + n.base_left_mass
    assert out == pytest.approx(acid_g + base_g)


def test_stearic_acid_with_triethanolamine() -> None:
    # 1 eq amine, no water: the ammonium salt (computed from molar masses). 10 g stearic acid
    # with 2 g TEA: the base runs out, stearic acid is left over.
    n = neutralise(10.0, STEARIC_ACID, 2.0, TRIETHANOLAMINE, 1, 0)
    assert n.limiting == "base"
    assert n.acid_neutralised_mol == pytest.approx(2.0 / TRIETHANOLAMINE)
    assert n.soap_molar_mass == pytest.approx(TEA_STEARATE, abs=0.01)
    assert n.soap_mass == pytest.approx(2.0 / TRIETHANOLAMINE * TEA_STEARATE, rel=1e-4)
    assert n.acid_left_mass == pytest.approx(10.0 - 2.0 / TRIETHANOLAMINE * STEARIC_ACID)
    assert n.base_left_mass == 0.0 and n.water_formed_mass == 0.0
    _conserved(n, 10.0, 2.0)


def test_stearic_acid_with_sodium_hydroxide() -> None:
    # 1 eq, 1 water per eq: sodium stearate M 306.46 (computed from molar masses). Equimolar
    # amounts react completely.
    n = neutralise(STEARIC_ACID, STEARIC_ACID, SODIUM_HYDROXIDE, SODIUM_HYDROXIDE, 1, 1)
    assert n.limiting == "exact"
    assert n.soap_mol == pytest.approx(1.0)
    assert n.soap_mass == pytest.approx(SODIUM_STEARATE, abs=0.01)
    assert n.soap_mass == pytest.approx(306.46, abs=0.01)
    assert n.water_formed_mass == pytest.approx(18.015)
    assert n.acid_left_mass == n.base_left_mass == 0.0
    _conserved(n, STEARIC_ACID, SODIUM_HYDROXIDE)


def test_oleic_acid_with_magnesium_oxide() -> None:
    # MgO + 2 RCOOH -> Mg(RCOO)2 + H2O: 2 eq, 0.5 water per eq; magnesium oleate M 587.2 per mole
    # of salt, 293.6 per mole of acid (computed from molar masses). Excess MgO is left over.
    n = neutralise(2 * OLEIC_ACID, OLEIC_ACID, 60.0, MAGNESIUM_OXIDE, 2, 0.5)
    assert n.limiting == "acid"
    assert n.acid_neutralised_mol == pytest.approx(2.0)
    assert n.soap_mol == pytest.approx(1.0)
    assert n.soap_molar_mass == pytest.approx(MAGNESIUM_OLEATE, abs=0.01)
    assert n.soap_molar_mass == pytest.approx(587.2, abs=0.05)
    assert n.soap_mass / n.acid_neutralised_mol == pytest.approx(293.6, abs=0.05)
    assert n.base_left_mass == pytest.approx(60.0 - MAGNESIUM_OXIDE)
    assert n.water_formed_mass == pytest.approx(WATER_MOLAR_MASS)
    _conserved(n, 2 * OLEIC_ACID, 60.0)


def test_no_base_no_soap() -> None:
    n = neutralise(5.0, STEARIC_ACID, 0.0, TRIETHANOLAMINE, 1, 0)
    assert (n.soap_mass, n.limiting, n.acid_left_mass) == (0.0, "base", pytest.approx(5.0))


def test_bad_inputs() -> None:
    with pytest.raises(ValueError, match="acid_mass_g"):
        neutralise(-1.0, STEARIC_ACID, 1.0, TRIETHANOLAMINE, 1, 0)
    with pytest.raises(ValueError, match="base_equivalents"):
        neutralise(1.0, STEARIC_ACID, 1.0, TRIETHANOLAMINE, 0, 0)
    with pytest.raises(ValueError, match="no mass"):
        neutralise(1.0, 10.0, 1.0, 10.0, 1, 2)


def test_valence_sets_the_favoured_type() -> None:
    # Bancroft 1913 via soap solubility (from memory): monovalent soaps water-soluble, O/W;
    # divalent and trivalent oil-soluble, W/O.
    assert soap_favours(1) is EmulsionType.OW
    assert soap_favours(2) is EmulsionType.WO
    assert soap_favours(3) is EmulsionType.WO
