"""Every number option of every registered rule has a realistic range (issue 15: a profile's
HLB tolerance of 1e12 hung the chart's tick loop; NaN and tiny values were accepted). A value
outside the range, or not finite, is refused when the profile is read."""

from __future__ import annotations

import math

import pytest

from formdb.rules.base import Option
from formdb.rules.registry import default_registry


def _number_options() -> list[tuple[str, str, Option]]:
    return [(rule.code, key, option) for rule in default_registry().rules()
            for key, option in rule.options.items() if option.type in (int, float)]


def test_there_are_number_options() -> None:
    assert len(_number_options()) >= 5


@pytest.mark.parametrize(("code", "key", "option"), _number_options(),
                         ids=lambda v: v if isinstance(v, str) else "")
def test_number_option_has_a_finite_range(code: str, key: str, option: Option) -> None:
    assert option.minimum is not None and option.maximum is not None, (code, key)
    assert math.isfinite(option.minimum) and math.isfinite(option.maximum)
    assert option.minimum <= option.default <= option.maximum, (code, key)
    where = f"[rules.{code}] {key}"
    for bad in (math.nan, math.inf, -math.inf, option.maximum * 2 + 1, option.minimum - 1):
        with pytest.raises(ValueError, match=r"finite|at most|at least"):
            option.parse(bad, where)
    assert option.parse(option.default, where) == option.default
