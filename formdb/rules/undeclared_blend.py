"""MIX01: a line named as a supplier blend of INCI names, with no constituents declared."""

from __future__ import annotations

import re
import shlex
from collections.abc import Iterable, Mapping
from typing import Any

from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity

# the INCI convention for a blend: the members' names joined by "(and)", any case and spacing
AND = re.compile(r"\s*\(\s*and\s*\)\s*", re.IGNORECASE)


def blend_members(name: str) -> list[str]:
    """The INCI names a blend's name joins with "(and)"; [] for a name that is not one."""
    parts = [p.strip() for p in AND.split(name)]
    return parts if len(parts) > 1 and all(parts) else []


def known_to_the_library(line: ResolvedLine, reference: ReferenceData) -> bool:
    """The name is accounted for: its constituents are declared, a list entry in force matches
    it (CosIng names one Annex V substance "CITRIC ACID (AND) SILVER CITRATE"), or a limit row
    names it whole (the 3:1 methylchloroisothiazolinone and methylisothiazolinone of V/39)."""
    key = name_key(line.ingredient.inci_name)
    if key in reference.constituents or reference.list_entries.get(key):
        return True
    names = {name_key(n) for n in (line.ingredient.inci_name, *line.ingredient.synonyms)}
    return any(names & {name_key(n) for n in row.ingredients} for row in reference.limits)


@register
class UndeclaredBlend(Rule):
    """A supplier blend checked as one ingredient because its constituents are not declared.

    Flags: a line whose INCI name joins INCI names with "(and)", the convention for a blend
    ("Phenoxyethanol (and) Ethylhexylglycerin"), when the library declares no constituents for
    it and neither a list entry in force nor a limit row names it whole. The finding names the
    members it reads and the command that declares them.
    Why: the limits, the allergen labelling and the margin of safety are worked out per
    substance (facts.composition); a blend without its composition is checked under its own
    name only, so a member over its limit (phenoxyethanol's 1 % of Annex V/29, say) passes
    unseen. Saying so is the difference between "no finding" and "not checked". A name the
    library already accounts for (declared constituents; a list entry that names the blend, as
    CosIng does for "CITRIC ACID (AND) SILVER CITRATE"; a limit row on the whole mixture) is
    not flagged, nor is a name without "(and)".
    Fails: Phenoxyethanol (and) Ethylhexylglycerin 1 % with no constituents declared.
    Passes: Sodium Benzoate (and) Potassium Sorbate with its constituents declared;
    Methylchloroisothiazolinone (and) Methylisothiazolinone, named whole by the V/39 limit row.
    Options: none.
    """

    code = "MIX01"
    name = "undeclared-blend"
    groups = ("composition", "regulatory")
    default_severity = Severity.WARNING

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        seen: set[str] = set()
        for line in formula.lines:
            name = line.ingredient.inci_name
            members = blend_members(name)
            if not members or name_key(name) in seen or known_to_the_library(line, reference):
                continue
            seen.add(name_key(name))
            percent = sum(ln.percent for ln in formula.lines
                          if name_key(ln.ingredient.inci_name) == name_key(name))
            parts = " ".join(f"--part {shlex.quote(f'{m}=PERCENT')}" for m in members)
            yield self.finding(
                self.default_severity,
                f"{name} ({percent:g} %) reads as a blend of {', '.join(members)}, but the "
                "library declares no constituents for it: it was checked as one ingredient, "
                "so the limits, allergens and margins of safety of its constituents were not "
                "checked",
                ingredients=[name], values={"members": "; ".join(members), "percent": percent},
                advice=(f'declare its composition from the supplier\'s specification: formdb '
                        f"mixture set {shlex.quote(name)} {parts} --source SOURCE (the "
                        "percentages are the supplier's; they must add up to 100, or use "
                        "--partial), then check again"))
