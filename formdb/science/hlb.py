"""HLB arithmetic: blend HLB, required HLB of an oil phase, emulsifier proportions, HLB classes.

HLB is dimensionless. Masses may be in any one unit (g, kg, % w/w) because only ratios matter.
Griffin's additivity (Griffin, J. Soc. Cosmet. Chem. 1 (1949) 311; 5 (1954) 249) is by weight:
the HLB of a blend, and the required HLB of an oil phase, are weight averages. Pasquali et al.,
Int. J. Pharm. 356 (2008) 44, warn that the additivity of required HLB was never demonstrated,
so treat required HLB as a guideline with a tolerance, not an exact target.

The HLB estimates from composition (Griffin, Davies) live in ``hlb_estimate`` and are re-exported
here so callers find every HLB function in one place.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from formdb.schemas.vocab import EmulsionType
from formdb.science.hlb_estimate import (
    DAVIES_GROUPS,
    EO_MOLAR_MASS,
    EstimateMethod,
    estimate_hlb,
    hlb_davies,
    hlb_from_ethoxylate,
    hlb_from_hydrophile_mass,
    hlb_from_saponification,
    oxyethylene_percent,
)
from formdb.science.least_change import least_change_fractions

__all__ = [
    "DAVIES_GROUPS",
    "EO_MOLAR_MASS",
    "GRIFFIN_RANGES",
    "GRIFFIN_SCALE_MAX",
    "EstimateMethod",
    "HlbRange",
    "RequiredHlb",
    "UnreachableHlb",
    "blend_fractions",
    "blend_hlb",
    "estimate_hlb",
    "hlb_class",
    "hlb_davies",
    "hlb_from_ethoxylate",
    "hlb_from_hydrophile_mass",
    "hlb_from_saponification",
    "hlb_scale",
    "oxyethylene_percent",
    "required_hlb",
    "two_emulsifier_fractions",
]

_REACH_TOL = 1e-9  # a target this close to an end of the range counts as on it (float noise)


def _check_mass(mass: float, index: int) -> None:
    if not math.isfinite(mass) or mass < 0:
        raise ValueError(f"part {index}: mass must be a finite number >= 0, got {mass}")


def _check_hlb(value: float, index: int) -> None:
    if not math.isfinite(value):
        raise ValueError(f"part {index}: HLB must be a finite number, got {value}")


def blend_hlb(parts: Sequence[tuple[float, float]]) -> float:
    """Weight-averaged HLB of emulsifiers given as (mass, HLB) pairs (Griffin's additivity).

    Masses in any one unit; ValueError when there are no parts, a mass is negative or the total
    mass is zero (a blend of nothing has no HLB).
    """
    if not parts:
        raise ValueError("no emulsifiers to blend")
    total = weighted = 0.0
    for index, (mass, value) in enumerate(parts):
        _check_mass(mass, index)
        _check_hlb(value, index)
        total += mass
        weighted += mass * value
    if total <= 0:
        raise ValueError("the emulsifiers' total mass is zero")
    return weighted / total


@dataclass(frozen=True)
class RequiredHlb:
    """Required HLB of an oil phase: the value (None if no part has one), the mass it covers, and
    the indexes of the parts that had no value, so a report can say which oils were left out."""

    value: float | None
    covered_mass: float
    missing: tuple[int, ...]


def required_hlb(parts: Sequence[tuple[float, float | None]]) -> RequiredHlb:
    """Weight average of (mass, required HLB or None) over the parts that have a value.

    Masses in any one unit. Parts without a value are listed in ``missing`` instead of being
    guessed; an empty phase, or one with no values (or zero covered mass), gives ``value=None``.
    """
    covered = weighted = 0.0
    missing: list[int] = []
    for index, (mass, value) in enumerate(parts):
        _check_mass(mass, index)
        if value is None:
            missing.append(index)
            continue
        _check_hlb(value, index)
        covered += mass
        weighted += mass * value
    value_out = weighted / covered if covered > 0 else None
    return RequiredHlb(value=value_out, covered_mass=covered, missing=tuple(missing))


class UnreachableHlb(ValueError):
    """The target HLB lies outside what the emulsifiers can reach (between their lowest and
    highest HLB, by additivity)."""

    def __init__(self, target: float, low: float, high: float) -> None:
        self.target, self.low, self.high = target, low, high
        if low == high:
            reach = f"every blend of them has HLB {low:g}"
        else:
            reach = f"they reach HLB {low:g} to {high:g}"
        super().__init__(f"target HLB {target:g} cannot be reached with these emulsifiers: {reach}")


# HLB values are known to 0.1 at best: two closer than this are the same HLB (this also keeps
# the lever rule away from dividing by a difference that is only rounding noise).
_SAME_HLB = 1e-9


def _same_hlb(a: float, b: float) -> bool:
    return abs(a - b) <= _SAME_HLB


def _reachable(target: float, hlbs: Sequence[float]) -> None:
    if not math.isfinite(target):
        raise ValueError(f"target HLB must be a finite number, got {target}")
    low, high = min(hlbs), max(hlbs)
    tol = _REACH_TOL * max(1.0, abs(low), abs(high))
    if target < low - tol or target > high + tol:
        raise UnreachableHlb(target, low, high)


def two_emulsifier_fractions(target: float, hlb_a: float, hlb_b: float) -> tuple[float, float]:
    """Weight fractions (x_A, x_B) of two emulsifiers whose blend has the target HLB.

    x_A = (target - HLB_B) / (HLB_A - HLB_B), the lever rule that follows from additivity.
    UnreachableHlb when the target lies outside [min, max] of the two. When both HLBs are equal,
    only that HLB is reachable, and any split works; we return 0.5/0.5 (no reason to favour one).
    """
    for index, value in enumerate((hlb_a, hlb_b)):
        _check_hlb(value, index)
    _reachable(target, (hlb_a, hlb_b))
    if _same_hlb(hlb_a, hlb_b):
        return 0.5, 0.5
    x_a = min(1.0, max(0.0, (target - hlb_b) / (hlb_a - hlb_b)))
    return x_a, 1.0 - x_a


def _normalised_start(start: Sequence[float] | None, n: int) -> list[float]:
    if start is None:
        return [1.0 / n] * n
    if len(start) != n:
        raise ValueError(f"{len(start)} starting proportions for {n} emulsifiers")
    for index, mass in enumerate(start):
        _check_mass(mass, index)
    total = sum(start)
    if total <= 0:
        return [1.0 / n] * n
    return [mass / total for mass in start]


def blend_fractions(
    target: float, hlbs: Sequence[float], start: Sequence[float] | None = None
) -> tuple[float, ...]:
    """Weight fractions of the emulsifiers (same order as ``hlbs``) that give the target HLB.

    One emulsifier: (1.0,) if its HLB is the target. Two: the exact lever rule (with equal HLBs,
    the normalised ``start``). Three or more: infinitely many answers reach the target, so we take
    the non-negative fractions summing to 1 that reach it exactly and lie closest, by least
    squares, to ``start`` (the formula's current proportions, normalised; equal shares when None
    or all zero): the least change to what the formulator wrote. The answer is unique and is found
    exactly (see ``least_change``). UnreachableHlb when the target lies outside
    [min(hlbs), max(hlbs)].
    """
    if not hlbs:
        raise ValueError("no emulsifiers to blend")
    for index, value in enumerate(hlbs):
        _check_hlb(value, index)
    shares = _normalised_start(start, len(hlbs))
    _reachable(target, hlbs)
    if len(hlbs) == 1:
        return (1.0,)
    if _same_hlb(min(hlbs), max(hlbs)):
        return tuple(shares)  # every blend has this HLB: keep the formula's proportions
    if len(hlbs) == 2:
        return two_emulsifier_fractions(target, hlbs[0], hlbs[1])
    clamped = min(max(target, min(hlbs)), max(hlbs))
    return least_change_fractions(shares, hlbs, clamped)


GRIFFIN_SCALE_MAX = 20.0  # Griffin's scale runs 0-20 (20 Mh/M); Davies' reaches 40 (SLS)


def hlb_scale(hlb: float, ionised: bool) -> Literal["griffin", "davies"]:
    """"griffin" or "davies": the scale an HLB value belongs to.

    Griffin's method is for non-ionic surfactants (Griffin, J. Soc. Cosmet. Chem. 5 (1954) 249,
    "Calculation of HLB values of non-ionic surfactants"); ionic surfactants and soaps get their
    values from Davies' group numbers (Davies 1957: sodium lauryl sulfate 40, sodium oleate 18),
    and any value above 20 can only be Davies'. The two scales agree near 7 and drift apart
    beyond it, so a weight average across them means nothing.
    """
    return "davies" if ionised or hlb > GRIFFIN_SCALE_MAX else "griffin"


# a blend HLB within this of a class edge is on it: 0.51 g of HLB 15 with 2.7 g of HLB 4.3 is 6
# exactly, which floating point makes 5.999999999999999
EDGE = 1e-9


def hlb_class(hlb: float, *, wo_max: float = 7.0, ow_min: float = 8.0) -> EmulsionType | None:
    """The emulsion type an HLB favours: W/O at or below ``wo_max``, O/W at or above ``ow_min``,
    None in the gap between (Griffin 1949: W/O emulsifiers about 3-6, O/W about 8-16/18;
    values above 20, such as Davies' 40 for sodium lauryl sulfate, are strongly O/W)."""
    if wo_max > ow_min:
        raise ValueError(f"wo_max ({wo_max}) must not exceed ow_min ({ow_min})")
    if hlb <= wo_max + EDGE:
        return EmulsionType.WO
    if hlb >= ow_min - EDGE:
        return EmulsionType.OW
    return None


@dataclass(frozen=True)
class HlbRange:
    """An HLB application range for reports; ``high`` is None for an open upper end."""

    low: float
    high: float | None
    application: str
    source: str
    note: str = ""


_G49 = "Griffin, J. Soc. Cosmet. Chem. 1 (1949) 311 (as tabulated by the HLB article of Wikipedia)"
GRIFFIN_RANGES: tuple[HlbRange, ...] = (
    HlbRange(1.5, 3.0, "antifoaming agent", _G49, "some tables start at 1"),
    HlbRange(3.0, 6.0, "W/O emulsifier", _G49, "some tables use 4-6 or 3.5-6"),
    HlbRange(7.0, 9.0, "wetting and spreading agent", _G49),
    HlbRange(8.0, 16.0, "O/W emulsifier", _G49,
             "upper bound 16 (Wikipedia), 18 (Martin's Physical Pharmacy), 15 (Griffin's table, "
             "from memory)"),
    HlbRange(13.0, 15.0, "detergent", _G49, "13-16 in Wikipedia"),
    HlbRange(15.0, 18.0, "solubiliser (hydrotrope)", _G49, "16-18 in Wikipedia"),
)
