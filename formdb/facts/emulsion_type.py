"""The emulsion type of the emulsifier system as a whole (``science.emulsion_type``'s decision
table), its indicators, and the working type the rest of the facts use (the intended type, else
the decided one).

Four indicators: the blend HLB's class (Griffin members only, given only with enough coverage),
the soap and ionic members (each favours the side it dissolves on: monovalent soaps and water-
soluble ionic surfactants O/W, divalent and trivalent soaps W/O), Salager's HLD at 25 °C where
the library holds its data (``facts.temperature``; supporting, with the temperature of making
and the phase inversion temperature named) and the solubility split of all the members by mass
(Bancroft's rule read as a vote; supporting only).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from formdb.facts.hlb import IONISED
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import (
    EmulsifierFacts,
    FactsSettings,
    HldFacts,
    TypeDecision,
    TypeIndicator,
)
from formdb.schemas.vocab import EmulsionType
from formdb.science.emulsion_type import decide_type, predict_type
from formdb.science.hld import hld_type


@dataclass(frozen=True)
class TypeFacts:
    water_side: float  # % of emulsifier on the water side
    oil_side: float
    by_bancroft: EmulsionType | None
    by_hlb: EmulsionType | None
    predicted: EmulsionType | None
    disagree: bool
    working: EmulsionType | None
    source: Literal["intended", "predicted"] | None
    decision: TypeDecision | None


def is_ionic_member(e: EmulsifierFacts) -> bool:
    """A soap formed in place, a Davies-scale member, or an ionic member with no HLB."""
    return e.formed_in_place or e.scale == "davies" or (
        e.hlb is None and e.ionic_character in IONISED)


def _ionic_indicator(emulsifiers: list[EmulsifierFacts]) -> TypeIndicator | None:
    members = [e for e in emulsifiers if is_ionic_member(e) and e.side is not None]
    if not members:
        return None
    water = sum(e.percent for e in members if e.side == "water")
    oil = sum(e.percent for e in members if e.side == "oil")
    favours = (EmulsionType.OW if water > oil else EmulsionType.WO if oil > water else None)
    words = ", ".join(f"{e.inci} ({'water' if e.side == 'water' else 'oil'}-soluble)"
                      for e in members)
    return TypeIndicator(name="soap and ionic", favours=favours, mass_percent=water + oil,
                         detail=words)


def _hld_indicator(hld: HldFacts, emulsifier_percent: float,
                   band: float) -> TypeIndicator:
    """The HLD read at 25 °C (the product as kept), naming the temperature of making and a
    phase inversion crossed on cooling; "not enough data" (no type) where the HLD is missing."""
    if hld.status != "computed" or hld.hld_25c is None or hld.hld is None:
        return TypeIndicator(name="hld", favours=None, mass_percent=0.0,
                             detail=f"not enough data: {hld.reason}")
    favours = hld_type(hld.hld_25c, band=band)
    parts = [f"HLD {hld.hld_25c:+.2f} at 25 °C"]
    if abs(hld.temperature_c - 25.0) > 1e-9:
        parts.append(f"{hld.hld:+.2f} at the {hld.temperature_c:g} °C of making")
    pit = hld.pit_c
    if pit is not None:
        crossed = min(25.0, hld.temperature_c) < pit < max(25.0, hld.temperature_c)
        parts.append(f"phase inversion about {pit:.0f} °C"
                     + (", crossed on cooling" if crossed else ""))
    if favours is None:
        parts.append(f"within ±{band:g} of 0: either type can form")
    return TypeIndicator(name="hld", favours=favours, mass_percent=emulsifier_percent,
                         detail="; ".join(parts))


def emulsion_type(formula: ResolvedFormula, emulsifiers: list[EmulsifierFacts],
                  blend: float | None, griffin_percent: float, settings: FactsSettings,
                  work: Work, hld: HldFacts | None = None) -> TypeFacts:
    water_side = sum(e.percent for e in emulsifiers if e.side == "water")
    oil_side = sum(e.percent for e in emulsifiers if e.side == "oil")
    prediction = predict_type(water_side, oil_side, blend, margin=settings.bancroft_margin,
                              wo_max=settings.hlb_wo_max, ow_min=settings.hlb_ow_min)
    indicators: list[TypeIndicator] = []
    if blend is not None:
        indicators.append(TypeIndicator(
            name="hlb class", favours=prediction.by_hlb, mass_percent=griffin_percent,
            detail=f"blend HLB {blend:.2f} (W/O at or below {settings.hlb_wo_max:g}, O/W at "
                   f"or above {settings.hlb_ow_min:g})"))
    ionic = _ionic_indicator(emulsifiers)
    if ionic is not None:
        indicators.append(ionic)
    by_hld = None
    if hld is not None:
        hld_indicator = _hld_indicator(hld, sum(e.percent for e in emulsifiers),
                                       settings.hld_band)
        by_hld = hld_indicator.favours
        indicators.append(hld_indicator)
    if water_side + oil_side > 0:
        indicators.append(TypeIndicator(
            name="solubility split", favours=prediction.bancroft,
            mass_percent=water_side + oil_side,
            detail=f"water-soluble {water_side:.4g} % vs oil-soluble {oil_side:.4g} %"))
    decided = decide_type(prediction.by_hlb, griffin_percent,
                          ionic.favours if ionic else None, ionic.mass_percent if ionic else 0.0,
                          prediction.bancroft, by_hld,
                          blend_between=blend is not None and prediction.by_hlb is None)
    if emulsifiers and water_side + oil_side > 0 and prediction.bancroft is None:
        work.note("the solubility split gives no type: the emulsifier members are split about "
                  "evenly between water- and oil-soluble")
    given = {i.favours for i in indicators if i.favours is not None}
    intended = formula.formula.intended_type
    working = intended or decided.predicted
    source: Literal["intended", "predicted"] | None = (
        "intended" if intended else ("predicted" if decided.predicted else None))
    decision = TypeDecision(predicted=decided.predicted, row=decided.row, strong=decided.strong,
                            indicators=tuple(indicators))
    return TypeFacts(water_side, oil_side, prediction.bancroft, prediction.by_hlb,
                     decided.predicted, len(given) > 1, working, source, decision)
