"""Systemic exposure dose and margin of safety (SCCS Notes of Guidance, 12th revision).

SED = E_product x C/100 x DAp/100, with E_product the daily exposure to the product after its
retention factor, in mg per kg body weight per day (Table 3A of SCCS/1647/22), C the
substance's % in the product and DAp its dermal absorption in %. MoS = PoD_sys / SED, with
PoD_sys the point of departure (an oral NOAEL) times the oral bioavailability. Pure functions.
"""

from __future__ import annotations


def _percent(value: float, name: str) -> float:
    if not 0 <= value <= 100:
        raise ValueError(f"{name} must be between 0 and 100 %, got {value!r}")
    return value


def exposure_per_kg(exposure_g_day: float, body_weight_kg: float) -> float:
    """Daily exposure in mg/kg bw/day from grams per day and a body weight."""
    if exposure_g_day < 0:
        raise ValueError(f"exposure must not be negative, got {exposure_g_day!r}")
    if body_weight_kg <= 0:
        raise ValueError(f"body weight must be positive, got {body_weight_kg!r}")
    return exposure_g_day * 1000.0 / body_weight_kg


def systemic_exposure_dose(exposure_mg_kg_bw_day: float, concentration_percent: float,
                           dermal_absorption_percent: float) -> float:
    """SED in mg/kg bw/day = E_product x C/100 x DAp/100."""
    if exposure_mg_kg_bw_day < 0:
        raise ValueError(f"E_product must not be negative, got {exposure_mg_kg_bw_day!r}")
    _percent(concentration_percent, "concentration")
    _percent(dermal_absorption_percent, "dermal absorption")
    return exposure_mg_kg_bw_day * concentration_percent / 100.0 * \
        dermal_absorption_percent / 100.0


def systemic_pod(pod_mg_kg_bw_day: float, oral_bioavailability_percent: float) -> float:
    """PoD_sys = PoD x oral bioavailability/100 (the dose that reached the blood in the study)."""
    if pod_mg_kg_bw_day <= 0:
        raise ValueError(f"point of departure must be positive, got {pod_mg_kg_bw_day!r}")
    _percent(oral_bioavailability_percent, "oral bioavailability")
    return pod_mg_kg_bw_day * oral_bioavailability_percent / 100.0


def margin_of_safety(pod_sys_mg_kg_bw_day: float, sed_mg_kg_bw_day: float) -> float | None:
    """MoS = PoD_sys / SED; None when the SED is zero (no systemic exposure, no margin)."""
    if sed_mg_kg_bw_day < 0:
        raise ValueError(f"SED must not be negative, got {sed_mg_kg_bw_day!r}")
    if sed_mg_kg_bw_day == 0:
        return None
    return pod_sys_mg_kg_bw_day / sed_mg_kg_bw_day
