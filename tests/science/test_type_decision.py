"""The type decision table (formdb.science.emulsion_type.decide_type) and the HLB scale split.

Bancroft, J. Phys. Chem. 17 (1913) 501; Griffin's classes (J. Soc. Cosmet. Chem. 1 (1949) 311);
Griffin 1954 is titled for non-ionic surfactants; Davies 1957 gives SLS 40 (IUPAC Gold Book).
"""

from __future__ import annotations

from formdb.schemas.vocab import EmulsionType
from formdb.science.emulsion_type import decide_type
from formdb.science.hlb import hlb_scale

OW, WO = EmulsionType.OW, EmulsionType.WO


def test_hlb_class_decides_over_the_solubility_split() -> None:
    # sorbitan oleate 3 + polysorbate 80 2: blend 8.58 (O/W class), 60 % of the mass oil-soluble
    decision = decide_type(OW, 5.0, None, 0.0, WO)
    assert decision.predicted == OW and decision.strong


def test_soap_alone_decides() -> None:
    assert decide_type(None, 0.0, WO, 5.0, WO).predicted == WO  # a magnesium soap
    assert decide_type(None, 0.0, OW, 3.0, None).strong


def test_disagreement_goes_to_the_heavier_side_and_is_weak() -> None:
    decision = decide_type(WO, 4.0, OW, 1.0, WO)
    assert decision.predicted == WO and not decision.strong
    assert decide_type(WO, 1.0, OW, 4.0, None).predicted == OW


def test_split_only_is_weak_and_nothing_is_none() -> None:
    assert decide_type(None, 0.0, None, 0.0, OW) .predicted == OW
    assert not decide_type(None, 0.0, None, 0.0, OW).strong
    assert decide_type(None, 0.0, None, 0.0, None).predicted is None


def test_hlb_scale() -> None:
    assert hlb_scale(15.0, ionised=False) == "griffin"  # polysorbate 80
    assert hlb_scale(18.0, ionised=True) == "davies"  # sodium oleate (Davies 1957)
    assert hlb_scale(40.0, ionised=False) == "davies"  # beyond Griffin's 20: Davies' only


def test_hld_supports_and_decides_only_without_hlb_class_or_soap() -> None:
    # Salager's HLD (HLD < 0 O/W, > 0 W/O) is the third indicator: it never overrides the HLB
    # class or the soap/ionic members, and it comes before the solubility split
    assert decide_type(OW, 5.0, None, 0.0, OW, WO).predicted == OW
    assert decide_type(None, 0.0, OW, 5.0, None, WO).predicted == OW
    assert decide_type(WO, 4.0, OW, 1.0, None, OW).predicted == WO
    decision = decide_type(None, 0.0, None, 0.0, OW, WO)
    assert decision.predicted == WO and not decision.strong
    assert "HLD" in decision.row


def test_a_blend_between_the_classes_is_not_overruled_by_the_split() -> None:
    # sorbitan oleate 3.3 + polysorbate 80 1.7: blend 7.94, between Griffin's W/O (3-6) and O/W
    # (8-18) classes; 66 % of the mass oil-soluble. The vote of masses does not decide against it
    decision = decide_type(None, 5.0, None, 0.0, WO, blend_between=True)
    assert decision.predicted is None and "between the classes" in decision.row
    # with no Griffin HLB at all (wool alcohols), the split still gives a weak type
    assert decide_type(None, 0.0, None, 0.0, WO).predicted == WO
    # the HLD, where the library holds its data, still decides in the gap (weakly)
    assert decide_type(None, 5.0, None, 0.0, WO, OW, blend_between=True).predicted == OW
