"""Substance-level composition: mixtures exploded into their declared constituents.

A line whose ingredient declares constituents (a fragrance with its allergen certificate, a
preservative blend) contributes line % x constituent %/100 of each constituent; what the
declaration leaves undeclared stays with the mixture itself. Every source is kept, so sums of
one substance over several lines and mixtures can be shown.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import ReferenceData


@dataclass
class Substance:
    record: IngredientRecord
    percent: float = 0.0
    sources: list[str] = field(default_factory=list)


def substances(formula: ResolvedFormula, reference: ReferenceData) -> dict[str, Substance]:
    """name key -> the substance with its total % and where it comes from."""
    out: dict[str, Substance] = {}

    def add(record: IngredientRecord, percent: float, source: str) -> None:
        item = out.setdefault(name_key(record.inci_name), Substance(record))
        item.percent += percent
        item.sources.append(source)

    for ln in formula.lines:
        ing = ln.ingredient
        parts = reference.constituents.get(name_key(ing.inci_name), ())
        where = f"line {ln.line_no} ({ln.given_name})"
        if not parts:
            add(ing, ln.percent, where)
            continue
        declared = 0.0
        for part in parts:
            declared += part.percent
            add(part.record, ln.percent * part.percent / 100.0,
                f"{where}: {part.percent:g} % of {ln.percent:g} %")
        rest = max(0.0, 100.0 - declared)
        if rest > 1e-9:
            add(ing, ln.percent * rest / 100.0, f"{where}: undeclared {rest:g} %")
    return out


def has_mixtures(formula: ResolvedFormula, reference: ReferenceData) -> bool:
    return any(name_key(ln.ingredient.inci_name) in reference.constituents
               for ln in formula.lines)


def substance_formula(formula: ResolvedFormula, reference: ReferenceData) -> ResolvedFormula:
    """The formula as its substances, one line each (totals over lines and mixtures), for rules
    that judge substances; the formula itself when no line is a declared mixture."""
    if not has_mixtures(formula, reference):
        return formula
    lines = tuple(
        ResolvedLine(line_no=number, given_name=item.record.inci_name, percent=item.percent,
                     phase=None, ingredient=item.record)
        for number, item in enumerate(substances(formula, reference).values(), start=1))
    return formula.model_copy(update={"lines": lines})
