"""A screening series for an oil phase's required HLB: plan the blends, fit the optimum.

The method is the lab's classical one: emulsify the oil phase with a pair of emulsifiers whose
blend HLB steps across the scale, watch the emulsions, and take the HLB of the most stable as the
required HLB (Griffin, J. Soc. Cosmet. Chem. 1 (1949) 311; done with a creaming index by
Wangpradit et al., OCL 29 (2022) 29, who report coconut oil 5.4 and Hu oil 6.2).

Fit: instead of reading off the single best blend (whose error is half a step), a parabola is
fitted by least squares (numpy.polyfit) to the best blend and its neighbours within two steps on
each side; its vertex is the required HLB. The standard uncertainty of the vertex follows from
the fit's covariance by first-order propagation (from memory: JCGM 100:2008, 5.1.2), with the
covariance scaled by the residual variance; the stated uncertainty is the expanded one at about
95 %, its coverage factor Student's t for the fit's degrees of freedom (JCGM 100:2008 Annex G,
from memory; the quantiles for 1 and 2 degrees of freedom have closed forms).

No clear optimum, no value: the fit is refused when the best blend is at an end of the series,
when the window holds fewer than four blends, when the parabola does not open downwards with a
curvature at least twice its own standard error, or when the vertex falls outside the window.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

COVERAGE = 0.975  # one-sided quantile of a two-sided 95 % interval
WINDOW_STEPS = 2
MIN_POINTS = 4
MIN_CURVATURE_T = 2.0
MAX_BLENDS = 60


class NoClearOptimum(ValueError):
    """The series does not show a peak the fit can locate; the message says why."""


@dataclass(frozen=True)
class OptimumFit:
    required_hlb: float
    standard_uncertainty: float
    expanded_uncertainty: float  # about 95 %: coverage_factor x standard_uncertainty
    coverage_factor: float
    curvature: float  # the parabola's x^2 coefficient in the 'higher is better' orientation
    curvature_se: float
    used: tuple[int, ...]  # indices of the points in the window


def student_t_quantile(p: float, dof: int) -> float:
    """Student's t quantile for 1 or 2 degrees of freedom, in closed form: tan(pi (p - 1/2))
    and (2p - 1) / sqrt(2 p (1 - p)) (1 dof: 12.706, 2 dof: 4.303 at p = 0.975)."""
    if dof == 1:
        return math.tan(math.pi * (p - 0.5))
    if dof == 2:
        return (2 * p - 1) / math.sqrt(2 * p * (1 - p))
    raise ValueError(f"closed forms only for 1 or 2 degrees of freedom, not {dof}")


def plan_hlbs(start: float, stop: float, step: float) -> list[float]:
    """start, start + step, ... up to stop (inclusive within a thousandth of a step)."""
    for name, value in (("start", start), ("stop", stop), ("step", step)):
        if not math.isfinite(value):
            raise ValueError(f"{name} must be a finite number, got {value}")
    if step <= 0:
        raise ValueError(f"the step must be above 0, got {step:g}")
    if stop <= start:
        raise ValueError(f"the range must rise: from {start:g} to {stop:g}")
    count = math.floor((stop - start) / step + 1e-3) + 1
    if count < 5:
        raise ValueError(f"{count} blends from {start:g} to {stop:g} by {step:g}: a series "
                         "needs at least 5 to show a peak")
    if count > MAX_BLENDS:
        raise ValueError(f"{count} blends is more than {MAX_BLENDS}; take a larger step")
    return [round(start + i * step, 6) for i in range(count)]


def pair_fractions(target: float, low_hlb: float, high_hlb: float) -> tuple[float, float]:
    """The lever rule: the fractions of the low- and high-HLB emulsifier giving ``target``."""
    if not high_hlb > low_hlb:
        raise ValueError(f"the pair's HLBs must differ, low {low_hlb:g} < high {high_hlb:g}")
    if not low_hlb - 1e-9 <= target <= high_hlb + 1e-9:
        raise ValueError(f"HLB {target:g} is outside what the pair reaches "
                         f"({low_hlb:g} to {high_hlb:g})")
    high = min(1.0, max(0.0, (target - low_hlb) / (high_hlb - low_hlb)))
    return 1.0 - high, high


def fit_optimum(hlbs: Sequence[float], scores: Sequence[float], *,
                higher_is_better: bool = True) -> OptimumFit:
    """The required HLB at the peak of ``scores`` over ``hlbs`` (see the module docstring)."""
    import numpy as np

    if len(hlbs) != len(scores):
        raise ValueError("one score per blend")
    points = sorted((float(h), float(s) if higher_is_better else -float(s))
                    for h, s in zip(hlbs, scores, strict=True))
    if len(points) < MIN_POINTS + 1:
        seen = "1 blend is" if len(points) == 1 else f"{len(points)} blends are"
        raise NoClearOptimum(f"only {seen} observed; a fit needs at least {MIN_POINTS + 1} "
                             "(record the others with formdb screen record)")
    x = [p[0] for p in points]
    y = [p[1] for p in points]
    if max(y) - min(y) <= 1e-12 * max(1.0, abs(max(y))):
        raise NoClearOptimum("every observed blend scores the same: the series is flat")
    best = max(range(len(y)), key=lambda i: (y[i], -abs(i - (len(y) - 1) / 2)))
    if best in (0, len(y) - 1):
        raise NoClearOptimum(f"the best blend (HLB {x[best]:g}) is at an end of the series; "
                             "extend the range past it")
    used = list(range(max(0, best - WINDOW_STEPS), min(len(x), best + WINDOW_STEPS + 1)))
    if len(used) < MIN_POINTS:
        raise NoClearOptimum(f"only {len(used)} blends lie within {WINDOW_STEPS} steps of the "
                             f"best; a fit needs {MIN_POINTS}")
    xs = np.array([x[i] for i in used])
    ys = np.array([y[i] for i in used])
    centre = float(xs.mean())
    coef, cov_unscaled = np.polyfit(xs - centre, ys, 2, cov="unscaled")
    a, b, _ = (float(c) for c in coef)
    residual = ys - np.polyval(coef, xs - centre)
    dof = len(used) - 3
    variance = float(residual @ residual) / dof
    cov = np.asarray(cov_unscaled) * variance
    a_se = math.sqrt(max(float(cov[0, 0]), 0.0))
    if a >= 0 or (a_se > 0 and -a / a_se < MIN_CURVATURE_T):
        raise NoClearOptimum(
            f"the scores around HLB {x[best]:g} do not form a clear peak (curvature "
            f"{a:.3g} ± {a_se:.2g}); observe more blends or a finer step there")
    vertex = -b / (2 * a)
    if not (xs.min() - centre <= vertex <= xs.max() - centre):
        raise NoClearOptimum(f"the fitted peak (HLB {vertex + centre:.2f}) lies outside the "
                             f"blends it was fitted to ({xs.min():g} to {xs.max():g})")
    gradient = np.array([b / (2 * a * a), -1 / (2 * a)])
    u = math.sqrt(max(float(gradient @ cov[:2, :2] @ gradient), 0.0))
    k = student_t_quantile(COVERAGE, dof)
    return OptimumFit(required_hlb=vertex + centre, standard_uncertainty=u,
                      expanded_uncertainty=k * u, coverage_factor=k, curvature=a,
                      curvature_se=a_se, used=tuple(used))
