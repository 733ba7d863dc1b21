"""Profiles: the packaged ones, and every way a profile file can be wrong."""

from __future__ import annotations

from pathlib import Path

import pytest

from formdb.errors import ConfigError
from formdb.rules.profiles import known_profiles, load_profile
from formdb.rules.registry import default_registry
from formdb.schemas.vocab import Severity


def _rule(code: str):  # type: ignore[no-untyped-def]
    return default_registry().get(code)


def write(tmp_path: Path, text: str, name: str = "team.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_packaged_profiles() -> None:
    assert {"default", "strict"} <= set(known_profiles())
    default = load_profile()
    assert default.name == "default" and default.version and default.description
    # every rule but EVD01 (unverified values: the reviewer's strict profile checks those)
    assert {r.code for r in default.enabled_rules()} == set(default_registry().codes()) - {"EVD01"}
    assert default.options_for(_rule("BAL01"))["tolerance"] == 0.1
    assert default.options_for(_rule("HLB01"))["tolerance"] == 1.0
    assert default.severity_for(_rule("GAP01")) is None
    assert default.facts_settings().hlb_tolerance == 1.0


def test_strict_profile_is_tighter() -> None:
    strict = load_profile("strict")
    assert strict.name == "strict" and strict.version == "1" and strict.description
    assert strict.options_for(_rule("BAL01"))["tolerance"] == 0.01
    assert strict.options_for(_rule("HLB01"))["tolerance"] == 0.5
    assert strict.facts_settings().hlb_tolerance == 0.5
    assert strict.severity_for(_rule("GAP01")) == Severity.ERROR
    assert strict.options_for(_rule("USE01"))["above_severity"] == "error"
    assert "EVD01" in {r.code for r in strict.enabled_rules()}
    assert strict.options_for(_rule("EVD01"))["from_memory_severity"] == "error"


def test_unknown_profile_name_suggests() -> None:
    with pytest.raises(ConfigError, match=r"unknown profile 'strikt' \(did you mean 'strict'\?\)"):
        load_profile("strikt")


def test_missing_profile_file(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match="does not exist"):
        load_profile(tmp_path / "nope.toml")


def test_unknown_rule_code_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team"\nversion = "1"\n[rules.HBL01]\ntolerance = 0.5\n')
    with pytest.raises(ConfigError) as info:
        load_profile(path)
    assert "[rules.HBL01]: unknown rule" in str(info.value)
    assert "did you mean 'HLB01'?" in str(info.value)
    assert str(path) in str(info.value)


def test_unknown_option_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team"\nversion = "1"\n[rules.HLB01]\ntolerence = 0.5\n')
    with pytest.raises(ConfigError, match=r"HLB01 has no option 'tolerence' \(did you mean "
                                          r"'tolerance'\?\)"):
        load_profile(path)


def test_wrong_option_type(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team"\nversion = "1"\n[rules.HLB01]\ntolerance = "wide"\n')
    with pytest.raises(ConfigError, match="option tolerance: expected float"):
        load_profile(path)


def test_option_choice_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "t"\nversion = "1"\n[rules.USE01]\nabove_severity = "eror"\n')
    with pytest.raises(ConfigError, match=r"did you mean 'error'\?"):
        load_profile(path)


def test_unknown_severity(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "t"\nversion = "1"\n[rules.GAP01]\nseverity = "warn"\n')
    with pytest.raises(ConfigError, match=r"did you mean 'warning'\?"):
        load_profile(path)


def test_unknown_top_level_key_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team"\nversion = "1"\nselects = ["all"]\n')
    with pytest.raises(ConfigError, match=r"unknown key 'selects' \(did you mean 'select'\?\)"):
        load_profile(path)


def test_unknown_group_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team"\nversion = "1"\nselect = ["regulatroy"]\n')
    with pytest.raises(ConfigError, match=r"did you mean 'regulatory'\?"):
        load_profile(path)


def test_unknown_facts_key_suggests(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "t"\nversion = "1"\n[facts]\ndroplet_diameter = 2.0\n')
    with pytest.raises(ConfigError, match=r"did you mean 'droplet_diameter_um'\?"):
        load_profile(path)


def test_hlb_tolerance_belongs_to_hlb01(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "t"\nversion = "1"\n[facts]\nhlb_tolerance = 2.0\n')
    with pytest.raises(ConfigError, match=r"\[rules.HLB01\] tolerance"):
        load_profile(path)


def test_bad_facts_value(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "t"\nversion = "1"\n[facts]\ndroplet_diameter_um = -1\n')
    with pytest.raises(ConfigError, match="droplet_diameter_um"):
        load_profile(path)


def test_malformed_toml_names_the_file(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team\nversion = 1\n')
    with pytest.raises(ConfigError, match=r"team.toml: not valid TOML \(.*line 1"):
        load_profile(path)


@pytest.mark.parametrize("text, key", [('version = "1"\n', "name"), ('name = "t"\n', "version")])
def test_required_keys(tmp_path: Path, text: str, key: str) -> None:
    with pytest.raises(ConfigError, match=f"required key '{key}' is missing"):
        load_profile(write(tmp_path, text))


def test_select_by_group_and_exclude(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "reg"\nversion = "2"\nselect = ["regulatory", "BAL01"]\n'
                           'exclude = ["exclusive-entries"]\n')
    profile = load_profile(path)
    # MIX01 is regulatory too: a blend without constituents is one whose limits went unchecked
    assert [r.code for r in profile.enabled_rules()] == ["BAL01", "LIM01", "LIM03", "LIM04",
                                                         "LIM05", "MIX01"]
    assert profile.version == "2"


def test_extends_merges_rule_tables(tmp_path: Path) -> None:
    path = write(tmp_path, 'name = "team"\nversion = "1"\nextends = "strict"\n'
                           '[rules.HLB01]\ntolerance = 0.75\n[rules.LIM01]\njurisdiction = "UK"\n')
    profile = load_profile(path)
    assert profile.name == "team"
    assert profile.options_for(_rule("HLB01"))["tolerance"] == 0.75
    assert profile.options_for(_rule("BAL01"))["tolerance"] == 0.01  # from strict
    assert profile.severity_for(_rule("GAP01")) == Severity.ERROR  # from strict
    assert profile.options_for(_rule("LIM01"))["jurisdiction"] == "UK"


def test_extends_loop(tmp_path: Path) -> None:
    write(tmp_path, f'name = "a"\nversion = "1"\nextends = "{tmp_path}/b.toml"\n', "a.toml")
    write(tmp_path, f'name = "b"\nversion = "1"\nextends = "{tmp_path}/a.toml"\n', "b.toml")
    with pytest.raises(ConfigError, match="loops back"):
        load_profile(tmp_path / "a.toml")


@pytest.mark.parametrize("name", ["default", "strict"])
def test_every_packaged_profile_sets_the_sccs_defaults(name: str) -> None:
    """SCCS Notes of Guidance, 12th revision (SCCS/1647/22): without data, 50 % oral
    bioavailability and 50 % dermal absorption (regulatory.md section 2.1, from memory); each
    profile names the revision and the section."""
    facts = load_profile(name).facts
    assert facts.default_oral_bioavailability_percent == 50.0
    assert facts.default_dermal_absorption_percent == 50.0
    for source in (facts.oral_bioavailability_source, facts.dermal_absorption_source):
        assert "SCCS/1647/22" in source and "section" in source and "12th revision" in source
