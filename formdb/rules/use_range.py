"""USE01: an ingredient used outside its typical range."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.rules.scoping import line_purpose
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Role, Severity

_SEVERITIES = tuple(s.value for s in Severity)


@register
class UseRange(Rule):
    """An ingredient is used below or above its typical use range.

    Flags: an ingredient whose % (its total when it is on several lines, split over phases) is
    below the library's use_min_percent (info by default) or above its use_max_percent (warning
    by default). A trace, below trace_fraction (a tenth) of the range's
    low end, is not judged against the range: it is there for another purpose (a note of scent,
    a carry-over, an antioxidant for one raw material), not as a weak dose. The exception is a
    preservative: a trace of one cannot preserve, and is more often a slipped decimal point, so
    it is still reported, unless its line declares another purpose (purpose = "fragrance").
    A line that forms a soap in the batch (a fatty acid with its base) is
    judged by what stays free, and only against the top of the range: the rest became the soap
    on purpose (15 % oleic acid neutralised to sodium oleate is a soap base, not too much oil).
    Why: typical use ranges summarise where an ingredient does its job without side effects:
    too little of a thickener or preservative does nothing, too much of a surfactant irritates
    or an emulsifier makes the cream soapy. A range is experience, not a limit of law (see
    LIM01 for those). The trace threshold, a tenth of the low end, is a rule of thumb: a
    formulator who weighs in a tenth of the working dose does not mean it to do that work.
    Fails: Xanthan Gum 3 % (typical 0.1-1 %); Phenoxyethanol 0.005 % (typical 0.5-1 %: a trace
    preservative).
    Passes: Xanthan Gum 0.5 %; Parfum 0.0011 % (typical 0.1-1 %: a trace, not a weak dose).
    Options: below_severity (default "info") and above_severity (default "warning"): the
    severity of each side; trace_fraction (default 0.1): below this fraction of the range's low
    end a line is a trace and not judged (0 judges every line).
    """

    code = "USE01"
    name = "use-range"
    groups = ("usage",)
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Option]] = {
        "below_severity": Option(str, "info", "severity below the use range", _SEVERITIES),
        "above_severity": Option(str, "warning", "severity above the use range", _SEVERITIES),
        "trace_fraction": Option(float, 0.1, "below this fraction of the range's low end a "
                                             "line is a trace, not judged (preservatives "
                                             "still are)", minimum=0, maximum=1),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        stays = {lf.line_no: lf.remaining_percent for lf in facts.lines}
        groups: dict[str, list[ResolvedLine]] = {}
        for line in formula.lines:  # one ingredient over several lines is judged by its total
            groups.setdefault(name_key(line.ingredient.inci_name), []).append(line)
        for lines in groups.values():
            ing = lines[0].ingredient
            percent = sum(line.percent for line in lines)
            low, high = ing.p.use_min_percent, ing.p.use_max_percent
            left = sum(stays.get(line.line_no, line.percent) for line in lines)
            soap = abs(left - percent) > 1e-9  # part of the lines forms a soap in the batch
            inci = (ing.inci_name if len(lines) == 1
                    else f"{ing.inci_name} (lines {', '.join(str(ln.line_no) for ln in lines)})")
            values: dict[str, float | str | None] = {
                "percent": percent, "use_min_percent": low, "use_max_percent": high}
            span = f"{low if low is not None else 0:g}-{high if high is not None else 100:g} %"
            if soap:
                values["free_percent"] = left
                if high is not None and left > high + 1e-9:
                    yield self.finding(
                        Severity(options["above_severity"]),
                        f"{inci}: {left:.3g} % is left free after the soap forms, above its "
                        f"typical use range ({span})",
                        ingredients=[ing.inci_name], values=values,
                        advice=f"neutralise more of {ing.inci_name} or weigh in less, or record "
                               "why that much stays free")
                continue
            if high is not None and percent > high + 1e-9:
                yield self.finding(
                    Severity(options["above_severity"]),
                    f"{inci} {percent:g} % is above its typical use range ({span})",
                    ingredients=[ing.inci_name], values=values,
                    advice=f"reduce {ing.inci_name} to {high:g} % or less, or record why more is "
                           "needed")
            elif low is not None and percent < low - 1e-9:
                trace = percent < options["trace_fraction"] * low - 1e-12
                # a preservative the formula does not say is there for another purpose
                preservative = ing.has_role(Role.PRESERVATIVE) and all(
                    line_purpose(line, ing)[0] in (None, "preservative") for line in lines)
                if trace and not preservative:
                    continue
                if trace:
                    yield self.finding(
                        Severity(options["below_severity"]),
                        f"{inci} {percent:g} % is a trace of a preservative (under "
                        f"{options['trace_fraction']:g} x the low end of its typical use range, "
                        f"{span}): it cannot preserve at this level",
                        ingredients=[ing.inci_name], values=values,
                        advice=f"check the decimal point; if {ing.inci_name} is meant to preserve, "
                               f"use {low:g} % or more, else remove it or record why it is "
                               "there")
                    continue
                yield self.finding(
                    Severity(options["below_severity"]),
                    f"{inci} {percent:g} % is below its typical use range ({span})",
                    ingredients=[ing.inci_name], values=values,
                    advice=f"at under {low:g} % {ing.inci_name} may not do its job; raise it or "
                           "confirm it works at this level")
