"""The least change to a blend that reaches a target HLB: a small exact quadratic programme.

With three or more emulsifiers, many proportions reach the same blend HLB. We pick the one closest
(in the sum of squared differences of the fractions) to the proportions the formula already has:

    minimise  sum_i (f_i - s_i)^2
    subject to sum_i f_i = 1,  sum_i f_i * h_i = t,  f_i >= 0.

Why this is well posed: the objective is strictly convex and the feasible set (the simplex cut by
one hyperplane) is a non-empty compact convex polytope whenever min(h) <= t <= max(h). A strictly
convex function has exactly one minimiser on such a set, so the answer is unique, and the
Karush-Kuhn-Tucker conditions are both necessary and sufficient for it.

How it is solved. Up to ``MAX_ENUMERATED`` emulsifiers: active-set enumeration. For each guess of
which fractions are zero, the free ones are f_i = s_i + lam + mu * c_i (c_i = h_i - t), where
(lam, mu) solve a 2x2 linear system from the two equality constraints; the guess is right when
every free fraction is >= 0 and every zero fraction has a non-negative KKT multiplier. Guesses run
from "no zeros" upwards, so the common interior answer costs one 2x2 solve.

More emulsifiers (2^n guesses would take too long): the same KKT point found by its multiplier
mu. For a fixed mu the fractions are the Euclidean projection of s + mu * c onto the simplex
(sorting, Held, Wolfe and Crowder, Math. Programming 6 (1974) 62; Duchi et al., ICML 2008), and
phi(mu) = sum_i c_i f_i(mu) never decreases in mu (a projection onto a convex set is monotone),
so bisection finds the mu with phi = 0; the free set it shows is then solved exactly by the same
2x2 system and checked against the KKT conditions. O(n log n) per step, any n.
Plain Python: no numerical library is needed.
"""

from __future__ import annotations

from collections.abc import Sequence
from itertools import combinations

MAX_ENUMERATED = 12  # 2^12 active sets at worst: instant; above it, the multiplier search
_TOL = 1e-9


def least_change_fractions(
    start: Sequence[float], values: Sequence[float], target: float
) -> tuple[float, ...]:
    """Fractions closest to ``start`` (least squares) that are >= 0, sum to 1 and average to target.

    ``start`` must already be normalised (non-negative, sum 1) and ``target`` must lie within
    [min(values), max(values)]; the caller (``formdb.science.hlb.blend_fractions``) checks both.
    """
    n = len(values)
    if n != len(start):
        raise ValueError(f"{len(start)} starting fractions for {n} components")
    if n == 0:
        raise ValueError("no components to blend")
    centred = [v - target for v in values]  # the target constraint becomes sum f_i * c_i = 0
    scale = max(1.0, max(abs(v) for v in values))
    if n > MAX_ENUMERATED:
        return _summing_to_one(_by_multiplier(start, centred, scale))
    for size in range(n, 0, -1):
        for free in combinations(range(n), size):
            found = _solve_active_set(start, centred, free, scale)
            if found is not None:
                return _summing_to_one(found)
    raise ValueError(f"target {target} is outside the range of {list(values)}")


def _summing_to_one(fractions: tuple[float, ...]) -> tuple[float, ...]:
    """The fractions divided by their sum: two values nearly alike (HLB 0 and 1.2e-7 beside 30)
    make the active-set system ill-conditioned, and its answer summed to 1.000000002; dividing
    moves the blend's HLB by the same few parts in a billion."""
    total = sum(fractions)
    return tuple(f / total for f in fractions) if total > 0 else fractions


def _solve_active_set(
    s: Sequence[float], c: Sequence[float], free: tuple[int, ...], scale: float
) -> tuple[float, ...] | None:
    """The KKT point with exactly the ``free`` fractions unconstrained, or None if it fails KKT."""
    n_free = len(free)
    zero = [j for j in range(len(c)) if j not in free]
    a = sum(c[i] for i in free)
    b = sum(c[i] * c[i] for i in free)
    s1 = sum(s[i] for i in free)
    s2 = sum(s[i] * c[i] for i in free)
    det = n_free * b - a * a
    if det > 1e-12 * n_free * b:
        lam = ((1.0 - s1) * b + a * s2) / det
        mu = (-n_free * s2 - a * (1.0 - s1)) / det
        if any(-s[j] - lam - mu * c[j] < -_TOL for j in zero):
            return None
    else:
        # All free components have the same value: feasible only if it equals the target, and
        # then mu is free; the zero components need some mu giving every multiplier >= 0.
        if abs(a / n_free) > _TOL * scale:
            return None
        lam = (1.0 - s1) / n_free
        mu = 0.0
        if not _some_mu_fits(s, c, zero, lam):
            return None
    fractions = [0.0] * len(c)
    for i in free:
        f = s[i] + lam + mu * c[i]
        if f < -_TOL:
            return None
        fractions[i] = max(f, 0.0)
    return tuple(fractions)


def _some_mu_fits(s: Sequence[float], c: Sequence[float], zero: list[int], lam: float) -> bool:
    """Is there a mu with -s_j - lam - mu * c_j >= 0 for every zero component j?"""
    low, high = float("-inf"), float("inf")
    for j in zero:
        room = -s[j] - lam
        if abs(c[j]) <= _TOL:
            if room < -_TOL:
                return False
        elif c[j] > 0:
            high = min(high, room / c[j])
        else:
            low = max(low, room / c[j])
    return low <= high + _TOL


def _simplex_projection(y: Sequence[float]) -> list[float]:
    """The point of {f >= 0, sum f = 1} nearest to ``y`` (Held, Wolfe and Crowder 1974)."""
    ordered = sorted(y, reverse=True)
    total, theta = 0.0, 0.0
    for k, value in enumerate(ordered, start=1):
        total += value
        candidate = (total - 1.0) / k
        if value - candidate > 0:
            theta = candidate
    return [max(v - theta, 0.0) for v in y]


def _by_multiplier(s: Sequence[float], c: Sequence[float], scale: float) -> tuple[float, ...]:
    """The least-change fractions for many components: bisection on mu, then an exact solve."""
    n = len(c)
    edge = _TOL * scale
    if max(c) <= edge or min(c) >= -edge:
        # the target is the highest (or lowest) HLB: only the components at it may be used
        at = [i for i in range(n) if abs(c[i]) <= edge]
        share = _simplex_projection([s[i] for i in at])
        fractions = [0.0] * n
        for i, f in zip(at, share, strict=True):
            fractions[i] = f
        return tuple(fractions)

    def at_mu(mu: float) -> list[float]:
        return _simplex_projection([s[i] + mu * c[i] for i in range(n)])

    def phi(mu: float) -> float:
        return sum(ci * fi for ci, fi in zip(c, at_mu(mu), strict=True))

    low, high = -1.0, 1.0
    while phi(low) > 0:
        low *= 2.0
    while phi(high) < 0:
        high *= 2.0
    for _ in range(200):
        middle = (low + high) / 2.0
        if middle in (low, high):
            break
        if phi(middle) < 0:
            low = middle
        else:
            high = middle
    for mu in ((low + high) / 2.0, low, high):
        free = tuple(i for i, f in enumerate(at_mu(mu)) if f > 0)
        if free:
            exact = _solve_active_set(s, c, free, scale)
            if exact is not None:
                return exact
    fractions = at_mu((low + high) / 2.0)  # degenerate ties: the bisection's own point
    return tuple(fractions)
