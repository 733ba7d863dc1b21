"""Bancroft's rule (Bancroft, J. Phys. Chem. 17 (1913) 501) cross-checked with the HLB class."""

from __future__ import annotations

import pytest

from formdb.schemas.vocab import EmulsionType
from formdb.science.emulsion_type import bancroft_type, predict_type
from formdb.science.hlb import blend_hlb


def test_water_soluble_system_gives_oil_in_water() -> None:
    # Bancroft 1913 (statement found): the phase the emulsifier is more soluble in is continuous.
    assert bancroft_type(9.0, 1.0) is EmulsionType.OW
    assert bancroft_type(1.0, 9.0) is EmulsionType.WO
    assert bancroft_type(0.0, 3.0) is EmulsionType.WO


def test_balanced_system_predicts_nothing() -> None:
    assert bancroft_type(1.0, 1.0) is None
    assert bancroft_type(0.54, 0.46) is None          # balance 0.08 < margin 0.1
    assert bancroft_type(0.56, 0.44) is EmulsionType.OW
    assert bancroft_type(0.54, 0.46, margin=0.0) is EmulsionType.OW


def test_bad_inputs() -> None:
    with pytest.raises(ValueError, match="no emulsifier"):
        bancroft_type(0.0, 0.0)
    with pytest.raises(ValueError, match="oil_soluble_mass"):
        bancroft_type(1.0, -1.0)
    with pytest.raises(ValueError, match="margin"):
        bancroft_type(1.0, 1.0, margin=1.0)


def test_both_predictions_agree_for_a_polysorbate_rich_blend() -> None:
    # Polysorbate 80 (15.0, water-soluble) 9 : sorbitan oleate (4.3, oil-soluble) 1:
    # HLB 13.93 (PMC4137601 Table 2), O/W by both rules.
    hlb = blend_hlb([(9, 15.0), (1, 4.3)])
    prediction = predict_type(9.0, 1.0, hlb)
    assert prediction.bancroft is prediction.by_hlb is EmulsionType.OW
    assert not prediction.disagree
    assert prediction.agreed is EmulsionType.OW


def test_disagreement_is_flagged() -> None:
    # Sorbitan stearate (4.7, W/O class by Griffin 1949) counted water-side by mistake.
    prediction = predict_type(1.0, 0.0, 4.7)
    assert prediction.disagree
    assert prediction.agreed is None
    assert not predict_type(1.0, 1.0, 4.7).disagree  # no Bancroft prediction: no disagreement
    assert predict_type(1.0, 0.0, None).by_hlb is None


def test_the_prediction_prefers_bancroft_and_needs_no_emulsifier_mass() -> None:
    # Bancroft first, the HLB class when Bancroft says nothing (how formdb's facts choose; a
    # design choice, not a published rule). Sorbitan stearate 4.7: W/O class (Griffin 1949).
    assert predict_type(9.0, 1.0, 4.7).predicted is EmulsionType.OW
    assert predict_type(1.0, 1.0, 4.7).predicted is EmulsionType.WO
    nothing_placed = predict_type(0.0, 0.0, 4.7)
    assert nothing_placed.bancroft is None and not nothing_placed.disagree
    assert nothing_placed.predicted is EmulsionType.WO
    assert predict_type(0.0, 0.0, None).predicted is None
