"""``formdb rules``: every rule with its documentation and profile state; bad input exits 2."""

from __future__ import annotations

from formdb.rules.registry import default_registry
from tests.helpers import run_formdb


def test_lists_every_rule_with_its_sections() -> None:
    result = run_formdb(["rules"])
    assert result.exit_code == 0, result.stderr
    assert "Profile default (version 1)" in result.stdout
    for rule in default_registry().rules():
        state = "off" if rule.code == "EVD01" else "on"  # the default profile leaves EVD01 off
        assert f"{rule.code} {rule.name} [{state}, {rule.default_severity.value}]" in result.stdout
    for section in ("Flags:", "Why:", "Fails:", "Passes:", "Options:"):
        assert result.stdout.count(section) == len(default_registry())


def test_one_rule_in_the_strict_profile() -> None:
    result = run_formdb(["rules", "--profile", "strict", "HLB01"])
    assert result.exit_code == 0, result.stderr
    assert "HLB01 hlb-balance [on, warning]" in result.stdout
    assert "tolerance = 0.5 (default 1)" in result.stdout
    assert "BAL01" not in result.stdout


def test_severity_override_is_shown() -> None:
    result = run_formdb(["rules", "--profile", "strict", "GAP01"])
    assert "GAP01 data-gap [on, error (profile)]" in result.stdout


def test_brief_listing() -> None:
    result = run_formdb(["rules", "--brief"])
    assert result.exit_code == 0
    assert "Flags:" not in result.stdout
    assert "LIM02 exclusive-entries" in result.stdout


def test_unknown_code_is_one_error_line() -> None:
    result = run_formdb(["rules", "PAK1"])
    assert result.exit_code == 2
    assert result.stderr.count("\n") == 1
    assert result.stderr.startswith("Error: unknown rule 'PAK1' (did you mean 'PAK01'?)")


def test_unknown_profile_is_one_error_line() -> None:
    result = run_formdb(["rules", "--profile", "strcit"])
    assert result.exit_code == 2
    assert "did you mean 'strict'?" in result.stderr and "Traceback" not in result.stderr
