"""Emulsion type from the emulsifier system as a whole (Bancroft's rule, judged the way the trade
judges it).

Bancroft, "The theory of emulsification, V", J. Phys. Chem. 17 (1913) 501: the continuous phase
is the one the emulsifier *system* is more soluble in. The blend's HLB measures that solubility
for the system as a whole (Griffin, J. Soc. Cosmet. Chem. 1 (1949) 311: W/O emulsifiers about
3-6, O/W about 8-16/18), and the valence of a soap decides for soap systems (monovalent sodium,
potassium and amine soaps are water-soluble: O/W; divalent and trivalent soaps are oil-soluble:
W/O). A vote of emulsifier mass by solubility (``bancroft_type``) is only a supporting
indicator: a Griffin O/W pair such as sorbitan oleate 3 + polysorbate 80 2 has most of its mass
oil-soluble and still makes O/W, because the blend's HLB (8.58) is what the interface sees.

``decide_type`` is the decision table:

| HLB class | soap / ionic | HLD (at 25 °C) | solubility split | decided | strong |
|-----------|--------------|----------------|------------------|---------|--------|
| T | T or none | any | any | T | yes |
| none | T | any | any | T | yes |
| T | U (differs) | any | any | the one behind more emulsifier mass | no |
| none | none | T | any | T | no |
| none (blend HLB between the classes) | none | none | any | no prediction | - |
| none (no blend HLB at all) | none | none | T | T | no |
| none | none | none | none | no prediction | - |

"none" is no indicator: no blend HLB (or one in the gap between the classes), no soap or ionic
member, no HLD (the library lacks the EACN, Cc or salinity, or the HLD lies within the band
around 0 where either type can form), an evenly split system. A blend HLB between the classes
(above 6, below 8) contradicts neither type, so the vote of member masses does not overrule it:
sorbitan oleate 3.3 + polysorbate 80 1.7 (blend 7.94, 66 % of the mass oil-soluble) with 75 %
water gets no prediction, not "W/O" (state ``intended_type``). A disagreement is reported as
information naming the indicators, never as an error by itself.

The HLD (Salager; Bourrel, Salager, Schechter, Wade, J. Colloid Interface Sci. 75 (1980) 451:
HLD < 0 O/W, > 0 W/O) is the third indicator. It is read at 25 °C, the temperature the product
is kept and used at: a change of temperature inverts an emulsion where the HLD crosses 0 (the
transitional inversion of Salager's formulation-composition map, which the PIT method uses), so
an ethoxylated system made above its phase inversion temperature is W/O while hot and O/W once
cooled. The HLD at the temperature of making is rule HLD01's concern. It supports and breaks no
tie between the HLB class and the soaps: its constants are from memory, and it is worked out
only for all-nonionic or all-ionic systems.
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


@dataclass(frozen=True)
class Decision:
    """The decided type, the row of the decision table that gave it, and its strength."""

    predicted: EmulsionType | None
    row: str
    strong: bool


def decide_type(by_hlb: EmulsionType | None, hlb_mass: float,
                by_ionic: EmulsionType | None, ionic_mass: float,
                by_split: EmulsionType | None,
                by_hld: EmulsionType | None = None, *,
                blend_between: bool = False) -> Decision:
    """The decision table of this module's docstring. Masses (any one unit) are the emulsifier
    mass behind the HLB class (the Griffin members) and behind the soap/ionic indicator.
    ``blend_between``: the system has a blend HLB, but it lies between the classes; the
    solubility split, a vote of member masses, does not then decide against it."""
    if by_hlb is not None and (by_ionic is None or by_ionic == by_hlb):
        row = ("the blend HLB class and the soap/ionic members agree" if by_ionic is not None
               else "the blend HLB class decides")
        return Decision(by_hlb, row, True)
    if by_hlb is None and by_ionic is not None:
        return Decision(by_ionic, "the soap/ionic members decide (no HLB class)", True)
    if by_hlb is not None and by_ionic is not None:
        if hlb_mass >= ionic_mass:
            return Decision(by_hlb, "the HLB class and the soap/ionic members disagree; the "
                                    "nonionic members carry more of the system", False)
        return Decision(by_ionic, "the HLB class and the soap/ionic members disagree; the "
                                  "soap/ionic members carry more of the system", False)
    if by_hld is not None:
        return Decision(by_hld, "only the HLD at 25 °C gives a type (no HLB class or soap)",
                        False)
    if by_split is not None and blend_between:
        return Decision(None, "the blend HLB lies between the classes, where either type can "
                              "form; the solubility split alone does not decide", False)
    if by_split is not None:
        return Decision(by_split, "only the solubility split of the members gives a type", False)
    return Decision(None, "no indicator gives a type", False)
