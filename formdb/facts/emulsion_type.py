"""The emulsion type: Bancroft's rule on the emulsifier sides beside the blend HLB's class
(``science.emulsion_type.predict_type``), and the working type the rest of the facts use (the
intended type, else the prediction)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import EmulsifierFacts, FactsSettings
from formdb.schemas.vocab import EmulsionType
from formdb.science.emulsion_type import predict_type


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


def emulsion_type(formula: ResolvedFormula, emulsifiers: list[EmulsifierFacts],
                  blend: float | None, settings: FactsSettings, work: Work) -> TypeFacts:
    water_side = sum(e.percent for e in emulsifiers if e.side == "water")
    oil_side = sum(e.percent for e in emulsifiers if e.side == "oil")
    prediction = predict_type(water_side, oil_side, blend, margin=settings.bancroft_margin,
                              wo_max=settings.hlb_wo_max, ow_min=settings.hlb_ow_min)
    predicted = prediction.predicted
    if emulsifiers and water_side + oil_side > 0 and prediction.bancroft is None:
        work.note("Bancroft's rule predicts no type: the emulsifier system is split about "
                  "evenly between water- and oil-soluble members")
    intended = formula.formula.intended_type
    working = intended or predicted
    source: Literal["intended", "predicted"] | None = (
        "intended" if intended else ("predicted" if predicted else None))
    return TypeFacts(water_side, oil_side, prediction.bancroft, prediction.by_hlb, predicted,
                     prediction.disagree, working, source)
