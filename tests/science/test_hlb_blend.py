"""Blend HLB, required HLB and emulsifier proportions against published worked examples."""

from __future__ import annotations

import itertools
import math

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from formdb.schemas.vocab import EmulsionType
from formdb.science.hlb import (
    GRIFFIN_RANGES,
    RequiredHlb,
    UnreachableHlb,
    blend_fractions,
    blend_hlb,
    hlb_class,
    required_hlb,
    two_emulsifier_fractions,
)

SORBITAN_OLEATE = 4.3   # PMC4137601 Table 2 ("4.30"); Griffin; HPE6
POLYSORBATE_80 = 15.0   # PMC4137601 Table 2 ("15.00"); OCL 2022 Table 5
SORBITAN_STEARATE = 4.7  # Wangpradit et al., OCL 29 (2022) 29, Table 5


@pytest.mark.parametrize(("ratio", "published"), [((9, 1), 13.93), ((8, 2), 12.86),
                                                  ((7, 3), 11.79)])
def test_polysorbate_80_with_sorbitan_oleate(ratio: tuple[int, int], published: float) -> None:
    # PMC4137601 Table 2 (found): polysorbate 80 : sorbitan oleate w/w ratios and their HLB.
    value = blend_hlb([(ratio[0], POLYSORBATE_80), (ratio[1], SORBITAN_OLEATE)])
    assert value == pytest.approx(published, abs=0.005)


# Wangpradit et al., OCL 29 (2022) 29, Table 4, formulation F1 oil phase (found):
# (% w/w, required HLB) for beeswax, isopropyl myristate, glyceryl monostearate, stearic acid,
# Amesiodendron chinense oil.
OCL_F1 = [(1.5, 12.0), (7.5, 11.5), (7.5, 3.8), (12.5, 15.0), (5.0, 6.2)]


def test_required_hlb_of_ocl_f1_oil_phase() -> None:
    # Wangpradit et al. 2022, Table 4: rHLB of the F1 oil phase is 10.33.
    result = required_hlb(OCL_F1)
    assert result.value == pytest.approx(10.33, abs=0.005)
    assert result.covered_mass == pytest.approx(34.0)
    assert result.missing == ()


def test_required_hlb_names_the_parts_without_a_value() -> None:
    # Same published phase (OCL 2022 Table 4) plus an oil with no value: the average is unchanged
    # and the gap is reported rather than guessed.
    result = required_hlb([*OCL_F1[:2], (4.0, None), *OCL_F1[2:]])
    assert result.value == pytest.approx(10.33, abs=0.005)
    assert result.covered_mass == pytest.approx(34.0)
    assert result.missing == (2,)


def test_required_hlb_with_no_values_is_none() -> None:
    assert required_hlb([(5.0, None), (1.0, None)]) == RequiredHlb(None, 0.0, (0, 1))
    assert required_hlb([]) == RequiredHlb(None, 0.0, ())


def test_ocl_three_percent_split() -> None:
    # Wangpradit et al. 2022, Table 5: 3 % emulsifier at target 10.33 is polysorbate 80 1.64 %
    # and sorbitan stearate 1.36 %.
    x_ps80, x_ss = two_emulsifier_fractions(10.33, POLYSORBATE_80, SORBITAN_STEARATE)
    assert 3 * x_ps80 == pytest.approx(1.64, abs=0.005)
    assert 3 * x_ss == pytest.approx(1.36, abs=0.005)
    assert blend_fractions(10.33, [POLYSORBATE_80, SORBITAN_STEARATE]) == pytest.approx(
        (x_ps80, x_ss))


def test_pmc_ratio_recovered_from_its_hlb() -> None:
    # PMC4137601 Table 2 read backwards: HLB 12.86 comes from 8:2 polysorbate 80 : sorbitan oleate.
    x_ps80, _ = two_emulsifier_fractions(12.86, POLYSORBATE_80, SORBITAN_OLEATE)
    assert x_ps80 == pytest.approx(0.8, abs=0.001)


def test_unreachable_target_states_the_range() -> None:
    # Additivity (Griffin 1949) bounds a blend by its members' HLB: 4.3 to 15 here.
    with pytest.raises(UnreachableHlb) as caught:
        two_emulsifier_fractions(16.0, POLYSORBATE_80, SORBITAN_OLEATE)
    assert (caught.value.target, caught.value.low, caught.value.high) == (16.0, 4.3, 15.0)
    assert "4.3 to 15" in str(caught.value)
    assert isinstance(caught.value, ValueError)
    with pytest.raises(UnreachableHlb, match=r"4\.3 to 16\.7"):
        blend_fractions(2.0, [POLYSORBATE_80, SORBITAN_OLEATE, 16.7])


def test_equal_hlbs() -> None:
    assert two_emulsifier_fractions(15.0, 15.0, 15.0) == (0.5, 0.5)
    with pytest.raises(UnreachableHlb, match="every blend of them has HLB 15"):
        two_emulsifier_fractions(14.0, 15.0, 15.0)
    assert blend_fractions(15.0, [15.0, 15.0], start=[3, 1]) == pytest.approx((0.75, 0.25))
    assert blend_fractions(8.6, [8.6]) == (1.0,)


def test_bad_input_is_a_value_error() -> None:
    with pytest.raises(ValueError, match="no emulsifiers"):
        blend_hlb([])
    with pytest.raises(ValueError, match="total mass is zero"):
        blend_hlb([(0.0, 4.3), (0.0, 15.0)])
    with pytest.raises(ValueError, match="part 1: mass"):
        blend_hlb([(1.0, 4.3), (-1.0, 15.0)])
    with pytest.raises(ValueError, match="starting proportions"):
        blend_fractions(10.0, [4.3, 15.0, 8.6], start=[1.0, 1.0])


def _distance(f: tuple[float, ...], s: list[float]) -> float:
    return sum((a - b) ** 2 for a, b in zip(f, s, strict=True))


def _brute_force_three(target: float, hlbs: list[float], start: list[float],
                       steps: int = 20000) -> float:
    """Smallest distance to start over a fine grid of the feasible segment (f1 as parameter)."""
    h1, h2, h3 = hlbs
    best = math.inf
    for k in range(steps + 1):
        f1 = k / steps
        # f2 + f3 = 1 - f1 and h2 f2 + h3 f3 = target - h1 f1
        f2 = ((target - h1 * f1) - h3 * (1 - f1)) / (h2 - h3)
        f3 = 1 - f1 - f2
        if f2 >= -1e-12 and f3 >= -1e-12:
            best = min(best, _distance((f1, f2, f3), start))
    return best


# Sorbitan oleate 4.3, polysorbate 80 15.0, sorbitan laurate 8.6 (science.md section 1:
# PMC4137601, PMC3969497); starting proportions of a draft formula.
@pytest.mark.parametrize(("target", "start"), [
    (10.33, [1.0, 1.0, 1.0]),      # interior answer
    (10.0, [1.0, 1.0, 8.0]),       # answer on an edge: sorbitan oleate drops out
    (14.0, [5.0, 1.0, 1.0]),
    (4.5, [0.0, 0.0, 1.0]),
])
def test_three_emulsifiers_reach_target_with_least_change(target: float,
                                                          start: list[float]) -> None:
    hlbs = [SORBITAN_OLEATE, POLYSORBATE_80, 8.6]
    result = blend_fractions(target, hlbs, start)
    shares = [s / sum(start) for s in start]
    assert sum(result) == pytest.approx(1.0)
    assert min(result) >= 0.0
    assert blend_hlb(list(zip(result, hlbs, strict=True))) == pytest.approx(target)
    # least change: no feasible point on a fine grid is closer to the draft's proportions
    assert _distance(result, shares) <= _brute_force_three(target, hlbs, shares) + 1e-9
    assert _distance(result, shares) == pytest.approx(
        _brute_force_three(target, hlbs, shares), abs=2e-4)


def test_four_emulsifiers_against_a_grid() -> None:
    # Sorbitan oleate, polysorbate 80, sorbitan laurate, polysorbate 20 (science.md section 1).
    hlbs = [SORBITAN_OLEATE, POLYSORBATE_80, 8.6, 16.7]
    start = [0.1, 0.2, 0.6, 0.1]
    target = 12.0
    result = blend_fractions(target, hlbs, start)
    assert blend_hlb(list(zip(result, hlbs, strict=True))) == pytest.approx(target)
    best = math.inf
    steps = 400
    for i, j in itertools.product(range(steps + 1), repeat=2):
        f1, f2 = i / steps, j / steps
        if f1 + f2 > 1:
            continue
        rest, rest_hlb = 1 - f1 - f2, target - hlbs[0] * f1 - hlbs[1] * f2
        f4 = (rest_hlb - hlbs[2] * rest) / (hlbs[3] - hlbs[2])
        f3 = rest - f4
        if f3 >= 0 and f4 >= 0:
            best = min(best, _distance((f1, f2, f3, f4), start))
    assert _distance(result, start) <= best + 1e-9
    assert _distance(result, start) == pytest.approx(best, abs=1e-4)


def test_start_that_already_hits_the_target_is_kept() -> None:
    hlbs = [SORBITAN_OLEATE, POLYSORBATE_80, 8.6]
    start = (0.2, 0.5, 0.3)
    target = blend_hlb(list(zip(start, hlbs, strict=True)))
    assert blend_fractions(target, hlbs, start) == pytest.approx(start)


hlb_values = st.floats(min_value=0.0, max_value=40.0, allow_nan=False)
masses = st.floats(min_value=0.0, max_value=100.0, allow_nan=False)


@settings(max_examples=100)  # pure arithmetic: in full under every hypothesis profile
@given(st.lists(st.tuples(masses, hlb_values), min_size=1, max_size=8))
def test_blend_lies_within_its_members(parts: list[tuple[float, float]]) -> None:
    # Additivity (Griffin 1949): a weighted average lies between the extremes.
    assume(sum(m for m, _ in parts) > 1e-6)
    value = blend_hlb(parts)
    hlbs = [h for m, h in parts if m > 0]
    assert min(hlbs) - 1e-9 <= value <= max(hlbs) + 1e-9


@settings(max_examples=300)
@given(st.lists(hlb_values, min_size=2, max_size=6), st.floats(0.0, 1.0),
       st.lists(masses, min_size=6, max_size=6), st.lists(masses, min_size=6, max_size=6))
def test_blend_fractions_properties(hlbs: list[float], where: float, start: list[float],
                                    other: list[float]) -> None:
    low, high = min(hlbs), max(hlbs)
    target = low + where * (high - low)
    start = start[:len(hlbs)]
    result = blend_fractions(target, hlbs, start)
    assert len(result) == len(hlbs)
    assert sum(result) == pytest.approx(1.0, abs=1e-9)
    assert min(result) >= 0.0
    assert blend_hlb(list(zip(result, hlbs, strict=True))) == pytest.approx(target, abs=1e-7)
    # Optimality: any other feasible blend reaching the same target is no closer to the start.
    total = sum(start)
    shares = [s / total for s in start] if total > 0 else [1 / len(hlbs)] * len(hlbs)
    rival = other[:len(hlbs)]
    assume(sum(rival) > 1e-6)
    rival_f = tuple(r / sum(rival) for r in rival)
    rival_target = blend_hlb(list(zip(rival_f, hlbs, strict=True)))
    rival_best = blend_fractions(rival_target, hlbs, start)
    assert _distance(rival_best, shares) <= _distance(rival_f, shares) + 1e-7


@pytest.mark.parametrize(("hlb", "expected"), [
    (4.3, EmulsionType.WO),   # sorbitan oleate: a W/O emulsifier (Griffin 1949 range 3-6)
    (15.0, EmulsionType.OW),  # polysorbate 80: O/W (Griffin 1949 range 8-16/18)
    (40.0, EmulsionType.OW),  # sodium lauryl sulfate, Davies 40 (IUPAC Gold Book)
    (7.5, None),              # the gap between about 7 and about 8 (DESIGN: W/O < 7, O/W > 8)
])
def test_hlb_class(hlb: float, expected: EmulsionType | None) -> None:
    assert hlb_class(hlb) is expected


def test_hlb_class_thresholds_are_options() -> None:
    assert hlb_class(7.5, wo_max=7.5, ow_min=7.5) is EmulsionType.WO
    with pytest.raises(ValueError):
        hlb_class(5.0, wo_max=9.0, ow_min=8.0)


def test_griffin_ranges_cite_their_source() -> None:
    # Griffin 1949 (found, via the HLB article): W/O 3-6, O/W from 8.
    by_use = {r.application: r for r in GRIFFIN_RANGES}
    assert (by_use["W/O emulsifier"].low, by_use["W/O emulsifier"].high) == (3.0, 6.0)
    assert by_use["O/W emulsifier"].low == 8.0
    assert all("Griffin" in r.source for r in GRIFFIN_RANGES)


def test_nearly_equal_hlbs_still_sum_to_one() -> None:
    # Found by the property test above: HLB 0 and 1.19e-7 beside 30 make the least-change system
    # ill-conditioned, and the fractions summed to 1.0000000020 (now divided by their sum).
    hlbs = [0.0, 30.0, 30.0, 1.19e-7]
    result = blend_fractions(0.0, hlbs, [1.0, 1.0, 1.0, 1.0])
    assert sum(result) == pytest.approx(1.0, abs=1e-12)
    assert blend_hlb(list(zip(result, hlbs, strict=True))) == pytest.approx(0.0, abs=1e-7)
