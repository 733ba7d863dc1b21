"""How full the dispersed phase packs: its volume fraction against packing limits of spheres.

Equal rigid spheres cannot fill more than pi/sqrt(18) of space (FCC/HCP; Kepler's conjecture,
proved by Hales, Ann. Math. 162 (2005) 1065). Random close packing is about 0.64 (Scott &
Kilgour, J. Phys. D 2 (1969) 863; Torquato, Phys. Rev. E 51 (1995) 3170). Above these, drops must
be polydisperse or deformed (high internal phase), and phase inversion becomes likely.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

CLOSE_PACKING = math.pi / math.sqrt(18)          # 0.74048, FCC/HCP (Hales 2005)
RANDOM_CLOSE_PACKING = 0.64                      # +-0.02 (Scott & Kilgour 1969; Torquato 1995)
BODY_CENTRED_CUBIC_PACKING = math.pi * math.sqrt(3) / 8  # 0.6802, geometry (computed)
SIMPLE_CUBIC_PACKING = math.pi / 6               # 0.5236, geometry (computed)

# (what, fraction, source), densest first, for reports
PACKING_LIMITS: tuple[tuple[str, float, str], ...] = (
    ("close packing of equal spheres (FCC/HCP)", CLOSE_PACKING,
     "Kepler conjecture; Hales, Ann. Math. 162 (2005) 1065"),
    ("body-centred cubic lattice", BODY_CENTRED_CUBIC_PACKING, "geometry: pi*sqrt(3)/8"),
    ("random close packing of equal spheres", RANDOM_CLOSE_PACKING,
     "Scott & Kilgour, J. Phys. D 2 (1969) 863; Torquato, Phys. Rev. E 51 (1995) 3170"),
    ("simple cubic lattice", SIMPLE_CUBIC_PACKING, "geometry: pi/6"),
)

# a fraction within this of a limit is on it, not above: 64 g of oil at 0.8 g/mL in 100 mL
# reads 0.64 to floating point's last digit, and a verdict must not turn on that digit
EDGE = 1e-9


def above(fraction: float, limit: float) -> bool:
    """Whether a volume fraction is above a packing limit, beyond floating-point noise."""
    return fraction > limit + EDGE


def _volume(parts: Sequence[tuple[float, float]], side: str) -> float:
    total = 0.0
    for index, (mass, density) in enumerate(parts):
        if not math.isfinite(mass) or mass < 0:
            raise ValueError(f"{side} part {index}: mass must be a finite number >= 0, got {mass}")
        if not math.isfinite(density) or density <= 0:
            raise ValueError(f"{side} part {index}: density must be > 0, got {density}")
        total += mass / density
    return total


def volume_fraction(
    dispersed: Sequence[tuple[float, float]], continuous: Sequence[tuple[float, float]]
) -> float:
    """Volume fraction of the dispersed phase from (mass, density) parts of each phase.

    Masses in any one unit (g or % w/w), densities in g/mL; volumes are taken as additive
    (no mixing contraction), which is the usual approximation for emulsion phases.
    """
    v_dispersed = _volume(dispersed, "dispersed")
    total = v_dispersed + _volume(continuous, "continuous")
    if total <= 0:
        raise ValueError("the phases have no volume")
    return v_dispersed / total


def volume_fraction_bounds(
    dispersed: Sequence[tuple[float, float, float]],
    continuous: Sequence[tuple[float, float, float]],
) -> tuple[float, float]:
    """The lowest and highest volume fraction of the dispersed phase from (mass, lowest density,
    highest density) parts; a known density has both ends equal.

    The fraction grows with the dispersed volume and falls with the continuous one, and each
    part's volume is mass / density on its own, so the ends are the corners: least dispersed
    volume (its densities high) over most continuous volume (its densities low), and the
    reverse.
    """
    for side, parts in (("dispersed", dispersed), ("continuous", continuous)):
        for index, (_mass, low, high) in enumerate(parts):
            if low > high:
                raise ValueError(f"{side} part {index}: lowest density {low} above highest "
                                 f"{high}")
    low = volume_fraction([(m, hi) for m, _lo, hi in dispersed],
                          [(m, lo) for m, lo, _hi in continuous])
    high = volume_fraction([(m, lo) for m, lo, _hi in dispersed],
                           [(m, hi) for m, _lo, hi in continuous])
    return low, high
