"""Interface created by emulsifying, and the emulsifier mass needed to cover it.

Geometry of equal spheres (a sphere's surface-to-volume ratio is 6/d): a dispersed volume V in
drops of diameter d has area 6V/d; per unit volume of emulsion that is 6 phi/d. Splitting one drop
into N equal drops multiplies the area by N^(1/3). Lengths in m, areas in m^2, volumes in m^3;
surface excess in mg/m^2 (the unit tables use), emulsifier masses in g.

Typical saturation surface excess (from memory, order of magnitude only): about 1-4 mg/m^2 for
small-molecule surfactants and proteins (e.g. sodium dodecyl sulfate about 3e-6 mol/m^2, i.e.
about 1 mg/m^2). Use a measured value for the ingredient when there is one.

The facts use specific_area, interfacial_area_m2 and emulsifier_needed_g; area_ratio,
droplets_from_split and coverable_diameter_m are kept for the lab-workflow issue (issue 16) and
not yet wired in.
"""

from __future__ import annotations

import math

TYPICAL_SURFACE_EXCESS_MG_M2 = 2.0            # from memory: middle of the 1-4 mg/m^2 range
SURFACE_EXCESS_RANGE_MG_M2 = (1.0, 4.0)       # from memory, see module docstring


def _positive(name: str, value: float, *, allow_zero: bool = False) -> float:
    if not math.isfinite(value) or value < 0 or (value == 0 and not allow_zero):
        rule = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name} must be a finite number {rule}, got {value}")
    return value


def specific_area(volume_fraction: float, diameter_m: float) -> float:
    """Interfacial area per unit volume of emulsion, 6 phi/d, in m^2 per m^3 (= m^-1).

    Divide by 1e6 for m^2 per mL: phi 0.20 and d = 1 um give 1.2e6 m^-1, 1.2 m^2 per mL.
    """
    phi = _positive("volume_fraction", volume_fraction, allow_zero=True)
    if phi > 1:
        raise ValueError(f"volume_fraction must be <= 1, got {phi}")
    return 6.0 * phi / _positive("diameter_m", diameter_m)


def area_ratio(n_droplets: float) -> float:
    """Area of N equal drops over the area of the one drop of the same volume: N^(1/3).

    Kept for the lab-workflow issue (issue 16); not yet wired into the facts.
    """
    n = _positive("n_droplets", n_droplets)
    if n < 1:
        raise ValueError(f"n_droplets must be >= 1, got {n}")
    return float(n ** (1.0 / 3.0))


def interfacial_area_m2(dispersed_volume_m3: float, diameter_m: float) -> float:
    """Total interface (m^2) of a dispersed volume (m^3) in equal drops of diameter d (m): 6V/d."""
    volume = _positive("dispersed_volume_m3", dispersed_volume_m3, allow_zero=True)
    return 6.0 * volume / _positive("diameter_m", diameter_m)


def droplets_from_split(dispersed_volume_m3: float, diameter_m: float) -> float:
    """Number of equal drops of diameter d (m) that a volume V (m^3) makes: V / (pi d^3 / 6).

    Kept for the lab-workflow issue (issue 16); not yet wired into the facts.
    """
    volume = _positive("dispersed_volume_m3", dispersed_volume_m3, allow_zero=True)
    d = _positive("diameter_m", diameter_m)
    return volume / (math.pi * d**3 / 6.0)


def emulsifier_needed_g(area_m2: float, surface_excess_mg_m2: float) -> float:
    """Emulsifier (g) that covers ``area_m2`` at a surface excess in mg/m^2: area x excess / 1000.

    This is the adsorbed amount only; the emulsifier dissolved in the bulk phases comes on top.
    """
    area = _positive("area_m2", area_m2, allow_zero=True)
    return area * _positive("surface_excess_mg_m2", surface_excess_mg_m2) / 1000.0


def coverable_diameter_m(
    dispersed_volume_m3: float, emulsifier_g: float, surface_excess_mg_m2: float
) -> float:
    """Smallest drop diameter (m) the emulsifier present can fully cover: 6 V Gamma / m.

    Infinite when there is no emulsifier (not even the largest drop is covered). Kept for the
    lab-workflow issue (issue 16); not yet wired into the facts.
    """
    volume = _positive("dispersed_volume_m3", dispersed_volume_m3, allow_zero=True)
    mass = _positive("emulsifier_g", emulsifier_g, allow_zero=True)
    gamma_g_m2 = _positive("surface_excess_mg_m2", surface_excess_mg_m2) / 1000.0
    if mass == 0:
        return math.inf
    return 6.0 * volume * gamma_g_m2 / mass
