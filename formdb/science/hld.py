"""Salager's hydrophilic-lipophilic deviation (HLD): a temperature- and salt-aware type predictor.

HLD < 0: the surfactant prefers water (Winsor I, O/W); HLD > 0: oil (Winsor II, W/O); HLD = 0 is
the optimum formulation (Winsor III). Forms (science.md section 6):
- ionic (Salager et al., SPE J. 19 (1979) 107; Cc form after Acosta):
  HLD = ln S - K EACN - f(A) - a_T (T - 25) + Cc
- nonionic (Bourrel, Salager, Schechter, Wade, J. Colloid Interface Sci. 75 (1980) 451):
  HLD = b S - K EACN - phi(A) + c_T (T - 25) + Cc
S is salinity in g NaCl per 100 mL (the unit the constants are fitted in), T in deg C (the
constants are per kelvin of difference from 25 deg C), EACN the oil's equivalent alkane carbon
number (n-alkanes: their carbon number, by definition), f(A)/phi(A) the alcohol (co-solvent) term.

Every default constant below is FROM MEMORY (K 0.17, a_T 0.01 /K, c_T 0.06 /K, b 0.13 per
g/100 mL) and so are the Cc values; verify them before relying on a result. Checked against
references/science.md section 6 (2026-12-04): it lists the same values and marks every one
MEMORY (the open-access sources it found, Salager et al., Cosmetics 7 (2020) 57 and Acosta 2020,
were not legible for the constants), so they stay marked from memory here.

The check uses them through formdb.facts.temperature: the HLD at the process temperature as a
third type indicator, and for ethoxylated nonionics the phase inversion temperature (PIT), the
temperature at which the nonionic HLD crosses zero.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from types import MappingProxyType

from formdb.schemas.vocab import EmulsionType

K_OIL = 0.17          # from memory (0.1-0.2; 0.16 anionics, 0.15 nonionics)
A_T_IONIC = 0.01      # 1/K, from memory
C_T_NONIONIC = 0.06   # 1/K, from memory
B_SALT_NONIONIC = 0.13  # per g/100 mL NaCl, from memory

# Characteristic curvature Cc (from memory; Witthayapanyanon, Harwell & Sabatini,
# J. Colloid Interface Sci. 325 (2008) 259).
CHARACTERISTIC_CURVATURE: Mapping[str, float] = MappingProxyType({
    "sodium lauryl sulfate": -2.3,
    "sodium dihexyl sulfosuccinate": -0.92,
    "docusate sodium": 2.55,
})


def _finite(name: str, value: float) -> float:
    if not math.isfinite(value):
        raise ValueError(f"{name} must be a finite number, got {value}")
    return value


def hld_ionic(
    salinity_g_100ml: float,
    eacn: float,
    cc: float,
    temperature_c: float = 25.0,
    *,
    alcohol_term: float = 0.0,
    k: float = K_OIL,
    a_t: float = A_T_IONIC,
) -> float:
    """HLD of an ionic surfactant: ln S - K EACN - f(A) - a_T (T - 25) + Cc (S in g/100 mL > 0)."""
    if not math.isfinite(salinity_g_100ml) or salinity_g_100ml <= 0:
        raise ValueError(f"salinity_g_100ml must be > 0 for an ionic HLD, got {salinity_g_100ml}")
    return (math.log(salinity_g_100ml) - _finite("k", k) * _finite("eacn", eacn)
            - _finite("alcohol_term", alcohol_term)
            - _finite("a_t", a_t) * (_finite("temperature_c", temperature_c) - 25.0)
            + _finite("cc", cc))


def hld_nonionic(
    salinity_g_100ml: float,
    eacn: float,
    cc: float,
    temperature_c: float = 25.0,
    *,
    alcohol_term: float = 0.0,
    k: float = K_OIL,
    b: float = B_SALT_NONIONIC,
    c_t: float = C_T_NONIONIC,
) -> float:
    """HLD of a nonionic surfactant: b S - K EACN - phi(A) + c_T (T - 25) + Cc (S in g/100 mL)."""
    if not math.isfinite(salinity_g_100ml) or salinity_g_100ml < 0:
        raise ValueError(f"salinity_g_100ml must be >= 0, got {salinity_g_100ml}")
    return (_finite("b", b) * salinity_g_100ml - _finite("k", k) * _finite("eacn", eacn)
            - _finite("alcohol_term", alcohol_term)
            + _finite("c_t", c_t) * (_finite("temperature_c", temperature_c) - 25.0)
            + _finite("cc", cc))


def hld_type(hld: float, *, band: float = 0.0) -> EmulsionType | None:
    """O/W below -band, W/O above +band, None within the band around the optimum (HLD = 0).

    The default band is 0 (only HLD exactly 0 is undecided); a caller that wants a margin for
    the uncertainty of memory-sourced constants sets one.
    """
    _finite("hld", hld)
    if band < 0:
        raise ValueError(f"band must be >= 0, got {band}")
    if hld < -band:
        return EmulsionType.OW
    if hld > band:
        return EmulsionType.WO
    return None


def pit_nonionic(
    salinity_g_100ml: float,
    eacn: float,
    cc: float,
    *,
    alcohol_term: float = 0.0,
    k: float = K_OIL,
    b: float = B_SALT_NONIONIC,
    c_t: float = C_T_NONIONIC,
) -> float:
    """The temperature (deg C) at which the nonionic HLD is zero: the phase inversion
    temperature, 25 + (K EACN + phi(A) - b S - Cc) / c_T. Below it the system is O/W (HLD < 0),
    above it W/O."""
    if _finite("c_t", c_t) <= 0:
        raise ValueError(f"c_t must be > 0 for a phase inversion temperature, got {c_t}")
    if not math.isfinite(salinity_g_100ml) or salinity_g_100ml < 0:
        raise ValueError(f"salinity_g_100ml must be >= 0, got {salinity_g_100ml}")
    return 25.0 + (_finite("k", k) * _finite("eacn", eacn) + _finite("alcohol_term", alcohol_term)
                   - _finite("b", b) * salinity_g_100ml - _finite("cc", cc)) / c_t


def linear_mix(parts: list[tuple[float, float]]) -> float:
    """Weight-averaged value of (mass, value) parts: the linear mixing rule for EACN and Cc
    (science.md section 6: commonly applied by weight for simplicity; from memory)."""
    total = sum(m for m, _ in parts)
    if not parts or total <= 0:
        raise ValueError("no mass to average over")
    return sum(m * _finite("value", v) for m, v in parts) / total
