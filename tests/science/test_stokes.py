"""Creaming speed by Stokes' law (Stokes, Trans. Camb. Phil. Soc. 9 (1851) 8)."""

from __future__ import annotations

import pytest

from formdb.science.stokes import creaming_velocity

# science.md section 7 worked example (computed from the published formula): light mineral oil
# 850 kg/m^3, water 997.05 kg/m^3 and 0.890 mPa s at 25 C (CRC/IAPWS), d = 2 um.
D, RHO_OIL, RHO_WATER, ETA = 2e-6, 850.0, 997.05, 0.890e-3


def test_worked_example() -> None:
    v = creaming_velocity(D, RHO_OIL, RHO_WATER, ETA)
    assert v == pytest.approx(3.60e-7, rel=2e-3)
    assert v * 3600 * 1000 == pytest.approx(1.30, abs=0.01)  # mm per hour


def test_doubling_the_diameter_quadruples_the_speed() -> None:
    # Stokes 1851: v ~ d^2 (found statement: doubling the diameter multiplies v by 4).
    ratio = creaming_velocity(2 * D, RHO_OIL, RHO_WATER, ETA) / creaming_velocity(
        D, RHO_OIL, RHO_WATER, ETA)
    assert ratio == pytest.approx(4.0)


def test_heavier_drops_sediment() -> None:
    # Sign convention: negative means the drop sinks (water drops in a lighter oil, W/O).
    assert creaming_velocity(D, RHO_WATER, RHO_OIL, 0.03) < 0
    assert creaming_velocity(D, 1000.0, 1000.0, ETA) == 0.0


def test_bad_inputs() -> None:
    with pytest.raises(ValueError, match="viscosity_pa_s"):
        creaming_velocity(D, RHO_OIL, RHO_WATER, 0.0)
    with pytest.raises(ValueError, match="diameter_m"):
        creaming_velocity(-D, RHO_OIL, RHO_WATER, ETA)
