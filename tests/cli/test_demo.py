"""The demo runs end to end on a fresh throwaway library and each demo formula shows its point.

The formulas belong to Larkspur Bench Laboratories, an invented lab; what is checked here is that
the checker says about each what the formula was written to show (the numbers come from the seed
library's sourced values).
"""

from __future__ import annotations

import pytest
from click.testing import CliRunner

from formdb.cli.main import cli
from formdb.report.demo import demo_summary
from formdb.services.checking.demo import run_demo


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory):
    return run_demo(keep=tmp_path_factory.mktemp("demo") / "demo.sqlite", user="test")


def _by_name(demo, fragment: str):
    return next(r for r in demo.results if fragment in r.formula)


def _codes(result, severity: str | None = None) -> set[str]:
    return {f.rule for f in result.findings if severity is None or f.severity.value == severity}


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_demo_command_exits_zero_and_prints_every_formula(tmp_path) -> None:
    result = CliRunner().invoke(cli, ["demo", "--keep", str(tmp_path / "lib.sqlite")])
    assert result.exit_code == 0, result.output
    for code in ("LB-110", "LB-205", "LB-301", "LB-412", "LB-520", "LB-630"):
        assert code in result.output
    assert "not a safety assessment" in result.output.replace("\n", " ").lower() or \
        "screening aid" in result.output.lower()


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_the_throwaway_library_is_removed_and_a_kept_one_stays(
        tmp_path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Each `formdb demo` left its 1.1 MB library in the temporary folder for good."""
    import tempfile

    scratch = tmp_path / "tmp"
    scratch.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(scratch))
    result = CliRunner().invoke(cli, ["demo"])
    assert result.exit_code == 0, result.output
    assert "removed when the demo ends" in result.output
    assert list(scratch.iterdir()) == []
    kept = tmp_path / "kept.sqlite"
    result = CliRunner().invoke(cli, ["demo", "--keep", str(kept)])
    assert result.exit_code == 0, result.output
    assert kept.is_file() and f"Demo library: {kept} (kept" in result.output


def test_demo_names_each_formula_by_its_bundled_file_not_the_install_path(demo) -> None:
    """A reader looks the formula up in the repository; site-packages paths help nobody."""
    assert [r.source for r in demo.results] == [
        f"seed_data/demo/{path.name}" for path in demo.files]


def test_sound_cream_has_no_errors_or_warnings(demo) -> None:
    result = _by_name(demo, "LB-110")
    assert _codes(result, "error") == set() and _codes(result, "warning") == set()
    assert result.facts.predicted_type.value == "O/W"


def test_cold_cream_is_water_in_oil(demo) -> None:
    result = _by_name(demo, "LB-205")
    assert result.facts.predicted_type.value == "W/O"
    assert result.facts.dispersed_phase == "water"
    assert not result.has_errors


def test_vanishing_cream_emulsifier_is_soap_formed_in_place(demo) -> None:
    result = _by_name(demo, "LB-301")
    assert "EMU01" not in _codes(result)
    soap = result.facts.soaps[0]
    assert (soap.acid, soap.base, soap.soap) == ("Stearic Acid", "Triethanolamine", "TEA-Stearate")
    # 1.2 g triethanolamine (149.19 g/mol) neutralises 1.2/149.19 mol of stearic acid
    # (284.48 g/mol): 2.288 g; computed from molar masses.
    assert soap.acid_used_percent == pytest.approx(1.2 / 149.19 * 284.48, rel=1e-3)
    assert result.facts.predicted_type.value == "O/W"


def test_body_wash_flags_the_sulfate_quaternary_clash(demo) -> None:
    result = _by_name(demo, "LB-412")
    clash = [f for f in result.findings if f.rule == "ION01" and f.severity.value == "error"]
    assert clash and {"Sodium Laureth Sulfate", "Cetrimonium Chloride"} <= set(clash[0].ingredients)


def test_body_lotion_is_over_the_benzoate_limit_as_acid(demo) -> None:
    result = _by_name(demo, "LB-520")
    over = [f for f in result.findings if f.rule == "LIM01" and f.severity.value == "error"]
    assert over and "Sodium Benzoate" in over[0].ingredients
    # Reg. (EC) 1223/2009 Annex V/1: 0.5 % as acid in leave-on; 0.8 % sodium benzoate is
    # 0.8 x 122.12/144.10 = 0.678 % benzoic acid (molar masses from the molecular formulas).
    assert "0.678" in over[0].message


def test_light_lotion_misses_its_required_hlb(demo) -> None:
    result = _by_name(demo, "LB-630")
    assert "HLB01" in _codes(result)
    solution = result.facts.blend_solution
    assert solution is not None and solution.reachable
    # Sorbitan oleate 4.3 / polysorbate 80 15.0 (Griffin; HPE6), lever rule for the required HLB
    target = result.facts.required_hlb
    x = (target - 15.0) / (4.3 - 15.0)
    assert solution.fractions[solution.emulsifiers.index("Sorbitan Oleate")] == pytest.approx(x)


def test_demo_kinds_are_recognised(demo) -> None:
    """Each demo formula is judged as the kind of product it is (issue 10): the vanishing cream
    is a soap cream with no HLB verdict (its soap is on Davies' scale), the body wash a
    surfactant solution with no emulsion sections, the creams emulsions."""
    kinds = {code: _by_name(demo, code).facts.kind.kind
             for code in ("LB-110", "LB-205", "LB-301", "LB-412", "LB-520", "LB-630")}
    assert kinds == {"LB-110": "emulsion", "LB-205": "emulsion", "LB-301": "soap cream",
                     "LB-412": "surfactant solution", "LB-520": "emulsion",
                     "LB-630": "emulsion"}
    assert "HLB01" not in _codes(_by_name(demo, "LB-301"))
    assert not {"HLB01", "TYP01", "PAK01", "EMU01"} & _codes(_by_name(demo, "LB-412"))


def test_body_lotion_pair_meets_its_oil_phase(demo) -> None:
    # glyceryl stearate in the oil phase at 3.8 (Wangpradit et al., OCL 29 (2022) 29); the
    # ceteareth-20 3.0 (15.2) + sorbitan stearate 1.5 (4.7) pair gives (45.6 + 7.05)/4.5 = 11.7
    result = _by_name(demo, "LB-520")
    assert result.facts.blend_hlb == pytest.approx(11.7)
    assert "HLB01" not in _codes(result)


def test_summary_gives_each_kind_only_its_numbers(demo) -> None:
    """The summary line names the product kind; a surfactant solution gets no emulsion type,
    HLB balance or dispersed fraction, a soap cream no HLB balance (its soap is on Davies'
    scale), an emulsion all three."""
    lines = {code: next(line for line in demo_summary(demo).splitlines() if code in line)
             for code in ("LB-110", "LB-301", "LB-412")}
    assert "O/W emulsion, blend HLB 12.4 vs required 12.4" in lines["LB-110"]
    assert "soap cream, O/W by its soap (no HLB balance)" in lines["LB-301"]
    assert "surfactant solution;" in lines["LB-412"]
    assert "blend HLB" not in lines["LB-412"] and "?" not in lines["LB-412"]
