"""ION01: pairs of ingredients whose compatibility classes clash (the pairs are data)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from itertools import combinations
from typing import Any

from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import Incompatibility, ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity, norm_token


@dataclass(frozen=True)
class _Member:
    name: str
    label: str  # as the message names it
    percent: float
    classes: frozenset[str]
    keys: frozenset[str]
    lines: frozenset[int]  # the formula lines it is (a soap: the acid and base it came from)


def _members(formula: ResolvedFormula, facts: FormulaFacts) -> list[_Member]:
    out = []
    for ln in formula.lines:
        ing = ln.ingredient
        keys = {name_key(ing.inci_name)} | {name_key(s) for s in ing.synonyms}
        out.append(_Member(ing.inci_name, ing.inci_name, ln.percent,
                           frozenset(norm_token(c) for c in ing.classes), frozenset(keys),
                           frozenset({ln.line_no})))
    out.extend(_Member(soap.soap, f"{soap.soap} (formed in place)", soap.soap_percent,
                       frozenset(norm_token(c) for c in soap.classes),
                       frozenset({name_key(soap.soap)}),
                       frozenset({soap.acid_line_no, soap.base_line_no}))
               for soap in facts.soaps)
    return out


def _is(member: _Member, token: str) -> bool:
    """A row's side names a compatibility class or an ingredient (INCI name or synonym)."""
    return norm_token(token) in member.classes or name_key(token) in member.keys


def _match(row: Incompatibility, a: _Member, b: _Member) -> tuple[_Member, _Member] | None:
    if _is(a, row.class_a) and _is(b, row.class_b):
        return a, b
    if _is(b, row.class_a) and _is(a, row.class_b):
        return b, a
    return None


def _both_sides_present(row: Incompatibility, present: frozenset[str]) -> bool:
    """Cheap pre-test: a row can match a pair only if some member is each of its sides.
    ``present`` holds every member's classes and name keys together (a false hit only costs
    the full test)."""
    return ((norm_token(row.class_a) in present or name_key(row.class_a) in present)
            and (norm_token(row.class_b) in present or name_key(row.class_b) in present))


@register
class IncompatiblePair(Rule):
    """Two ingredients whose classes are listed as incompatible are used together.

    Flags: every pair of lines (soap formed in the batch joins the class "carboxylate soap")
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
        present = frozenset().union(*(m.classes | m.keys for m in members))
        for row in reference.incompatibilities:
            if not _both_sides_present(row, present):
                continue  # most rows: one side absent, no pair to try
            for a, b in combinations(members, 2):
                if a.lines & b.lines:
                    continue  # a soap and the acid or base it was formed from
                matched = _match(row, a, b)
                if matched is None:
                    continue
                first, second = matched
                yield self.finding(
                    row.severity,
                    f"{first.label} ({row.class_a}) with {second.label} ({row.class_b}): "
                    f"{row.reason}",
                    ingredients=[first.name, second.name],
                    values={"incompatibility": row.key, "class_a": row.class_a,
                            "class_b": row.class_b, "percent_a": first.percent,
                            "percent_b": second.percent, "source": row.source},
                    advice=row.advice)
