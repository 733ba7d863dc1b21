"""HLB estimated from composition (Griffin 1954) or from chemical groups (Davies 1957).

These fill a missing HLB; the method's name (an ``EstimateMethod`` value) is what the library
records as the value's provenance, so a reader knows it was estimated and how.

- Griffin, "Calculation of HLB values of non-ionic surfactants", J. Soc. Cosmet. Chem. 5 (1954)
  249: 20(1 - S/A) for polyol fatty-acid esters, (E + P)/5 for ethoxylates (E/5 when the
  hydrophile is only oxyethylene), and 20 Mh/M in general (also IUPAC Gold Book 15196).
- Davies, Proc. 2nd Int. Congr. Surface Activity 1 (1957) 426: HLB = 7 + sum of group numbers,
  lipophilic CHx groups counting -0.475 each. It also covers ionic surfactants (scale beyond 20).
"""

from __future__ import annotations

import inspect
import math
from collections.abc import Callable, Mapping
from enum import StrEnum
from types import MappingProxyType

EO_MOLAR_MASS = 44.053  # g/mol, C2H4O from IUPAC standard atomic weights (computed)


def _finite(name: str, value: float, *, low: float | None = 0.0) -> float:
    if not isinstance(value, int | float) or not math.isfinite(value):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    if low is not None and value < low:
        raise ValueError(f"{name} must be >= {low:g}, got {value:g}")
    return float(value)


def hlb_from_saponification(saponification_number: float, acid_number: float) -> float:
    """Griffin's ester formula HLB = 20 (1 - S/A) for polyol fatty-acid esters.

    S: saponification number of the ester, A: acid number of the recovered fatty acid, both in
    mg KOH per g. S must not exceed A (the ester cannot hold more acid than the pure acid).
    """
    s = _finite("saponification_number", saponification_number)
    a = _finite("acid_number", acid_number)
    if a <= 0:
        raise ValueError("acid_number must be > 0")
    if s > a:
        raise ValueError(f"saponification_number {s:g} exceeds acid_number {a:g}")
    return 20.0 * (1.0 - s / a)


def hlb_from_ethoxylate(oxyethylene_percent: float, polyol_percent: float = 0.0) -> float:
    """Griffin's HLB = (E + P)/5 from the weight percentages of oxyethylene E and polyol P.

    Griffin gave it for products whose saponification number cannot be measured (beeswax and
    lanolin derivatives); with P = 0 it is E/5, the usual formula for alcohol ethoxylates.
    """
    e = _finite("oxyethylene_percent", oxyethylene_percent)
    p = _finite("polyol_percent", polyol_percent)
    if e + p > 100.0 + 1e-9:
        raise ValueError(f"oxyethylene_percent + polyol_percent = {e + p:g} exceeds 100")
    return (e + p) / 5.0


def hlb_from_hydrophile_mass(hydrophilic_mass: float, total_mass: float) -> float:
    """Griffin's HLB = 20 Mh/M: Mh the mass (or molar mass) of the hydrophilic part, M the whole."""
    mh = _finite("hydrophilic_mass", hydrophilic_mass)
    m = _finite("total_mass", total_mass)
    if m <= 0:
        raise ValueError("total_mass must be > 0")
    if mh > m:
        raise ValueError(f"hydrophilic_mass {mh:g} exceeds total_mass {m:g}")
    return 20.0 * mh / m


def oxyethylene_percent(hydrophobe_molar_mass: float, ethylene_oxide_units: float) -> float:
    """Weight percent of oxyethylene in an ethoxylate of n EO units on a hydrophobe.

    ``hydrophobe_molar_mass`` (g/mol) is the starting fatty alcohol or acid, which the EO units
    add to: E = 100 n M(EO) / (M_hydrophobe + n M(EO)), with M(EO) = 44.053 g/mol.
    """
    mh = _finite("hydrophobe_molar_mass", hydrophobe_molar_mass)
    n = _finite("ethylene_oxide_units", ethylene_oxide_units)
    if mh + n <= 0:
        raise ValueError("an ethoxylate needs a hydrophobe or some EO units")
    eo = n * EO_MOLAR_MASS
    return 100.0 * eo / (mh + eo)


# Davies group numbers. Values marked FOUND were read in public copies of Davies' table
# (Davies 1957; Davies & Rideal, Interfacial Phenomena, 2nd ed., 1963); the three marked
# "from memory" are recalled from Davies & Rideal 1963 and not seen in a copy.
DAVIES_GROUPS: Mapping[str, float] = MappingProxyType({
    "sulfate": 38.7,                # -SO4- Na+ (FOUND; current Wikipedia prints 38.6)
    "carboxylate-potassium": 21.1,  # -COO- K+ (FOUND)
    "carboxylate-sodium": 19.1,     # -COO- Na+ (FOUND)
    "tertiary-amine": 9.4,          # N, tertiary amine (FOUND)
    "ester-sorbitan-ring": 6.8,     # ester on a sorbitan ring (FOUND)
    "ester": 2.4,                   # free ester (FOUND)
    "carboxylic-acid": 2.1,         # -COOH (FOUND)
    "hydroxyl": 1.9,                # free -OH (FOUND)
    "ether": 1.3,                   # -O- (FOUND)
    "hydroxyl-sorbitan-ring": 0.5,  # -OH on a sorbitan ring (FOUND)
    "chx": -0.475,                  # each -CH-, -CH2-, -CH3, =CH- (FOUND)
    "oxyethylene": 0.33,            # -(CH2CH2O)- (from memory)
    "oxypropylene": -0.15,          # -(CH2CH2CH2O)- (from memory)
    "cfx": -0.870,                  # each -CF2-, -CF3 (from memory)
})


def _group_key(name: str) -> str:
    return "-".join(name.replace("_", " ").replace("-", " ").split()).casefold()


def hlb_davies(groups: Mapping[str, float]) -> float:
    """Davies' HLB = 7 + sum(count x group number), groups named as in ``DAVIES_GROUPS``.

    Counts are numbers of each group in one molecule (fractional counts allowed for averages).
    Example, sodium lauryl sulfate: {"sulfate": 1, "chx": 12} gives 40.0.
    """
    if not groups:
        raise ValueError("no groups given")
    total = 7.0
    for name, count in groups.items():
        key = _group_key(name)
        if key not in DAVIES_GROUPS:
            raise ValueError(f"unknown Davies group {name!r}; known groups: "
                             f"{', '.join(DAVIES_GROUPS)}")
        total += _finite(f"count of {name}", count) * DAVIES_GROUPS[key]
    return total


class EstimateMethod(StrEnum):
    """How an HLB was estimated: recorded beside the value as its provenance."""

    GRIFFIN_ESTER = "griffin-ester"
    GRIFFIN_ETHOXYLATE = "griffin-ethoxylate"
    GRIFFIN_MASS_FRACTION = "griffin-mass-fraction"
    DAVIES_GROUPS = "davies-groups"


def _ethoxylate(
    *,
    oxyethylene_percent: float | None = None,
    polyol_percent: float = 0.0,
    hydrophobe_molar_mass: float | None = None,
    ethylene_oxide_units: float | None = None,
) -> float:
    """(E + P)/5 from percentages, or E/5 from a hydrophobe's molar mass and its EO units."""
    if oxyethylene_percent is not None and hydrophobe_molar_mass is None \
            and ethylene_oxide_units is None:
        return hlb_from_ethoxylate(oxyethylene_percent, polyol_percent)
    if (hydrophobe_molar_mass is not None and ethylene_oxide_units is not None
            and oxyethylene_percent is None and polyol_percent == 0.0):
        return hlb_from_ethoxylate(_oxyethylene(hydrophobe_molar_mass, ethylene_oxide_units))
    raise TypeError("inconsistent ethoxylate inputs")


_oxyethylene = oxyethylene_percent

_METHODS: dict[EstimateMethod, tuple[Callable[..., float], str]] = {
    EstimateMethod.GRIFFIN_ESTER: (hlb_from_saponification, "saponification_number, acid_number"),
    EstimateMethod.GRIFFIN_ETHOXYLATE: (
        _ethoxylate, "oxyethylene_percent [and polyol_percent], or hydrophobe_molar_mass and "
                     "ethylene_oxide_units"),
    EstimateMethod.GRIFFIN_MASS_FRACTION: (hlb_from_hydrophile_mass,
                                           "hydrophilic_mass, total_mass"),
    EstimateMethod.DAVIES_GROUPS: (hlb_davies, "groups"),
}


def estimate_hlb(method: EstimateMethod | str, **inputs: object) -> float:
    """Estimate an HLB by a named method; ValueError names the inputs the method expects.

    Inputs by method: griffin-ester (saponification_number, acid_number), griffin-ethoxylate
    (oxyethylene_percent [, polyol_percent], or hydrophobe_molar_mass, ethylene_oxide_units),
    griffin-mass-fraction (hydrophilic_mass, total_mass), davies-groups (groups).
    """
    try:
        chosen = EstimateMethod(method)
    except ValueError:
        raise ValueError(f"unknown HLB estimate method {method!r}; choose one of: "
                         f"{', '.join(m.value for m in EstimateMethod)}") from None
    func, expected = _METHODS[chosen]
    bad = ValueError(f"{chosen.value} needs {expected}; got {', '.join(inputs) or 'nothing'}")
    try:
        inspect.signature(func).bind(**inputs)
    except TypeError:
        raise bad from None
    if chosen is EstimateMethod.DAVIES_GROUPS and not isinstance(inputs["groups"], Mapping):
        raise ValueError("davies-groups needs groups as a mapping of group name to count")
    try:
        return func(**inputs)
    except TypeError:
        raise bad from None
