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
