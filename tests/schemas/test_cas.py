"""The one CAS check digit (CAS Registry, "Check digit verification of CAS Registry Numbers").

The numbers are those of seed_data/ingredients.csv (water 7732-18-5, glycerin 56-81-5,
polysorbate 20 9005-64-5); each check digit is worked by hand beside it.
"""

from __future__ import annotations

import pytest

from formdb.schemas.cas import cas_check_digit, cas_is_valid


@pytest.mark.parametrize(("cas", "digit"), [
    ("7732-18-5", 5),  # 8*1+1*2+2*3+3*4+7*5+7*6 = 105
    ("56-81-5", 5),  # 1*1+8*2+6*3+5*4 = 55
    ("9005-64-5", 5),  # 4*1+6*2+5*3+0*4+0*5+9*6 = 85
    (" 7732-18-4 ", 5),  # spaces ignored; the digits before the check digit decide
])
def test_the_check_digit(cas: str, digit: int) -> None:
    assert cas_check_digit(cas) == digit


def test_valid_only_with_the_right_shape_and_digit() -> None:
    assert cas_is_valid("7732-18-5") and cas_is_valid(" 56-81-5")
    assert not cas_is_valid("7732-18-4") and not cas_is_valid("9005-64-4")
    for shape in ("7732185", "7-18-5", "12345678-18-5", "7732-1-5", "7732-18-55", ""):
        assert cas_check_digit(shape) is None and not cas_is_valid(shape)
