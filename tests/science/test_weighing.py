"""Scaling a formula to a batch and rounding to a balance (formdb.science.weighing).

The expected masses are worked by hand from the definition of % w/w (grams = percent / 100 x
batch grams) and of rounding half-up to a balance step; the binary-float trap (2.675 rounds to
2.67 with Python's round) is the case decimal arithmetic must get right.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from formdb.science.weighing import (
    DEFAULT_BALANCES,
    Balance,
    choose_balance,
    round_to_resolution,
    rounding_bound_g,
    scaled_mass_g,
    weigh,
)


@pytest.mark.parametrize(("percent", "batch_g", "grams"), [
    (72.3, 20000.0, 14460.0),   # 72.3 % of 20 kg
    (0.05, 20000.0, 10.0),      # 0.05 % of 20 kg
    (0.7, 1500.0, 10.5),        # 0.7 % of 1.5 kg
    (33.3333, 300.0, 99.9999),  # a third of 300 g, as written
])
def test_scaled_mass_is_percent_of_the_batch(percent: float, batch_g: float,
                                             grams: float) -> None:
    assert scaled_mass_g(percent, batch_g) == pytest.approx(grams, rel=1e-12)


@pytest.mark.parametrize(("mass", "resolution", "read"), [
    (2.675, 0.01, 2.68),    # half-up in decimal; round(2.675, 2) gives 2.67 in binary floats
    (2.665, 0.01, 2.67),
    (14460.4, 1.0, 14460.0),
    (14460.5, 1.0, 14461.0),
    (123.45, 0.1, 123.5),
    (0.004, 0.01, 0.0),     # below the balance step: nothing to read
    (7.5, 5.0, 10.0),       # a 5 g step balance
])
def test_rounding_half_up_to_the_balance_step(mass: float, resolution: float,
                                              read: float) -> None:
    assert round_to_resolution(mass, resolution) == pytest.approx(read, abs=1e-12)


def test_each_line_goes_on_the_finest_balance_that_carries_it() -> None:
    assert choose_balance(150.0)[0].resolution_g == 0.01    # up to 200 g
    assert choose_balance(200.0)[0].resolution_g == 0.01    # capacity is inclusive
    assert choose_balance(200.01)[0].resolution_g == 0.1
    assert choose_balance(14460.0)[0].resolution_g == 1.0
    balance, portions = choose_balance(130000.0)             # more than any capacity
    assert balance.capacity_g == 60000.0 and portions == 3   # ceil(130000 / 60000)


def test_a_bad_balance_is_refused() -> None:
    with pytest.raises(ValueError, match="resolution"):
        Balance(0.0, 100.0)
    with pytest.raises(ValueError, match="capacity"):
        Balance(1.0, 0.5)


def test_the_total_bound_is_half_a_step_a_line() -> None:
    lines = [weigh(m) for m in (14460.0, 2400.0, 10.004)]
    assert rounding_bound_g(lines) == pytest.approx(0.5 + 0.05 + 0.005)


@settings(max_examples=300, deadline=None, derandomize=True)
@given(st.floats(min_value=0.0, max_value=150000.0, allow_nan=False))
def test_rounding_stays_within_half_a_step_and_reads_whole_steps(mass: float) -> None:
    w = weigh(mass, DEFAULT_BALANCES)
    step = w.balance.resolution_g
    assert abs(w.weighed_g - mass) <= step / 2 + 1e-9
    assert math.isclose(w.weighed_g / step, round(w.weighed_g / step), abs_tol=1e-6)

