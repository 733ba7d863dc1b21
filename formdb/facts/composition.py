"""Substance-level composition: mixtures exploded into their declared constituents.

A line whose ingredient declares constituents (a fragrance with its allergen certificate, a
preservative blend) contributes line % x constituent %/100 of each constituent, and a
constituent that declares constituents of its own (a supplier blend inside a blend) is exploded
in turn; what a declaration leaves undeclared stays with its mixture. Every source is kept, so
sums of one substance over several lines and mixtures can be shown.
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
    purposes: set[str | None] = field(default_factory=set)


def substances(formula: ResolvedFormula, reference: ReferenceData) -> dict[str, Substance]:
    """name key -> the substance with its total % and where it comes from."""
    out: dict[str, Substance] = {}

    def add(record: IngredientRecord, percent: float, source: str,
            purpose: str | None = None) -> None:
        item = out.setdefault(name_key(record.inci_name), Substance(record))
        item.percent += percent
        item.sources.append(source)
        item.purposes.add(purpose)

    def explode(record: IngredientRecord, percent: float, where: str, purpose: str | None,
                inside: frozenset[str]) -> None:
        key = name_key(record.inci_name)
        parts = () if key in inside else reference.constituents.get(key, ())
        if not parts:
            add(record, percent, where, purpose)
            return
        declared = 0.0
        for part in parts:  # a constituent may be a declared mixture itself: exploded in turn
            declared += part.percent
            explode(part.record, percent * part.percent / 100.0,
                    f"{where}: {part.percent:g} % of {percent:g} %", None, inside | {key})
        rest = max(0.0, 100.0 - declared)
        if rest > 1e-9:
            add(record, percent * rest / 100.0, f"{where}: undeclared {rest:g} %")

    for ln in formula.lines:
        # ``inside``: the mixtures being exploded, so a cycle (declarations refuse one; a
        # restored or hand-edited library might hold one) ends at the repeated mixture
        explode(ln.ingredient, ln.percent, f"line {ln.line_no} ({ln.given_name})", ln.purpose,
                frozenset())
    return out


def has_mixtures(formula: ResolvedFormula, reference: ReferenceData) -> bool:
    return any(name_key(ln.ingredient.inci_name) in reference.constituents
               for ln in formula.lines)


def _repeats(formula: ResolvedFormula) -> bool:
    """True when one ingredient is on more than one line (split over phases, say)."""
    keys = [name_key(ln.ingredient.inci_name) for ln in formula.lines]
    return len(set(keys)) < len(keys)


def _one_purpose(purposes: set[str | None]) -> str | None:
    """The purpose a substance's lines declare, when they declare one and no other (a line that
    says none is read as the declared one: the declared line alone keeps its verdict, and its
    total can only be larger); None when none is declared or two differ."""
    declared = purposes - {None}
    return next(iter(declared)) if len(declared) == 1 else None


def substance_formula(formula: ResolvedFormula, reference: ReferenceData) -> ResolvedFormula:
    """The formula as its substances, one line each (totals over lines and mixtures), for rules
    that judge substances; the formula itself when no line is a declared mixture and no
    ingredient is on two lines. A substance keeps the purpose its lines declare
    (``_one_purpose``)."""
    if not has_mixtures(formula, reference) and not _repeats(formula):
        return formula
    lines = tuple(
        ResolvedLine(line_no=number, given_name=item.record.inci_name, percent=item.percent,
                     phase=None, ingredient=item.record,
                     purpose=_one_purpose(item.purposes))
        for number, item in enumerate(substances(formula, reference).values(), start=1))
    return formula.model_copy(update={"lines": lines})
