"""The engine: facts once, rules of the profile, overrides, order, and the JSON contract."""

from __future__ import annotations

import json

from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, RuleSettings, load_profile
from formdb.schemas.vocab import Severity
from tests.rules.library import formula, reference

CONTRACT_KEYS = ["formula", "predicted_type", "blend_hlb", "required_hlb", "dispersed_fraction",
                 "findings"]


def _mixed():  # type: ignore[no-untyped-def]
    # over 100, an anionic-cationic clash, benzoate above its pH, squalane without rHLB
    return formula("Larkspur mixed draft", [
        ("Water", 70.0), ("Squalane", 20.0), ("Sodium Lauryl Sulfate", 3.0),
        ("Cetrimonium Chloride", 2.0), ("Sodium Benzoate", 0.4), ("Polysorbate 80", 5.0)],
        intended_type="O/W", ph=6.0)


def test_findings_sorted_by_severity_then_rule() -> None:
    result = check_resolved(_mixed(), reference(), load_profile())
    keys = [(-f.severity.rank, f.rule) for f in result.findings]
    assert keys == sorted(keys)
    rules = {f.rule for f in result.findings}
    assert {"BAL01", "ION01", "PH01", "GAP01"} <= rules
    assert result.has_errors
    assert result.findings[0].severity == Severity.ERROR


def test_strict_severity_override_applies_to_every_finding_of_the_rule() -> None:
    default = check_resolved(_mixed(), reference(), load_profile("default"))
    strict = check_resolved(_mixed(), reference(), load_profile("strict"))
    gaps_default = [f for f in default.findings if f.rule == "GAP01"]
    gaps_strict = [f for f in strict.findings if f.rule == "GAP01"]
    assert gaps_default and all(f.severity == Severity.INFO for f in gaps_default)
    assert len(gaps_strict) == len(gaps_default)
    assert all(f.severity == Severity.ERROR for f in gaps_strict)
    assert strict.profile.name == "strict" and strict.facts.settings.hlb_tolerance == 0.5


def test_profile_selects_rules() -> None:
    only = Profile(name="only PH01", version="0", select=("PH01",))
    result = check_resolved(_mixed(), reference(), only)
    assert {f.rule for f in result.findings} == {"PH01"}


def test_rule_options_reach_the_rule() -> None:
    # the mixed draft totals 100.4 %: over the default 0.1, within a tolerance of 0.5
    default = Profile(name="default BAL01", version="0", select=("BAL01",))
    (finding,) = check_resolved(_mixed(), reference(), default).findings
    assert finding.values["percent_total"] == 100.4
    loose = Profile(name="loose", version="0", select=("BAL01",),
                    rules={"BAL01": RuleSettings(options={"tolerance": 0.5})})
    assert not check_resolved(_mixed(), reference(), loose).findings


def test_check_is_pure_and_repeatable() -> None:
    one = check_resolved(_mixed(), reference(), load_profile())
    two = check_resolved(_mixed(), reference(), load_profile())
    assert one == two


def test_contract_json_keys_and_values() -> None:
    result = check_resolved(formula("Larkspur lotion", [
        ("Water", 75.0), ("Paraffinum Liquidum", 20.0), ("Sorbitan Oleate", 2.5),
        ("Polysorbate 80", 2.5)], intended_type="O/W"), reference(), load_profile())
    data = result.to_contract_json()
    assert list(data)[:6] == CONTRACT_KEYS
    assert data["formula"] == "Larkspur lotion"
    assert data["predicted_type"] == "O/W"
    assert data["blend_hlb"] == 9.65  # 0.5 x 4.3 + 0.5 x 15 (Griffin additivity), 2 decimals
    assert data["required_hlb"] == 12.0
    # oil phase: mineral oil and the oil-soluble sorbitan oleate, 20/0.85 + 2.5/0.99 = 26.05 mL;
    # water phase 75/0.99705 + 2.5/1.08 = 77.54 mL; phi = 0.2515, 3 decimals
    assert data["dispersed_fraction"] == 0.252
    hlb = next(f for f in data["findings"] if f["rule"] == "HLB01")
    assert set(hlb) >= {"rule", "severity", "message", "ingredients", "values", "advice"}
    assert hlb["severity"] == "warning"
    assert hlb["ingredients"] == ["Sorbitan Oleate", "Polysorbate 80"]
    assert hlb["values"]["blend_hlb"] == 9.65
    assert data["profile"] == {"name": "default", "version": "1"}
    assert data["facts"]["blend_solution"]["percents"] == [1.4019, 3.5981]
    json.dumps(data)  # plain JSON


def test_contract_json_nulls_without_emulsifier() -> None:
    result = check_resolved(formula("no emulsifier", [
        ("Water", 75.0), ("Paraffinum Liquidum", 20.0), ("Cetyl Alcohol", 5.0)]),
        reference(), load_profile())
    data = result.to_contract_json()
    assert data["blend_hlb"] is None
    assert data["required_hlb"] is None
    assert data["dispersed_fraction"] is None
    assert data["predicted_type"] is None
    assert next(f["rule"] for f in data["findings"]) == "EMU01"
