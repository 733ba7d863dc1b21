"""Salager's HLD: only an internal consistency check, since its constants are from memory."""

from __future__ import annotations

import pytest

from formdb.schemas.vocab import EmulsionType
from formdb.science.hld import CHARACTERISTIC_CURVATURE, hld_ionic, hld_nonionic, hld_type


def test_sds_with_hexadecane() -> None:
    # science.md section 6 (computed from constants recalled from memory): SDS (Cc -2.3) with
    # hexadecane (EACN 16, by definition), 1 g/100 mL NaCl, 25 C: ln 1 - 0.17 x 16 - 2.3 = -5.02.
    cc = CHARACTERISTIC_CURVATURE["sodium lauryl sulfate"]
    value = hld_ionic(1.0, 16, cc)
    assert value == pytest.approx(-5.02, abs=1e-9)
    assert hld_type(value) is EmulsionType.OW  # strongly hydrophilic: Winsor I, O/W


def test_temperature_moves_ionic_and_nonionic_opposite_ways() -> None:
    # science.md section 6 (from memory): heat makes anionics more hydrophilic and ethoxylates
    # more lipophilic (the basis of the phase inversion temperature).
    assert hld_ionic(1.0, 16, -2.3, 60) < hld_ionic(1.0, 16, -2.3, 25)
    assert hld_nonionic(0.0, 8, 0.0, 60) > hld_nonionic(0.0, 8, 0.0, 25)
    assert hld_nonionic(0.0, 8, 0.0, 25) == pytest.approx(-0.17 * 8)


def test_hld_type_band_and_bad_input() -> None:
    assert hld_type(0.5) is EmulsionType.WO
    assert hld_type(0.5, band=1.0) is None
    with pytest.raises(ValueError, match="salinity"):
        hld_ionic(0.0, 16, -2.3)


def test_pit_is_where_the_nonionic_hld_crosses_zero() -> None:
    # PIT = 25 + (K EACN - b S - Cc) / c_T with the memory constants (science.md section 6);
    # worked by hand: EACN 16, Cc -0.2, no salt: 25 + (2.72 + 0.2) / 0.06 = 73.67 deg C
    from formdb.science.hld import pit_nonionic

    pit = pit_nonionic(0.0, 16, -0.2)
    assert pit == pytest.approx(73.6667, abs=1e-3)
    assert hld_nonionic(0.0, 16, -0.2, pit) == pytest.approx(0.0, abs=1e-12)
    # salt lowers the PIT (b S subtracts): 1 g/100 mL, 0.13 / 0.06 = 2.17 deg C lower
    assert pit - pit_nonionic(1.0, 16, -0.2) == pytest.approx(0.13 / 0.06)
    with pytest.raises(ValueError, match="c_t"):
        pit_nonionic(0.0, 16, -0.2, c_t=0.0)


def test_linear_mixing_by_weight() -> None:
    # science.md section 6: EACN_mix = sum x_i EACN_i (by weight for simplicity; from memory):
    # 70 g of EACN 16 with 30 g of EACN 24 gives 0.7 x 16 + 0.3 x 24 = 18.4
    from formdb.science.hld import linear_mix

    assert linear_mix([(70.0, 16.0), (30.0, 24.0)]) == pytest.approx(18.4)
    with pytest.raises(ValueError, match="no mass"):
        linear_mix([])
