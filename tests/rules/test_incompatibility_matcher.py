"""The one incompatibility matcher, used by ION01 and the blend search: classes compared as
vocabulary words, names by name_key over INCI name and synonyms, either way round.

The rows are invented for the test (the bundled table's sources are checked in tests/seed);
only the matching is under test here.
"""

from __future__ import annotations

from formdb.facts.incompatibility import Sides, first_incompatibility, may_match, oriented
from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.reference import Incompatibility
from formdb.schemas.vocab import Severity

SLS = IngredientRecord(id=1, inci_name="Sodium Lauryl Sulfate",
                       synonyms=("Sodium Dodecyl Sulfate",), classes=frozenset({"sulfate anionic"}))
CETRIMONIUM = IngredientRecord(id=2, inci_name="Cetrimonium Chloride",
                               classes=frozenset({"quaternary cationic"}))
GLYCERIN = IngredientRecord(id=3, inci_name="Glycerin")


def _row(a: str, b: str, key: str = "r1") -> Incompatibility:
    return Incompatibility(key=key, class_a=a, class_b=b, severity=Severity.WARNING,
                           reason="test", advice="test", source="test")


def test_a_class_pair_matches_either_way_round() -> None:
    row = _row("Sulfate_Anionic", "quaternary  cationic")  # case, '_' and spaces ignored
    sls, quat = Sides.of_record(SLS), Sides.of_record(CETRIMONIUM)
    assert oriented(row, sls, quat) is True
    assert oriented(row, quat, sls) is False
    assert oriented(row, sls, Sides.of_record(GLYCERIN)) is None
    assert first_incompatibility(CETRIMONIUM, SLS, [row]) == row


def test_a_side_may_name_an_ingredient_by_synonym() -> None:
    row = _row("sodium  dodecyl sulfate", "Glycerin")
    assert first_incompatibility(GLYCERIN, SLS, [_row("anionic polymer", "Glycerin"), row]) == row
    assert first_incompatibility(GLYCERIN, CETRIMONIUM, [row]) is None


def test_the_pre_test_never_drops_a_row_that_matches() -> None:
    rows = [_row("sulfate anionic", "quaternary cationic", "a"), _row("Glycerin", "SLS", "b"),
            _row("sodium dodecyl sulfate", "Glycerin", "c")]
    members = [Sides.of_record(r) for r in (SLS, CETRIMONIUM, GLYCERIN)]
    present = frozenset().union(*(m.tokens for m in members))
    for row in rows:
        hit = any(oriented(row, a, b) is not None for a in members for b in members if a != b)
        assert not hit or may_match(row, present), row.key
    assert not may_match(rows[1], present)  # "SLS" is no name of any member
