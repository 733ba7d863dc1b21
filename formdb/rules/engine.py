"""The engine: one resolved formula, the reference data, a profile -> a CheckResult. Pure.

The facts are worked out once; every enabled rule that applies to the formula's kind of product
(``Rule.kinds``) reads them with the formula and returns its
findings; a profile's severity override for a rule applies to all of that rule's findings.
"""

from __future__ import annotations

from formdb.facts import compute_facts
from formdb.rules.profiles import Profile
from formdb.rules.registry import RuleRegistry, default_registry
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import CheckResult, ProfileRef, sort_findings


def check_resolved(formula: ResolvedFormula, reference: ReferenceData, profile: Profile,
                   registry: RuleRegistry | None = None) -> CheckResult:
    """Check one resolved formula against a profile; no database, no I/O."""
    registry = registry or default_registry()
    facts = compute_facts(formula, reference, profile.facts_settings(registry))
    findings: list[Finding] = []
    for rule in profile.enabled_rules(registry):
        if not rule.applies_to(facts):
            continue
        options = profile.options_for(rule)
        override = profile.severity_for(rule)
        for finding in rule.check(formula, facts, reference, options):
            if finding.rule != rule.code:
                raise RuntimeError(f"rule {rule.code} returned a finding coded {finding.rule}")
            if override is not None and finding.severity != override:
                finding = finding.model_copy(update={"severity": override})
            findings.append(finding)
    body = formula.formula
    return CheckResult(
        formula=formula.name, source=formula.source, content_hash=formula.content_hash,
        category=body.category, product=body.product, intended_type=body.intended_type,
        ph=body.ph, profile=ProfileRef(name=profile.name, version=profile.version),
        facts=facts, findings=sort_findings(findings))
