"""A reviewer takes a realistic sun lotion from its strict-profile errors to none, through the
command line alone, by recording evidence: sources, supplier values, verified values, a supplier
blend's constituents, toxicology records and a sun care exposure row.

The formula belongs to Larkspur Bench Laboratories (an invented lab). Every supplier document,
point of departure, absorption figure and supplier value below is invented test data, cited as
such in the sources the test adds; the exposure figures (18 g/day, 300 mg/kg bw/day) are the
SCCS Notes of Guidance sunscreen figures as recalled (from memory, like the seed's row). The
outside checks are the arithmetic: SED = E_product x C/100 x DAp/100 (SCCS NoG 12th rev.,
section 3-3) and Griffin's additivity for the blend (0.5 x 3.8 + 0.5 x 18.8 = 11.3).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.helpers import run_formdb

pytestmark = pytest.mark.slow

FORMULA = """
name = "Larkspur sun lotion SPF 20, draft 2"
category = "leave-on"
product = "sun lotion"
intended_type = "O/W"
ph = 6.0

[[ingredients]]
inci = "Aqua"
percent = 70.7
[[ingredients]]
inci = "Glycerin"
percent = 3.0
[[ingredients]]
inci = "Caprylic/Capric Triglyceride"
percent = 8.0
[[ingredients]]
inci = "Ethylhexyl Methoxycinnamate"
percent = 7.5
[[ingredients]]
inci = "Butyl Methoxydibenzoylmethane"
percent = 3.0
[[ingredients]]
inci = "Cetearyl Alcohol"
percent = 2.0
[[ingredients]]
inci = "Glyceryl Stearate (and) PEG-100 Stearate"
percent = 5.0
[[ingredients]]
inci = "Phenoxyethanol"
percent = 0.8
"""
BLEND = "Glyceryl Stearate (and) PEG-100 Stearate"
SUPPLIER = ["--set", "supplier=Larkspur test supplier", "--set", "issued=2026-10-01"]


def _run(url: str, *args: str) -> str:
    result = run_formdb(["--db", url, *args])
    assert result.exit_code == 0, (args, result.stderr)
    return result.stdout


def _errors(url: str, formula: Path) -> list[dict[str, object]]:
    result = run_formdb(["--db", url, "check", str(formula), "--profile", "strict",
                         "--format", "json"])
    assert result.exit_code in (0, 1), result.stderr
    findings = json.loads(result.stdout)["findings"]
    errors = [f for f in findings if f["severity"] == "error"]
    assert result.exit_code == (1 if errors else 0)
    return errors


def _rules(errors: list[dict[str, object]]) -> set[str]:
    return {str(e["rule"]) for e in errors}


def test_a_reviewer_clears_the_strict_errors_with_evidence(seeded_sqlite_url: str,
                                                           tmp_path: Path) -> None:
    url = seeded_sqlite_url
    formula = tmp_path / "sun-lotion.toml"
    formula.write_text(FORMULA, encoding="utf-8")

    # the lab's product type and the supplier blend are not in the library yet
    first = run_formdb(["--db", url, "check", str(formula), "--profile", "strict"])
    assert first.exit_code == 2 and "sun lotion" in first.stderr
    _run(url, "source", "add", "larkspur-nog12-copy", "--kind", "handbook", "--citation",
         "SCCS Notes of Guidance 12th revision, SCCS/1647/22, as the reviewer's copy gives it "
         "(test data)", "--set", "edition=12th revision", "--set", "table_ref=Table 3A")
    _run(url, "exposure", "add", "sun lotion", "--set", "category=leave-on",
         "--set", "amount_g_day=18", "--set", "amount_mg_kg_bw_day=300",
         "--set", "retention_factor=1", "--set", "exposure_g_day=18",
         "--set", "exposure_mg_kg_bw_day=300", "--set", "source=larkspur-nog12-copy")
    _run(url, "ingredient", "add", BLEND, "--role", "emulsifier", "--reason", "supplier blend")

    errors = _errors(url, formula)
    assert len(errors) >= 8
    assert {"EVD01", "GAP01", "MOS01"} <= _rules(errors)

    # one supplier data sheet per raw material, a certificate for the blend, the opinions read
    for key, what in (("tds-ehmc", "ethylhexyl methoxycinnamate"),
                      ("tds-bmdbm", "butyl methoxydibenzoylmethane"),
                      ("tds-cct", "caprylic/capric triglyceride"),
                      ("tds-cetearyl", "cetearyl alcohol"), ("tds-glycerin", "glycerin"),
                      ("tds-phenoxy", "phenoxyethanol")):
        _run(url, "source", "add", key, "--kind", "supplier data sheet", "--citation",
             f"Technical data sheet, {what} (invented test document)", *SUPPLIER,
             "--set", f"document=TDS {key}")
    _run(url, "source", "add", "coa-blend", "--kind", "certificate of analysis", "--citation",
         f"Certificate of analysis, {BLEND} (invented test document)", *SUPPLIER,
         "--set", "document=CoA-SE-88", "--set", "lot=L-2026-114")
    _run(url, "source", "add", "tox-read", "--kind", "peer-reviewed publication", "--citation",
         "Toxicology of the UV filters as read by the reviewer (invented test citation)")

    # values the library recalled from memory, confirmed against the sheets without retyping
    for name, key, props in (
            ("Butyl Methoxydibenzoylmethane", "tds-bmdbm", ["solubility"]),
            ("Ethylhexyl Methoxycinnamate", "tds-ehmc", ["solubility", "density"]),
            ("Caprylic/Capric Triglyceride", "tds-cct",
             ["solubility", "density", "viscosity_mpas"]),
            ("Cetearyl Alcohol", "tds-cetearyl", ["required_hlb_ow", "solubility", "density"]),
            ("Glycerin", "tds-glycerin", ["solubility", "density", "viscosity_mpas"]),
            ("Phenoxyethanol", "tds-phenoxy", ["solubility", "density", "ph_min", "ph_max"])):
        values = [arg for prop in props for arg in ("--value", prop)]
        _run(url, "ingredient", "verify", name, *values, "--source", key,
             "--reason", "checked against the supplier's data sheet")
    # the preservative's margin of safety rests on the seed's point of departure, recalled from
    # memory: an open item too until the reviewer reads the opinion it comes from
    assert any("margin of safety rests on" in e["message"] for e in _errors(url, formula)
               if e["rule"] == "EVD01")
    _run(url, "toxicology", "edit", "phenoxyethanol-noael-rat-oral", "--set", "source=tox-read",
         "--reason", "checked against the opinion")
    assert "EVD01" not in _rules(_errors(url, formula))

    # supplier values the library lacked, each with its own source in one command
    _run(url, "ingredient", "edit", "Butyl Methoxydibenzoylmethane",
         "--set", "density=1.10@tds-bmdbm", "--set", "required_hlb_ow=11@tds-bmdbm",
         "--reason", "supplier sheet")
    _run(url, "ingredient", "edit", "Ethylhexyl Methoxycinnamate",
         "--set", "required_hlb_ow=10@tds-ehmc", "--reason", "supplier sheet")

    # the blend is its constituents: HLB computed from them, density from the certificate
    _run(url, "mixture", "set", BLEND, "--part", "Glyceryl Stearate=50",
         "--part", "PEG-100 Stearate=50", "--source", "coa-blend")
    assert "computed HLB: 11.3" in _run(url, "mixture", "show", BLEND)
    _run(url, "ingredient", "edit", BLEND, "--set", "density=0.97@coa-blend",
         "--reason", "certificate of analysis")
    assert "GAP01" not in _rules(_errors(url, formula))

    # points of departure and absorption data for the UV filters
    for key, name in (("ehmc-noael", "Ethylhexyl Methoxycinnamate"),
                      ("bmdbm-noael", "Butyl Methoxydibenzoylmethane")):
        _run(url, "toxicology", "add", key, "--set", f"inci={name}", "--set", "pod_kind=NOAEL",
             "--set", "pod_value=450", "--set", "pod_unit=mg/kg bw/day", "--set", "route=oral",
             "--set", "species=rat", "--set", "duration=90 days",
             "--set", "study=invented test study", "--set", "source=tox-read")
    left = _errors(url, formula)
    assert _rules(left) == {"MOS01"}  # the default 50 % dermal absorption: MoS below 100
    for key in ("ehmc-noael", "bmdbm-noael"):
        _run(url, "toxicology", "edit", key, "--set", "dermal_absorption_percent=2",
             "--set", "dermal_absorption_source=tox-read",
             "--set", "oral_bioavailability_percent=100",
             "--set", "oral_bioavailability_source=tox-read", "--reason", "absorption read")

    assert _errors(url, formula) == []
    final = run_formdb(["--db", url, "check", str(formula), "--profile", "strict",
                        "--format", "json"])
    assert final.exit_code == 0
    # SED of ethylhexyl methoxycinnamate = 300 x 7.5/100 x 2/100 = 0.45 mg/kg bw/day
    assert "0.45" in final.stdout
    history = _run(url, "ingredient", "history", "Glycerin")
    assert "verify" in history and "supplier" in history
