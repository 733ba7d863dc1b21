"""What ``formdb rules`` shows: each rule's documentation and its state in a profile."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from formdb.rules.base import DOC_SECTIONS, Rule, RuleDoc, rule_doc
from formdb.rules.profiles import Profile
from formdb.rules.registry import RuleRegistry, default_registry
from formdb.schemas.vocab import Severity


@dataclass(frozen=True)
class OptionState:
    name: str
    type_name: str
    default: Any
    value: Any
    description: str


@dataclass(frozen=True)
class RuleState:
    """A rule, its documentation, and whether and how a profile runs it."""

    code: str
    name: str
    groups: tuple[str, ...]
    default_severity: Severity
    enabled: bool
    severity_override: Severity | None
    options: tuple[OptionState, ...]
    doc: RuleDoc


def rule_state(rule: Rule, profile: Profile) -> RuleState:
    values = profile.options_for(rule)
    options = tuple(OptionState(name, spec.type.__name__, spec.default, values[name],
                                spec.description) for name, spec in rule.options.items())
    return RuleState(rule.code, rule.name, tuple(rule.groups), rule.default_severity,
                     profile.is_enabled(rule), profile.severity_for(rule), options,
                     rule_doc(rule))


def describe_rules(profile: Profile, code: str | None = None,
                   registry: RuleRegistry | None = None) -> list[RuleState]:
    """Every rule (or the one named by code or name; ConfigError with a hint if unknown)."""
    registry = registry or default_registry()
    rules = [registry.get(code)] if code else list(registry.rules())
    return [rule_state(rule, profile) for rule in rules]


def _show(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return f'"{value}"'
    return f"{value:g}" if isinstance(value, float) else str(value)


def state_text(state: RuleState, brief: bool = False) -> str:
    """Plain text for one rule: a header line, then (unless brief) its documented sections."""
    on = "on" if state.enabled else "off"
    severity = state.severity_override or state.default_severity
    overridden = " (profile)" if state.severity_override else ""
    head = (f"{state.code} {state.name} [{on}, {severity.value}{overridden}] "
            f"groups: {', '.join(state.groups)}")
    if brief:
        return f"{head}\n    {state.doc.summary}"
    lines = [head, f"    {state.doc.summary}"]
    for section in DOC_SECTIONS:
        if section == "Options" and state.options:
            lines.append("  Options:")
            for opt in state.options:
                changed = "" if opt.value == opt.default else f" (default {_show(opt.default)})"
                lines.append(f"    {opt.name} = {_show(opt.value)}{changed}  [{opt.type_name}] "
                             f"{opt.description}")
            continue
        body = state.doc.sections.get(section, "").splitlines()
        lines.append(f"  {section}: {body[0] if body else ''}")
        lines.extend(f"    {extra}" for extra in body[1:])
    return "\n".join(lines)
