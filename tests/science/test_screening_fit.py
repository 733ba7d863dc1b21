"""The required-HLB fit of a screening series (formdb.science.screening).

Synthetic observations (invented for the test, as the brief allows for checking a method): a
Gaussian stability peak at a known HLB with normal noise, observed at HLB 6 to 16 by 1 as in
Griffin's series (J. Soc. Cosmet. Chem. 1 (1949) 311). The stated (95 %) uncertainty must cover
the known optimum in about 95 % of series; the test asks for at least 88 % of 200 seeded series
(the binomial 1st percentile at p = 0.95, n = 200 is about 90 %), so the interval is neither
too narrow nor (checked separately) absurdly wide.
"""

from __future__ import annotations

import math
import random

import pytest

from formdb.science.screening import (
    NoClearOptimum,
    fit_optimum,
    pair_fractions,
    plan_hlbs,
    student_t_quantile,
)

HLBS = [float(h) for h in range(6, 17)]


def _series(rng: random.Random, true_hlb: float, noise: float) -> list[float]:
    return [8.0 * math.exp(-((h - true_hlb) ** 2) / (2 * 2.5 ** 2)) + 1.0 + rng.gauss(0, noise)
            for h in HLBS]


def test_recovers_a_known_optimum_within_its_stated_uncertainty() -> None:
    covered, widths = 0, []
    for seed in range(200):
        rng = random.Random(seed)
        true_hlb = rng.uniform(9.0, 13.0)
        fit = fit_optimum(HLBS, _series(rng, true_hlb, noise=0.3))
        covered += abs(fit.required_hlb - true_hlb) <= fit.expanded_uncertainty
        widths.append(fit.expanded_uncertainty)
    assert covered >= 176, covered
    assert sorted(widths)[100] < 1.0  # the median interval is useful: under one HLB unit


def test_a_noiseless_peak_is_found_exactly_where_it_is() -> None:
    scores = [-(h - 11.3) ** 2 for h in HLBS]  # a parabola: the vertex is the answer
    fit = fit_optimum(HLBS, scores)
    assert fit.required_hlb == pytest.approx(11.3, abs=1e-9)


def test_lower_is_better_measures_are_turned_round() -> None:
    creaming = [(h - 10.4) ** 2 + 2.0 for h in HLBS]  # cream layer %, least at 10.4
    assert fit_optimum(HLBS, creaming, higher_is_better=False).required_hlb == \
        pytest.approx(10.4, abs=1e-9)


@pytest.mark.parametrize(("scores", "why"), [
    ([5.0] * 11, "flat"),
    ([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11], "at an end"),
    ([5, 5.1, 4.9, 5, 5.2, 4.8, 5.3, 5, 4.9, 5.1, 5], "clear peak"),
])
def test_refuses_when_there_is_no_clear_optimum(scores: list[float], why: str) -> None:
    with pytest.raises(NoClearOptimum, match=why):
        fit_optimum(HLBS, scores)


def test_refuses_a_short_series() -> None:
    with pytest.raises(NoClearOptimum, match="at least 5"):
        fit_optimum([8, 9, 10, 11], [1, 3, 2, 1])


def test_student_t_quantiles_match_the_printed_tables() -> None:
    # two-sided 95 % t values, 1 and 2 degrees of freedom: 12.706 and 4.303 (any statistics
    # table, e.g. NIST/SEMATECH e-Handbook 1.3.6.7.2; from memory)
    assert student_t_quantile(0.975, 1) == pytest.approx(12.706, abs=1e-3)
    assert student_t_quantile(0.975, 2) == pytest.approx(4.303, abs=1e-3)


def test_plan_steps_and_lever_rule() -> None:
    assert plan_hlbs(6, 16, 1) == HLBS
    assert plan_hlbs(6, 16, 2.5) == [6, 8.5, 11, 13.5, 16]
    with pytest.raises(ValueError, match="at least 5"):
        plan_hlbs(6, 8, 1)
    # sorbitan stearate 4.7 with polysorbate 80 15.0 (Wangpradit et al. 2022, Table 5):
    # rHLB 10.33 needs 1.64 % / 1.36 % of 3 %, i.e. 45.3 % low-HLB member
    low, high = pair_fractions(10.33, 4.7, 15.0)
    assert 3 * low == pytest.approx(1.36, abs=0.005) and 3 * high == pytest.approx(1.64, abs=0.005)
    with pytest.raises(ValueError, match="outside"):
        pair_fractions(16, 4.7, 15.0)
