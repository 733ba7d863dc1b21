"""The registry (duplicates rejected) and the documentation shape of every rule."""

from __future__ import annotations

import re

import pytest

from formdb.errors import ConfigError
from formdb.rules.base import DOC_SECTIONS, Option, Rule, rule_doc
from formdb.rules.registry import RuleRegistry, default_registry
from formdb.schemas.vocab import Severity

EXPECTED_CODES = {"ALK01", "ALK02", "BAL01", "EMU01", "HLB01", "TYP01", "PAK01", "ION01", "LIM01",
                  "LIM02", "LIM03", "LIM04", "LIM05",
                  "PH01", "USE01", "GAP01", "MOS01", "ALG01", "EVD01",
                  "HLD01", "MIX01", "RET01"}


class _First(Rule):
    """A test rule.

    Flags: nothing. Why: a test. Fails: never. Passes: always. Options: none.
    """

    code = "TST01"
    name = "first"
    groups = ("test",)
    default_severity = Severity.INFO

    def check(self, formula, facts, reference, options):  # type: ignore[no-untyped-def]
        return ()


class _SameCode(_First):
    name = "second"


class _SameName(_First):
    code = "TST02"


def test_registry_rejects_a_duplicate_code() -> None:
    registry = RuleRegistry()
    registry.add(_First)
    with pytest.raises(ConfigError, match=r"rule code 'TST01'.*already taken by _First"):
        registry.add(_SameCode)
    assert len(registry) == 1


def test_registry_rejects_a_duplicate_name() -> None:
    registry = RuleRegistry()
    registry.add(_First)
    with pytest.raises(ConfigError, match="rule name 'first'"):
        registry.add(_SameName)


def test_registering_a_builtin_code_again_fails() -> None:
    registry = default_registry()
    clash = type("Clash", (_First,), {"code": "HLB01", "name": "clash"})
    with pytest.raises(ConfigError, match="HLB01"):
        registry.add(clash)


def test_unknown_rule_gets_did_you_mean() -> None:
    with pytest.raises(ConfigError, match=r"unknown rule 'HLB1' \(did you mean 'HLB01'\?\)"):
        default_registry().get("HLB1")
    assert default_registry().get("hlb-balance").code == "HLB01"


def test_the_builtin_rules() -> None:
    registry = default_registry()
    assert set(registry.codes()) == EXPECTED_CODES
    for rule in registry.rules():
        assert re.fullmatch(r"[A-Z]{2,4}\d{2}", rule.code)
        assert re.fullmatch(r"[a-z]+(-[a-z]+)*", rule.name)
        assert rule.groups and isinstance(rule.default_severity, Severity)
        for key, option in rule.options.items():
            assert isinstance(option, Option) and option.description
            assert option.parse(option.default, f"{rule.code}.{key}") == option.default


@pytest.mark.parametrize("code", sorted(EXPECTED_CODES))
def test_docstring_has_every_section(code: str) -> None:
    doc = rule_doc(default_registry().get(code))
    assert doc.summary, f"{code}: no one-line summary"
    assert doc.missing() == (), f"{code}: docstring lacks {', '.join(doc.missing())}"
    for section in DOC_SECTIONS:
        assert len(doc.sections[section]) > 3


def test_a_missing_section_is_detected() -> None:
    class Undocumented(_First):
        """Says what it does.

        Flags: something.
        Why: because.
        Fails: this.
        Options: none.
        """

    assert rule_doc(Undocumented).missing() == ("Passes",)
