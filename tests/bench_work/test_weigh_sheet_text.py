"""How the weigh sheet writes a rounding (report.weigh_sheet): signs and zeros."""

from __future__ import annotations

from formdb.report.weigh_sheet import signed


def test_a_rounding_that_shows_as_zero_has_no_sign() -> None:
    # 7.0 g scaled as 6.999999999999999 (binary floats) is read as 7.00: the sheet says ±0.000
    assert signed(7.0 - 6.999999999999999, 0.01) == "±0.000"
    assert signed(-0.004, 0.01) == "−0.004"
    assert signed(0.3, 1.0) == "+0.3"
