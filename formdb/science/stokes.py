"""Creaming and sedimentation speed of a single drop by Stokes' law.

Stokes, Trans. Camb. Phil. Soc. 9 (1851) 8: v = d^2 (rho_c - rho_d) g / (18 eta). Valid for one
rigid sphere at low Reynolds number in an unbounded Newtonian liquid, so for dilute emulsions only
(phi below about 0.01); crowded drops cream more slowly (hindered creaming), and a thickened or
gelled continuous phase is not Newtonian, so treat the result as an upper-bound estimate.
"""

from __future__ import annotations

import math

STANDARD_GRAVITY = 9.80665  # m/s^2 (CGPM 1901, exact)


def creaming_velocity(
    diameter_m: float,
    dispersed_density: float,
    continuous_density: float,
    viscosity_pa_s: float,
    g: float = STANDARD_GRAVITY,
) -> float:
    """Stokes velocity in m/s of a drop (diameter in m, densities in kg/m^3, viscosity in Pa s).

    Positive: the drop rises (creaming, the dispersed phase is lighter); negative: it sinks
    (sedimentation). Doubling the diameter multiplies the speed by four.
    """
    values = {"diameter_m": diameter_m, "dispersed_density": dispersed_density,
              "continuous_density": continuous_density, "viscosity_pa_s": viscosity_pa_s, "g": g}
    for name, value in values.items():
        if not math.isfinite(value) or value <= 0:
            raise ValueError(f"{name} must be a finite number > 0, got {value}")
    return diameter_m**2 * (continuous_density - dispersed_density) * g / (18.0 * viscosity_pa_s)
