"""The least-change blend for many emulsifiers (issue 15: 17 or more lines ended in 'at most 16
components can be solved'). Checked against the Karush-Kuhn-Tucker conditions themselves, which
are necessary and sufficient for this strictly convex problem (Boyd and Vandenberghe, Convex
Optimization, 2004, section 5.5.3), and against the exact active-set enumeration where both run.
"""

from __future__ import annotations

import random

import pytest

from formdb.science import least_change
from formdb.science.hlb import blend_fractions


def _kkt_holds(start: list[float], hlbs: list[float], target: float,
               fractions: tuple[float, ...], tol: float = 1e-7) -> bool:
    """Feasible, and some (lam, mu) gives f_i = s_i + lam + mu*c_i where f_i > 0 and
    s_i + lam + mu*c_i <= 0 where f_i = 0."""
    c = [h - target for h in hlbs]
    if any(f < -tol for f in fractions) or abs(sum(fractions) - 1) > tol:
        return False
    if abs(sum(f * ci for f, ci in zip(fractions, c, strict=True))) > tol * max(map(abs, c)):
        return False
    free = [i for i, f in enumerate(fractions) if f > tol]
    # lam + mu*c_i = f_i - s_i on the free set: least squares for (lam, mu)
    n = len(free)
    sc = sum(c[i] for i in free)
    scc = sum(c[i] ** 2 for i in free)
    sr = sum(fractions[i] - start[i] for i in free)
    src = sum((fractions[i] - start[i]) * c[i] for i in free)
    det = n * scc - sc * sc
    if abs(det) < 1e-12:  # every free component sits at the target: mu is free, find one
        lam = sr / n
        low, high = float("-inf"), float("inf")
        for j, f in enumerate(fractions):
            if f > tol:
                continue
            room = -start[j] - lam  # need mu * c_j <= room
            if abs(c[j]) < 1e-12:
                if room < -1e-6:
                    return False
            elif c[j] > 0:
                high = min(high, room / c[j])
            else:
                low = max(low, room / c[j])
        return low <= high + 1e-9 and all(abs(start[i] + lam - fractions[i]) < 1e-6
                                          for i in free)
    else:
        lam = (sr * scc - sc * src) / det
        mu = (n * src - sc * sr) / det
    for i, f in enumerate(fractions):
        value = start[i] + lam + mu * c[i]
        if f > tol and abs(value - f) > 1e-6:
            return False
        if f <= tol and value > 1e-6:
            return False
    return True


@pytest.mark.parametrize("n", [17, 18, 30, 200])
def test_many_emulsifiers_reach_the_target_with_least_change(n: int) -> None:
    rng = random.Random(n)  # made-up HLBs and proportions
    hlbs = [round(rng.uniform(1.8, 18.8), 1) for _ in range(n)]
    start = [rng.random() for _ in range(n)]
    total = sum(start)
    start = [s / total for s in start]
    for target in (min(hlbs), 7.5, 12.0, max(hlbs)):
        fractions = blend_fractions(target, hlbs, start)
        assert len(fractions) == n
        assert sum(f * h for f, h in zip(fractions, hlbs, strict=True)) == pytest.approx(target)
        assert _kkt_holds(start, hlbs, target, fractions)


def test_the_multiplier_search_agrees_with_enumeration() -> None:
    rng = random.Random(15)
    for _ in range(500):
        n = rng.randint(3, 10)
        hlbs = [round(rng.uniform(1, 20), 1) for _ in range(n)]
        if rng.random() < 0.3:
            hlbs[1] = hlbs[0]  # equal HLBs: the degenerate case
        start = [rng.random() ** 3 for _ in range(n)]
        total = sum(start)
        start = [s / total for s in start]
        target = rng.choice([rng.uniform(min(hlbs), max(hlbs)), min(hlbs), max(hlbs), hlbs[0]])
        enumerated = least_change.least_change_fractions(start, hlbs, target)
        c = [h - target for h in hlbs]
        searched = least_change._by_multiplier(start, c, max(1.0, max(map(abs, hlbs))))
        assert searched == pytest.approx(enumerated, abs=1e-9)
        assert _kkt_holds(start, hlbs, target, searched)
