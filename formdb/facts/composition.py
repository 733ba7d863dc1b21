"""Substance-level composition: mixtures exploded into their declared constituents.

A line whose ingredient declares constituents (a fragrance with its allergen certificate, a
preservative blend) contributes line % x constituent %/100 of each constituent, and a
constituent that declares constituents of its own (a supplier blend inside a blend) is exploded
in turn; what a declaration leaves undeclared stays with its mixture. Every source is kept, so
sums of one substance over several lines and mixtures can be shown.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
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


@dataclass(frozen=True)
class Step:
    """One step into a mixture: ``part`` is ``share`` % of a mixture present at ``of_percent``
    % of the product."""

    part: IngredientRecord
    share: float
    of_percent: float


@dataclass(frozen=True)
class Piece:
    """What one line holds of one substance: ``percent`` of the product, reached through
    ``steps`` from the line's own ingredient; ``rest`` is the % a mixture's declaration leaves
    undeclared, when this piece is that rest (``record`` is then the mixture)."""

    record: IngredientRecord
    percent: float
    steps: tuple[Step, ...] = ()
    rest: float | None = None


def pieces(record: IngredientRecord, percent: float, reference: ReferenceData,
           whole: Callable[[IngredientRecord], bool] | None = None) -> Iterator[Piece]:
    """``record`` at ``percent`` of the product as its declared constituents, a constituent
    that is a declared mixture itself in turn, what a declaration leaves undeclared as the
    mixture's rest; ``whole`` names the mixtures to keep as they are (a label's fragrance)."""

    def explode(record: IngredientRecord, percent: float, steps: tuple[Step, ...],
                inside: frozenset[str]) -> Iterator[Piece]:
        key = name_key(record.inci_name)
        # ``inside``: the mixtures being exploded, so a cycle (declarations refuse one; a
        # restored or hand-edited library might hold one) ends at the repeated mixture
        parts = () if key in inside or (whole is not None and whole(record)) \
            else reference.constituents.get(key, ())
        if not parts:
            yield Piece(record, percent, steps)
            return
        declared = 0.0
        for part in parts:
            declared += part.percent
            yield from explode(part.record, percent * part.percent / 100.0,
                               (*steps, Step(part.record, part.percent, percent)),
                               inside | {key})
        rest = max(0.0, 100.0 - declared)
        if rest > 1e-9:
            yield Piece(record, percent * rest / 100.0, steps, rest)

    return explode(record, percent, (), frozenset())


def substances(formula: ResolvedFormula, reference: ReferenceData) -> dict[str, Substance]:
    """name key -> the substance with its total % and where it comes from."""
    out: dict[str, Substance] = {}
    for ln in formula.lines:
        for piece in pieces(ln.ingredient, ln.percent, reference):
            where = f"line {ln.line_no} ({ln.given_name})"
            for step in piece.steps:
                where = f"{where}: {step.share:g} % of {step.of_percent:g} %"
            if piece.rest is not None:
                where = f"{where}: undeclared {piece.rest:g} %"
            item = out.setdefault(name_key(piece.record.inci_name), Substance(piece.record))
            item.percent += piece.percent
            item.sources.append(where)
            # the line's purpose is its own ingredient's, not its constituents'
            item.purposes.add(ln.purpose if not piece.steps and piece.rest is None else None)
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
