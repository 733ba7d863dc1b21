"""Acid equivalents from an acid value, and the pH of a free strong base."""

from __future__ import annotations

import math

import pytest

from formdb.science.acid_base import acid_equivalents, hydroxide_molarity, strong_base_ph


def test_an_acid_value_is_mg_koh_per_gram() -> None:
    # the definition of the acid value (Ph. Eur. 2.5.1, recalled from memory): 1 g of an acid of
    # acid value 56.106 neutralises 56.106 mg KOH = 1 mmol
    assert acid_equivalents(1.0, 56.106) == pytest.approx(1e-3)
    # citric acid, three carboxyls, 192.12 g/mol (calc): 1 g takes 3/192.12 mol of base
    assert acid_equivalents(1.0, 3 * 56106 / 192.12) == pytest.approx(3 / 192.12)


def test_a_carbomer_gel_takes_the_trade_amount_of_sodium_hydroxide() -> None:
    # one COOH per acrylic acid unit (72.063 g/mol, calc): 1 g carbomer takes 0.555 g NaOH at
    # most; the trade's 0.4 g per g (from memory) is below it, so nothing is left free
    most = acid_equivalents(1.0, 56106 / 72.063) * 39.997
    assert most == pytest.approx(0.555, abs=0.001)
    assert most > 0.4


def test_bad_inputs() -> None:
    for args in ((-1.0, 500.0), (1.0, math.nan), (1.0, -3.0)):
        with pytest.raises(ValueError):
            acid_equivalents(*args)


def test_free_hydroxide_ph() -> None:
    # 0.1 mol/L NaOH: pH 13 at 25 degC (Kw 1e-14), half a unit below as the low end
    molarity = hydroxide_molarity(0.4, 40.0, 1.0, 100.0)
    assert molarity == pytest.approx(0.1)
    assert strong_base_ph(molarity) == pytest.approx((12.5, 13.0))
