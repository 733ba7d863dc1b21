"""ION01: pairs of ingredients whose compatibility classes clash (the pairs are data)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from itertools import combinations
from typing import Any

from formdb.facts.incompatibility import Sides, may_match, oriented
from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity


@dataclass(frozen=True)
class _Member:
    name: str
    label: str  # as the message names it
    percent: float
    sides: Sides
    lines: frozenset[int]  # the formula lines it is (a soap: the acid and base it came from)


def _members(formula: ResolvedFormula, facts: FormulaFacts) -> list[_Member]:
    """One member per ingredient (its lines together: one ingredient written on several lines
    clashes once with each other ingredient, at its total, not once per pair of lines), then
    each soap formed in place."""
    by_name: dict[str, _Member] = {}
    for ln in formula.lines:
        name = ln.ingredient.inci_name
        seen = by_name.get(name)
        by_name[name] = (_Member(name, name, ln.percent, Sides.of_record(ln.ingredient),
                                 frozenset({ln.line_no})) if seen is None else
                         _Member(name, name, seen.percent + ln.percent, seen.sides,
                                 seen.lines | {ln.line_no}))
    out = list(by_name.values())
    out.extend(_Member(soap.soap, f"{soap.soap} (formed in place)", soap.soap_percent,
                       Sides.of(soap.soap, classes=soap.classes),
                       frozenset({soap.acid_line_no, soap.base_line_no}))
               for soap in facts.soaps)
    return out


@register
class IncompatiblePair(Rule):
    """Two ingredients whose classes are listed as incompatible are used together.

    Flags: every pair of ingredients (one written on several lines counts once, at its total;
    soap formed in the batch joins the class "carboxylate soap")
    whose compatibility classes, or names, match a row of the incompatibility table; the
    severity, reason and advice come from that row, not from code.
    Why: opposite charges pair up and precipitate or lose activity; polyanions collapse with
    salts or cations. The grading is data: sulfate and sulfonate anionics bind quaternary
    cationics far more strongly than carboxylate soaps do (Yuli, Tzafrir & Salama, Cosmetics 10
    (2023) 45), so the table can rate sulfate + quaternary an error and soap + quaternary a
    warning.
    Fails: Sodium Lauryl Sulfate with Cetrimonium Chloride (sulfate anionic + quaternary
    cationic, an error in the bundled table).
    Passes: Sodium Lauryl Sulfate with Cocamidopropyl Betaine.
    Options: none (edit the incompatibility table to change what clashes).
    """

    code = "ION01"
    name = "incompatible-pair"
    groups = ("compatibility",)
    default_severity = Severity.WARNING

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        members = _members(formula, facts)
        present = frozenset().union(*(m.sides.tokens for m in members))
        for row in reference.incompatibilities:
            if not may_match(row, present):
                continue  # most rows: one side absent, no pair to try
            for a, b in combinations(members, 2):
                if a.lines & b.lines:
                    continue  # a soap and the acid or base it was formed from
                a_first = oriented(row, a.sides, b.sides)
                if a_first is None:
                    continue
                first, second = (a, b) if a_first else (b, a)
                yield self.finding(
                    row.severity,
                    f"{first.label} ({row.class_a}) with {second.label} ({row.class_b}): "
                    f"{row.reason}",
                    ingredients=[first.name, second.name],
                    values={"incompatibility": row.key, "class_a": row.class_a,
                            "class_b": row.class_b, "percent_a": first.percent,
                            "percent_b": second.percent, "source": row.source},
                    advice=row.advice)
