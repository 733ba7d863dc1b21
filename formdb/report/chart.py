"""Geometry of the HLB chart of one formula: the emulsifiers on an HLB axis, the blend, the band.

Only coordinates and label strings are worked out here; the HTML template draws them as inline
SVG (escaped like every other string). The axis runs 0-20 (Griffin's scale) and widens in steps
of 5 when an ionic emulsifier's HLB (Davies' group numbers give sodium lauryl sulfate about 40)
or the band reaches beyond 20.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from formdb.report import numbers as n
from formdb.schemas.result import EmulsifierFacts, FormulaFacts

WIDTH = 720
LEFT = 30
RIGHT = 30
ROW_HEIGHT = 15
CHAR_WIDTH = 6.2  # px per character of the 11 px label font (estimate, for spacing only)
TOP = 14
BELOW_AXIS = 56


@dataclass(frozen=True)
class Mark:
    x: float
    y_label: float
    label: str
    anchor: str
    formed_in_place: bool


@dataclass(frozen=True)
class Tick:
    x: float
    label: str


@dataclass(frozen=True)
class Band:
    x_low: float
    x_high: float
    x_required: float
    label: str
    anchor: str = "middle"


@dataclass(frozen=True)
class HlbChart:
    width: int
    height: int
    axis_y: float
    x_start: float
    x_end: float
    ticks: tuple[Tick, ...]
    marks: tuple[Mark, ...]
    blend_x: float | None
    blend_label: str
    blend_anchor: str
    band: Band | None
    description: str
    empty_message: str = ""


AXIS_CAP = 60.0  # Davies' numbers reach about 40; anything beyond is drawn at the edge


def axis_max(values: list[float]) -> float:
    finite = [v for v in values if math.isfinite(v)]
    top = min(max([20.0, *finite]), AXIS_CAP)
    return 20.0 if top <= 20 else float(math.ceil(top / 5.0) * 5)


def _tick_step(top: float) -> float:
    return 2.0 if top <= 20 else 5.0 if top <= 50 else 10.0


class _Scale:
    def __init__(self, top: float) -> None:
        self.top = top

    def x(self, value: float) -> float:
        clamped = min(max(value, 0.0), self.top)
        return round(LEFT + clamped / self.top * (WIDTH - LEFT - RIGHT), 1)


def _label_rows(items: list[tuple[float, str]]) -> list[tuple[int, str]]:
    """Row per label so that labels in one row do not overlap; (row, anchor) in input order."""
    row_ends: list[float] = []
    placed: list[tuple[int, str]] = []
    for x, text in items:
        width = len(text) * CHAR_WIDTH
        anchor = "end" if x + width > WIDTH - 4 else "start"
        start, end = (x - width, x) if anchor == "end" else (x, x + width)
        row = next((i for i, last in enumerate(row_ends) if start > last + 8), len(row_ends))
        if row == len(row_ends):
            row_ends.append(end)
        else:
            row_ends[row] = end
        placed.append((row, anchor))
    return placed


def _mark_label(member: EmulsifierFacts) -> str:
    suffix = " (formed in batch)" if member.formed_in_place else ""
    return f"{member.inci} {n.hlb(member.hlb)}{suffix}"


def _marks(facts: FormulaFacts, scale: _Scale) -> tuple[list[Mark], int]:
    """The emulsifier marks with their label rows, and how many label rows there are."""
    known = sorted((e for e in facts.emulsifiers if e.hlb is not None),
                   key=lambda e: e.hlb or 0.0)
    items = [(scale.x(e.hlb or 0.0), _mark_label(e)) for e in known]
    rows = _label_rows(items)
    n_rows = max((row for row, _ in rows), default=0) + 1
    axis_y = axis_position(n_rows)
    marks = [Mark(x=x, y_label=axis_y - 12 - row * ROW_HEIGHT, label=label, anchor=anchor,
                  formed_in_place=e.formed_in_place)
             for (x, label), (row, anchor), e in zip(items, rows, known, strict=True)]
    return marks, n_rows


def axis_position(label_rows: int) -> float:
    return float(TOP + 12 + label_rows * ROW_HEIGHT)


def centred_anchor(x: float, text: str) -> str:
    """'middle' unless a centred label would run off the chart's left or right edge."""
    half = len(text) * CHAR_WIDTH / 2
    if x - half < 2:
        return "start"
    return "end" if x + half > WIDTH - 2 else "middle"


def _band(facts: FormulaFacts, scale: _Scale) -> Band | None:
    if facts.required_hlb is None or facts.target_low is None or facts.target_high is None:
        return None
    kind = facts.working_type.value if facts.working_type else ""
    tol = facts.settings.hlb_tolerance
    x = scale.x(facts.required_hlb)
    label = f"required {n.hlb(facts.required_hlb)} ± {tol:g} ({kind})"
    return Band(scale.x(facts.target_low), scale.x(facts.target_high), x, label,
                centred_anchor(x, label))


def _description(facts: FormulaFacts) -> str:
    parts = [f"{e.inci} HLB {n.hlb(e.hlb)}" for e in facts.emulsifiers if e.hlb is not None]
    text = "HLB chart: " + ("; ".join(parts) if parts else "no emulsifier with a known HLB")
    if facts.blend_hlb is not None:
        text += f"; blend HLB {n.hlb(facts.blend_hlb)}"
    if facts.required_hlb is not None:
        text += (f"; required HLB {n.hlb(facts.required_hlb)}, band "
                 f"{n.hlb(facts.target_low)} to {n.hlb(facts.target_high)}")
    return text


def hlb_chart(facts: FormulaFacts) -> HlbChart:
    values = [e.hlb for e in facts.emulsifiers if e.hlb is not None]
    values += [v for v in (facts.blend_hlb, facts.target_high) if v is not None]
    top = axis_max(values)
    scale = _Scale(top)
    marks, n_rows = _marks(facts, scale)
    axis_y = axis_position(n_rows)
    step = _tick_step(top)
    ticks = tuple(Tick(scale.x(v), f"{v:g}")
                  for v in (i * step for i in range(int(top / step) + 1)))
    blend = facts.blend_hlb
    blend_x = scale.x(blend) if blend is not None else None
    blend_label = f"blend {n.hlb(blend)}" if blend is not None else ""
    return HlbChart(width=WIDTH, height=int(axis_y + BELOW_AXIS), axis_y=axis_y,
                    x_start=float(LEFT), x_end=float(WIDTH - RIGHT), ticks=ticks,
                    marks=tuple(marks), blend_x=blend_x, blend_label=blend_label,
                    blend_anchor=centred_anchor(blend_x or 0.0, blend_label),
                    band=_band(facts, scale), description=_description(facts),
                    empty_message="" if marks else "no emulsifier with a known HLB")
