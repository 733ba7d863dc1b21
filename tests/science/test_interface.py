"""Interfacial area and the emulsifier needed to cover it."""

from __future__ import annotations

import math

import pytest

from formdb.science.interface import (
    SURFACE_EXCESS_RANGE_MG_M2,
    TYPICAL_SURFACE_EXCESS_MG_M2,
    area_ratio,
    coverable_diameter_m,
    droplets_from_split,
    emulsifier_needed_g,
    interfacial_area_m2,
    specific_area,
)


def test_splitting_into_eight_doubles_the_area() -> None:
    # Rule of thumb (geometry): 8 equal drops of the same total volume have twice the area.
    assert area_ratio(8) == pytest.approx(2.0)
    v, d = 1e-9, 1e-3
    halves = interfacial_area_m2(v, d / 2)
    assert halves / interfacial_area_m2(v, d) == pytest.approx(2.0)
    assert droplets_from_split(v, d / 2) / droplets_from_split(v, d) == pytest.approx(8.0)


def test_specific_area_example() -> None:
    # science.md section 7, computed from the published formula 6 phi/d: phi 0.20, d = 1 um
    # gives 1.2e6 m^-1, i.e. 1.2 m^2 per mL of emulsion.
    a = specific_area(0.20, 1e-6)
    assert a == pytest.approx(1.2e6)
    assert a * 1e-6 == pytest.approx(1.2)


def test_area_matches_sphere_geometry() -> None:
    # Computed from the sphere formulas: N drops of pi d^2 area each.
    v, d = 2e-6, 5e-6
    n = droplets_from_split(v, d)
    assert n * math.pi * d**2 == pytest.approx(interfacial_area_m2(v, d))


def test_emulsifier_to_cover_the_interface() -> None:
    # 20 mL oil in 1 um drops: 120 m^2 (6V/d); at 2 mg/m^2 (typical, from memory) 0.24 g.
    area = interfacial_area_m2(20e-6, 1e-6)
    assert area == pytest.approx(120.0)
    assert emulsifier_needed_g(area, TYPICAL_SURFACE_EXCESS_MG_M2) == pytest.approx(0.24)
    low, high = SURFACE_EXCESS_RANGE_MG_M2
    assert low <= TYPICAL_SURFACE_EXCESS_MG_M2 <= high
    # and back: 0.24 g covers drops down to 1 um
    assert coverable_diameter_m(20e-6, 0.24, 2.0) == pytest.approx(1e-6)
    assert coverable_diameter_m(20e-6, 0.0, 2.0) == math.inf


def test_bad_inputs() -> None:
    with pytest.raises(ValueError, match="diameter_m"):
        specific_area(0.2, 0.0)
    with pytest.raises(ValueError, match="volume_fraction must be <= 1"):
        specific_area(1.2, 1e-6)
    with pytest.raises(ValueError, match="n_droplets must be >= 1"):
        area_ratio(0.5)
    with pytest.raises(ValueError, match="surface_excess"):
        emulsifier_needed_g(1.0, -1.0)
