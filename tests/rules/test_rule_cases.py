"""The data-driven rule cases: tests/rules/cases/<CODE>.toml, one harness for every rule.

Each case is a mini-formula built from tests/rules/library.toml, run through the engine with a
profile holding only that rule (plus the case's options), and compared with the findings the
case expects: severity, ingredients, the key numbers (to the precision they are written with)
and, optionally, words of the message and of the advice. ``[case.facts]`` checks facts by
dotted path. The source of each expected number is named beside it in the case file.
``pytest -k HLB01`` selects a rule.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path
from typing import Any

import pytest

from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, RuleSettings
from formdb.rules.registry import default_registry
from formdb.schemas.findings import Finding
from formdb.schemas.result import CheckResult
from tests.rules.library import formula, lists_reference, reference

CASES_DIR = Path(__file__).resolve().parent / "cases"


def _case_files() -> list[tuple[str, dict[str, Any]]]:
    out = []
    for path in sorted(CASES_DIR.glob("*.toml")):
        data = tomllib.loads(path.read_text(encoding="utf-8"))
        assert data.get("rule") == path.stem, f"{path.name}: rule = {path.stem!r} expected"
        out.append((path.stem, data))
    return out


def _params() -> list[Any]:
    params = []
    for code, data in _case_files():
        params.extend(pytest.param(code, case, id=f"{code}-{case['name']}")
                      for case in data["case"])
    return params


def _tolerance(expected: float) -> float:
    """Half a unit in the last digit the expected value is written with (0.508 -> 0.0005)."""
    text = repr(float(expected))
    if "e" in text:
        mantissa, exponent = text.split("e")
        decimals = len(mantissa.split(".")[1]) if "." in mantissa else 0
        return 0.5 * 10 ** (int(exponent) - decimals)
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 0.5 * 10 ** (-decimals)


def _same(actual: Any, expected: Any) -> bool:
    if expected == "null":  # TOML has no null
        return actual is None
    if isinstance(expected, bool) or expected is None:
        return actual == expected
    if isinstance(expected, int | float):
        if isinstance(actual, str) or actual is None:
            return False
        return math.isclose(float(actual), float(expected), rel_tol=0,
                            abs_tol=_tolerance(expected) + 1e-12)
    if isinstance(expected, list):
        return isinstance(actual, list | tuple) and len(actual) == len(expected) and all(
            _same(a, e) for a, e in zip(actual, expected, strict=True))
    return getattr(actual, "value", actual) == expected


def _matches(finding: Finding, expected: dict[str, Any]) -> bool:
    if finding.severity.value != expected["severity"]:
        return False
    if set(finding.ingredients) != set(expected.get("ingredients", [])):
        return False
    for key, value in expected.get("values", {}).items():
        if key not in finding.values or not _same(finding.values[key], value):
            return False
    words = expected.get("message", "")
    advice = expected.get("advice", "")
    return words.casefold() in finding.message.casefold() and \
        advice.casefold() in (finding.advice or "").casefold()


def _dig(obj: Any, path: str) -> Any:
    for part in path.split("."):
        obj = obj[int(part)] if part.isdigit() else getattr(obj, part)
    return obj


def run_case(code: str, case: dict[str, Any]) -> CheckResult:
    options = case.get("options", {})
    rules = {code: RuleSettings(options=options)} if options else {}
    profile = Profile(name=f"case {code}", version="0", select=(code,), rules=rules)
    mini = formula(case["name"], case["lines"], **case.get("formula", {}))
    # "lists = true": the hand-written annex entries of lists.toml are in force (LIM03, LIM04);
    # "read_differently": the labels of entries whose stored reading an older formdb made (LIM05)
    given = lists_reference() if case.get("lists") else reference()
    if case.get("read_differently"):
        given = given.model_copy(
            update={"read_differently": frozenset(case["read_differently"])})
    return check_resolved(mini, given, profile)


@pytest.mark.parametrize(("code", "case"), _params())
def test_rule_case(code: str, case: dict[str, Any]) -> None:
    result = run_case(code, case)
    for path, expected in case.get("facts", {}).items():
        actual = _dig(result.facts, path)
        assert _same(actual, expected), f"facts.{path}: {actual!r}, expected {expected!r}"
    actual = list(result.findings)
    assert all(f.rule == code for f in actual)
    expected_findings = case.get("findings", [])
    shown = "\n".join(f"  {f.severity.value} {f.ingredients} {f.values} {f.message}"
                      for f in actual)
    assert len(actual) == len(expected_findings), \
        f"{len(actual)} findings, expected {len(expected_findings)}:\n{shown}"
    unmatched = list(actual)
    for expected in expected_findings:
        hit = next((f for f in unmatched if _matches(f, expected)), None)
        assert hit is not None, f"no finding matches {expected}; got:\n{shown}"
        unmatched.remove(hit)
        assert hit.advice, f"{code} finding without advice: {hit.message}"


def test_every_rule_has_passing_and_failing_cases() -> None:
    files = dict(_case_files())
    for rule in default_registry().rules():
        assert rule.code in files, f"no tests/rules/cases/{rule.code}.toml"
        cases = files[rule.code]["case"]
        assert any(not c.get("findings") for c in cases), f"{rule.code}: no passing case"
        assert any(c.get("findings") for c in cases), f"{rule.code}: no failing case"
        names = [c["name"] for c in cases]
        assert len(names) == len(set(names)), f"{rule.code}: duplicate case names"


def test_harness_rejects_a_wrong_expectation() -> None:
    """The harness itself can fail: a case expecting the wrong severity does not match."""
    case = {"name": "wrong", "lines": [["Water", 70.0], ["Paraffinum Liquidum", 20.0],
                                       ["Polysorbate 80", 5.0]],
            "findings": [{"severity": "info", "ingredients": ["Water"]}]}
    with pytest.raises(AssertionError):
        test_rule_case("BAL01", case)
