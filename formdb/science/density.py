"""Where a density the library lacks can lie: the usual range of an ingredient's roles.

A check that needs a volume and has no density for a line takes its phase's mean (a point
estimate). How far that estimate can be off is bounded by what densities the line's roles
usually have (USUAL_DENSITY, a rule of thumb set around the seed library's spread, which the
library's plausibility check also warns outside of), or, for a role with no usual range, by the
bounds the library accepts for any density at all (ACCEPTED_DENSITY).
"""

from __future__ import annotations

from collections.abc import Iterable

# role -> (low, high) g/mL at about 25 °C; rule of thumb around the seed library's spread
USUAL_DENSITY: dict[str, tuple[float, float]] = {
    "water": (0.95, 1.05), "electrolyte": (1.3, 3.0), "humectant": (1.0, 1.35),
    "silicone": (0.75, 1.1), "wax": (0.8, 1.0), "butter": (0.85, 1.0),
    "fatty alcohol": (0.78, 0.9), "fatty acid": (0.84, 0.96), "oil": (0.75, 1.0),
    "emollient": (0.75, 1.05), "emulsifier": (0.85, 1.25), "co-emulsifier": (0.78, 1.1),
    "uv filter": (0.9, 1.3), "fragrance": (0.8, 1.2), "allergen": (0.8, 1.2),
    "solvent": (0.7, 1.3), "preservative": (0.9, 1.5),
}
# the bounds of IngredientProperties.density (g/mL): no library value lies outside them
ACCEPTED_DENSITY = (0.5, 3.0)


def density_bounds(roles: Iterable[str]) -> tuple[float, float]:
    """The lowest and highest density an ingredient with these roles usually has (g/mL): the
    union of its roles' usual ranges, or the accepted bounds when no role has one."""
    ranges = [USUAL_DENSITY[r] for r in roles if r in USUAL_DENSITY]
    if not ranges:
        return ACCEPTED_DENSITY
    return min(lo for lo, _ in ranges), max(hi for _, hi in ranges)
