"""Packing limits and the dispersed phase's volume fraction."""

from __future__ import annotations

import math

import pytest

from formdb.science.packing import (
    BODY_CENTRED_CUBIC_PACKING,
    CLOSE_PACKING,
    PACKING_LIMITS,
    RANDOM_CLOSE_PACKING,
    SIMPLE_CUBIC_PACKING,
    volume_fraction,
)


def test_packing_constants() -> None:
    # Kepler conjecture (Hales, Ann. Math. 162 (2005) 1065): FCC/HCP 0.74048.
    assert pytest.approx(0.74048, abs=5e-6) == CLOSE_PACKING
    assert pytest.approx(math.pi / (3 * math.sqrt(2))) == CLOSE_PACKING
    # Torquato 1995; Scott & Kilgour 1969: random close packing 0.64 +- 0.02.
    assert pytest.approx(0.637, abs=0.02) == RANDOM_CLOSE_PACKING
    # Geometry (computed from the published formulas): BCC 0.6802, simple cubic 0.5236.
    assert pytest.approx(0.6802, abs=5e-5) == BODY_CENTRED_CUBIC_PACKING
    assert pytest.approx(0.5236, abs=5e-5) == SIMPLE_CUBIC_PACKING
    assert [value for _, value, _ in PACKING_LIMITS] == sorted(
        (value for _, value, _ in PACKING_LIMITS), reverse=True)


def test_volume_fraction_from_weights_and_densities() -> None:
    # 20 g light mineral oil (0.85 g/mL, USP/NF range 0.818-0.880, from memory) in 80 g water
    # (0.99705 g/mL at 25 C, CRC/IAPWS): computed from the densities.
    phi = volume_fraction([(20.0, 0.85)], [(80.0, 0.99705)])
    v_oil, v_water = 20 / 0.85, 80 / 0.99705
    assert phi == pytest.approx(v_oil / (v_oil + v_water))
    assert phi == pytest.approx(0.2267, abs=1e-4)
    assert phi > 0.20  # a lighter oil takes more volume than its weight share


def test_volume_fraction_over_the_limit() -> None:
    # 75 % w/w oil of 0.85 g/mL in water: above pi/sqrt(18) (Hales 2005).
    assert volume_fraction([(75.0, 0.85)], [(25.0, 0.99705)]) > CLOSE_PACKING


def test_bad_inputs() -> None:
    with pytest.raises(ValueError, match="dispersed part 0: density"):
        volume_fraction([(1.0, 0.0)], [(1.0, 1.0)])
    with pytest.raises(ValueError, match="continuous part 1: mass"):
        volume_fraction([(1.0, 0.9)], [(1.0, 1.0), (-2.0, 1.0)])
    with pytest.raises(ValueError, match="no volume"):
        volume_fraction([], [])
