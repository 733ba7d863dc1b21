"""RET01: a formula uses an ingredient the library has taken out of use."""

from __future__ import annotations

import shlex
from collections.abc import Iterable, Mapping
from typing import Any

from formdb.facts.composition import pieces
from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity


def _retired_uses(formula: ResolvedFormula,
                  reference: ReferenceData) -> dict[str, tuple[IngredientRecord, list[str]]]:
    """name key -> the retired record and where the formula holds it: a line, or a declared
    constituent (at any depth) of the mixture a line names."""
    found: dict[str, tuple[IngredientRecord, list[str]]] = {}

    def note(record: IngredientRecord, where: str) -> None:
        _, places = found.setdefault(name_key(record.inci_name), (record, []))
        if where not in places:
            places.append(where)

    for line in formula.lines:
        here = f"line {line.line_no}"
        if line.ingredient.retired:
            note(line.ingredient, here)
        for piece in pieces(line.ingredient, line.percent, reference):
            # the mixtures on the way down, then the constituent itself (a piece that is a
            # mixture's undeclared rest is the mixture, already seen as a step or the line)
            chain = [step.part for step in piece.steps]
            for depth, record in enumerate(chain):
                if record.retired:
                    held_by = chain[depth - 1].inci_name if depth else line.ingredient.inci_name
                    note(record, f"in {held_by} ({here})")
    return found


@register
class RetiredIngredient(Rule):
    """An ingredient the library has retired is in the formula.

    Flags: a line whose ingredient is retired in the library (`formdb ingredient retire`), and a
    retired ingredient declared as a constituent of a supplier blend a line names, at any depth;
    one finding per retired ingredient, naming where the formula holds it.
    Why: a lab retires an ingredient to take it out of use (a grade discontinued, a supplier
    dropped, a substance the team no longer accepts). The record stays, so a stored formula
    that used it still checks; but a check that says nothing lets a new draft, or a re-check
    before a batch, go ahead with it unseen.
    Fails: Polysorbate 60 at 3 % after `formdb ingredient retire "Polysorbate 60"`; a blend
    whose declared constituent is retired.
    Passes: the same formula while the ingredient is in use, or after `formdb ingredient
    restore`.
    Options: none.
    """

    code = "RET01"
    name = "retired-ingredient"
    groups = ("data",)
    default_severity = Severity.WARNING

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        for record, places in _retired_uses(formula, reference).values():
            name = record.inci_name
            quoted = shlex.quote(name)
            yield self.finding(
                self.default_severity,
                f"{name} is retired in the library (taken out of use, kept for old formulas): "
                f"{', '.join(places)}",
                ingredients=[name], values={"where": "; ".join(places)},
                advice=(f"replace {name}, or see who retired it and why with `formdb ingredient "
                        f"history {quoted}`; if it is back in use: `formdb ingredient restore "
                        f"{quoted}`"))
