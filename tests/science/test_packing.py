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
    above,
    volume_fraction,
    volume_fraction_bounds,
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


def test_a_fraction_on_a_limit_is_not_above_it() -> None:
    # 37.6 g at 0.9 g/mL (41.78 mL) beside 23.5 mL of water at 1.0 g/mL is 0.64 exactly
    # (41.78 / 65.28, worked in fractions: 376/9 / (376/9 + 23.5) = 376/587.5 = 0.64); floating
    # point makes it 0.6400000000000001, which must not read as above random close packing
    phi = volume_fraction([(37.6, 0.9)], [(23.5, 1.0)])
    assert phi > 0.64  # the noise the tolerance is for
    assert not above(phi, 0.64)
    assert above(0.64 + 1e-6, 0.64)
    assert not above(CLOSE_PACKING, CLOSE_PACKING)


def test_volume_fraction_bounds_are_the_corners() -> None:
    # 40 g oil at 0.85 and 30 g oil of unknown density in 0.75-1.0 g/mL (the usual range of an
    # oil, rule of thumb), 25 g water at 0.99705 and 5 g polysorbate 80 at 1.08: by hand,
    # 77.06/106.76 = 0.7218 with the unknown at 1.0 and 87.06/116.76 = 0.7456 at 0.75
    low, high = volume_fraction_bounds([(40.0, 0.85, 0.85), (30.0, 0.75, 1.0)],
                                       [(25.0, 0.99705, 0.99705), (5.0, 1.08, 1.08)])
    assert low == pytest.approx(0.7218, abs=1e-4)
    assert high == pytest.approx(0.7456, abs=1e-4)
    # an unknown in the continuous phase moves the fraction the other way
    low, high = volume_fraction_bounds([(20.0, 0.85, 0.85)], [(80.0, 0.95, 1.05)])
    assert low == pytest.approx((20 / 0.85) / (20 / 0.85 + 80 / 0.95))
    assert high == pytest.approx((20 / 0.85) / (20 / 0.85 + 80 / 1.05))
    # known densities only: one value
    assert volume_fraction_bounds([(20.0, 0.85, 0.85)], [(80.0, 1.0, 1.0)]) == (
        pytest.approx(volume_fraction([(20.0, 0.85)], [(80.0, 1.0)])),) * 2
    with pytest.raises(ValueError, match="lowest density"):
        volume_fraction_bounds([(1.0, 1.1, 0.9)], [(1.0, 1.0, 1.0)])


def test_usual_density_bounds() -> None:
    # rule of thumb (science.density): an oil 0.75-1.0, a humectant 1.0-1.35; a role with no
    # usual range takes the bounds the library accepts, IngredientProperties.density
    from formdb.schemas.ingredient import IngredientProperties
    from formdb.science.density import ACCEPTED_DENSITY, density_bounds

    assert density_bounds(["oil"]) == (0.75, 1.0)
    assert density_bounds(["oil", "humectant"]) == (0.75, 1.35)
    assert density_bounds(["thickener"]) == ACCEPTED_DENSITY
    metadata = IngredientProperties.model_fields["density"].metadata
    bounds = [getattr(m, "ge", None) or getattr(m, "le", None) for m in metadata]
    assert tuple(b for b in bounds if b is not None) == ACCEPTED_DENSITY
