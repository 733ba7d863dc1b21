"""What a report says about one formula, as formatted strings: one model for text and HTML.

Building the sections here once means the text and HTML reports show the same facts in the same
order with the same wording and units; the renderers only decide how they look.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

from formdb.report import numbers as n
from formdb.report.blocks import Line, Section
from formdb.report.chart import HlbChart, hlb_chart
from formdb.report.safety import allergen_section, exposure_section, substance_section
from formdb.report.sections import (
    data_gaps_section,
    hlb_section,
    hld_section,
    interface_section,
    packing_section,
    phases_section,
    prediction_section,
)
from formdb.schemas.findings import Finding
from formdb.schemas.result import CheckResult
from formdb.schemas.vocab import Severity

SEVERITY_TITLES: dict[Severity, str] = {
    Severity.ERROR: "Errors",
    Severity.WARNING: "Warnings",
    Severity.INFO: "Information",
}


@dataclass(frozen=True)
class FindingView:
    code: str
    name: str
    severity: str
    message: str
    ingredients: str
    advice: str


@dataclass(frozen=True)
class FindingGroup:
    severity: Literal["error", "warning", "info"]
    title: str
    items: tuple[FindingView, ...]


@dataclass(frozen=True)
class FormulaView:
    title: str
    header: tuple[Line, ...]
    verdict: str
    verdict_flag: str
    sections: tuple[Section, ...]
    findings: tuple[FindingGroup, ...]
    chart: HlbChart
    counts: dict[str, int] = field(default_factory=dict)


def _finding_view(finding: Finding) -> FindingView:
    return FindingView(code=finding.rule, name=finding.name, severity=finding.severity.value,
                       message=finding.message, ingredients=", ".join(finding.ingredients),
                       advice=finding.advice or "")


def finding_groups(findings: tuple[Finding, ...]) -> tuple[FindingGroup, ...]:
    """Findings grouped by severity, most severe first; empty groups left out."""
    groups = []
    for severity, title in SEVERITY_TITLES.items():
        items = tuple(_finding_view(f) for f in findings if f.severity == severity)
        if items:
            groups.append(FindingGroup(severity.value, f"{title} ({len(items)})",
                                       items))
    return tuple(groups)


def verdict(counts: dict[str, int]) -> tuple[str, str]:
    """A one-line summary of the findings and its flag (bad, warn, ok)."""
    text = (f"{n.count(counts['error'], 'error')}, {n.count(counts['warning'], 'warning')}, "
            f"{n.count(counts['info'], 'note')}")
    if counts["error"]:
        return text + ": fix the errors before a lab batch", "bad"
    if counts["warning"]:
        return text + ": no errors; review the warnings", "warn"
    return text + ": no errors", "ok"


def _or_not_stated(value: object) -> str:
    return "not stated" if value is None else str(getattr(value, "value", value))


def _kind_text(result: CheckResult) -> str:
    kind = result.facts.kind
    if kind is None:
        return "not recognised"
    hipe = ", high internal phase" if kind.high_internal_phase else ""
    return f"{kind.kind}{hipe} ({kind.source}: {kind.reason})"


def _is_emulsion(result: CheckResult) -> bool:
    kind = result.facts.kind
    return kind is None or kind.kind in ("emulsion", "soap cream")


def header_lines(result: CheckResult) -> tuple[Line, ...]:
    facts = result.facts
    return (
        Line("Source", result.source),
        Line("Category", result.category.value),
        Line("Product type", _or_not_stated(result.product)),
        Line("Intended type", _or_not_stated(result.intended_type)),
        Line("Product kind", _kind_text(result)),
        Line("pH", "not stated" if result.ph is None else f"{result.ph:g}"),
        Line("Profile", f"{result.profile.name} (version {result.profile.version})"),
        Line("Total of the lines", n.percent(facts.percent_total)),
        Line("Content hash", f"SHA-256 {result.content_hash[:16]}…"),
        Line("Basis", facts.basis),
    )


def formula_view(result: CheckResult) -> FormulaView:
    """Every section of the report on one formula, in reading order."""
    counts = result.severity_counts()
    text, flag = verdict(counts)
    facts = result.facts
    emulsion = _is_emulsion(result)  # other kinds get only the sections that apply to them
    sections = tuple(s for s in (
        phases_section(facts, with_hlb=emulsion), substance_section(facts),
        hlb_section(facts) if emulsion else None,
        prediction_section(result) if emulsion else None,
        hld_section(facts) if emulsion else None,
        packing_section(facts) if emulsion else None,
        interface_section(facts) if emulsion else None, exposure_section(facts),
        allergen_section(facts), data_gaps_section(facts)) if s is not None)
    return FormulaView(title=result.formula, header=header_lines(result), verdict=text,
                       verdict_flag=flag, sections=sections,
                       findings=finding_groups(result.findings), chart=hlb_chart(facts),
                       counts=counts)
