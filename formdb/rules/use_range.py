"""USE01: an ingredient used outside its typical range."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity

_SEVERITIES = tuple(s.value for s in Severity)


@register
class UseRange(Rule):
    """An ingredient is used below or above its typical use range.

    Flags: a line whose % is below the library's use_min_percent (info by default) or above its
    use_max_percent (warning by default).
    Why: typical use ranges summarise where an ingredient does its job without side effects:
    too little of a thickener or preservative does nothing, too much of a surfactant irritates
    or an emulsifier makes the cream soapy. A range is experience, not a limit of law (see
    LIM01 for those).
    Fails: Xanthan Gum 3 % (typical 0.1-1 %).
    Passes: Xanthan Gum 0.5 %.
    Options: below_severity (default "info") and above_severity (default "warning"): the
    severity of each side.
    """

    code = "USE01"
    name = "use-range"
    groups = ("usage",)
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Option]] = {
        "below_severity": Option(str, "info", "severity below the use range", _SEVERITIES),
        "above_severity": Option(str, "warning", "severity above the use range", _SEVERITIES),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        for ln in formula.lines:
            low, high = ln.ingredient.p.use_min_percent, ln.ingredient.p.use_max_percent
            values: dict[str, float | str | None] = {
                "percent": ln.percent, "use_min_percent": low, "use_max_percent": high}
            span = f"{low if low is not None else 0:g}-{high if high is not None else 100:g} %"
            if high is not None and ln.percent > high + 1e-9:
                yield self.finding(
                    Severity(options["above_severity"]),
                    f"{ln.inci} {ln.percent:g} % is above its typical use range ({span})",
                    ingredients=[ln.inci], values=values,
                    advice=f"reduce {ln.inci} to {high:g} % or less, or record why more is "
                           "needed")
            elif low is not None and ln.percent < low - 1e-9:
                yield self.finding(
                    Severity(options["below_severity"]),
                    f"{ln.inci} {ln.percent:g} % is below its typical use range ({span})",
                    ingredients=[ln.inci], values=values,
                    advice=f"at under {low:g} % {ln.inci} may not do its job; raise it or "
                           "confirm it works at this level")
