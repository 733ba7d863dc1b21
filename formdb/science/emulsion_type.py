"""Emulsion type from Bancroft's rule, cross-checked against the blend HLB's class.

Bancroft, "The theory of emulsification, V", J. Phys. Chem. 17 (1913) 501: the continuous phase
is the one the emulsifier system is more soluble in. The caller sorts each emulsifier (including
soap formed in the batch) into the water side or the oil side: monovalent soaps (sodium,
potassium, amine soaps) are water-soluble and count on the water side; divalent and trivalent
soaps (magnesium, calcium, aluminium) are oil-soluble and count on the oil side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from formdb.schemas.vocab import EmulsionType
from formdb.science.hlb import hlb_class


def bancroft_type(
    water_soluble_mass: float, oil_soluble_mass: float, *, margin: float = 0.1
) -> EmulsionType | None:
    """O/W when the emulsifier system is mostly water-soluble, W/O when mostly oil-soluble.

    Masses in any one unit. "Mostly" means the balance (w - o)/(w + o) exceeds ``margin`` in
    size; with the default 0.1 one side needs more than 55 % of the emulsifier mass. Inside the
    margin neither side dominates and the rule predicts nothing (None): such systems can give
    either type depending on process, and a report should say so rather than guess.
    ValueError when both masses are zero (no emulsifier: nothing to judge).
    """
    for name, mass in (("water_soluble_mass", water_soluble_mass),
                       ("oil_soluble_mass", oil_soluble_mass)):
        if not math.isfinite(mass) or mass < 0:
            raise ValueError(f"{name} must be a finite number >= 0, got {mass}")
    if not 0.0 <= margin < 1.0:
        raise ValueError(f"margin must be in [0, 1), got {margin}")
    total = water_soluble_mass + oil_soluble_mass
    if total <= 0:
        raise ValueError("no emulsifier mass: Bancroft's rule has nothing to judge")
    balance = (water_soluble_mass - oil_soluble_mass) / total
    if balance > margin:
        return EmulsionType.OW
    if balance < -margin:
        return EmulsionType.WO
    return None


@dataclass(frozen=True)
class TypePrediction:
    """Both predictions of the emulsion type and whether they disagree.

    ``disagree`` is True only when both predict a type and the types differ; a None on either side
    is "no prediction", not a disagreement.
    """

    bancroft: EmulsionType | None
    by_hlb: EmulsionType | None

    @property
    def disagree(self) -> bool:
        both = self.bancroft is not None and self.by_hlb is not None
        return both and self.bancroft != self.by_hlb

    @property
    def agreed(self) -> EmulsionType | None:
        """The type when both predict the same one, else None."""
        return self.bancroft if self.bancroft == self.by_hlb else None

    @property
    def predicted(self) -> EmulsionType | None:
        """Bancroft's type when it gives one, else the HLB class (the solubility of the
        emulsifier system is the more direct evidence; the HLB class stands in for it)."""
        return self.bancroft if self.bancroft is not None else self.by_hlb


def predict_type(
    water_soluble_mass: float,
    oil_soluble_mass: float,
    blend_hlb: float | None,
    *,
    margin: float = 0.1,
    wo_max: float = 7.0,
    ow_min: float = 8.0,
) -> TypePrediction:
    """Bancroft's prediction beside the HLB class of the blend (None when the HLB is unknown).

    With no emulsifier mass on either side (none placed, or no emulsifier at all) Bancroft's
    rule has nothing to judge and its prediction is None; the HLB class still stands.
    """
    by_hlb = None if blend_hlb is None else hlb_class(blend_hlb, wo_max=wo_max, ow_min=ow_min)
    placed = water_soluble_mass + oil_soluble_mass > 0
    bancroft = (bancroft_type(water_soluble_mass, oil_soluble_mass, margin=margin)
                if placed else None)
    return TypePrediction(bancroft, by_hlb)
