"""EVD01 names only the library values a verdict rests on (FormulaFacts.values_read), on the
shipped seed library under the strict profile. The seed grades Paraffinum Liquidum's (Mineral
Oil's) required HLB for W/O and both of Petrolatum's required HLB values "from memory"; the HLB
section works out both types' required HLB, but the balance verdict uses the working type's.
The formulas are invented."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from formdb import api
from formdb.schemas.findings import Finding


@pytest.fixture(scope="module")
def library(tmp_path_factory: pytest.TempPathFactory) -> Iterator[api.Library]:
    lib = api.create_library(str(tmp_path_factory.mktemp("evd01") / "seed.sqlite"), seed=True)
    yield lib
    lib.close()


def _evd01(library: api.Library, intended: str | None,
           lines: list[tuple[str, float]]) -> dict[str, Finding]:
    """EVD01's from-memory findings by ingredient, under the strict profile."""
    head = 'name = "evd01 case"\ncategory = "leave-on"\n' + (
        f'intended_type = "{intended}"\n' if intended else "")
    body = "".join(f'[[ingredients]]\ninci = "{n}"\npercent = {p}\n' for n, p in lines)
    result = api.check(library, head + body, profile="strict")
    return {f.ingredients[0]: f for f in result.findings
            if f.rule == "EVD01" and f.values.get("evidence") == "from memory"}


def _props(finding: Finding | None) -> set[str]:
    return set(str(finding.values["properties"]).split(", ")) if finding else set()


def test_an_ow_cream_does_not_name_mineral_oils_wo_value(library: api.Library) -> None:
    found = _evd01(library, "O/W", [("Mineral Oil", 20.0), ("Polysorbate 80", 4.0),
                                    ("Sorbitan Oleate", 1.0), ("Aqua", 75.0)])
    assert "Paraffinum Liquidum" not in found  # its W/O value is its only from-memory one
    assert _props(found.get("Sorbitan Oleate")) == {"solubility"}
    assert found["Sorbitan Oleate"].severity.value == "error"


def test_a_wo_formula_still_names_the_wo_value(library: api.Library) -> None:
    found = _evd01(library, "W/O", [("Petrolatum", 20.0), ("Polysorbate 80", 1.0),
                                    ("Sorbitan Oleate", 4.0), ("Aqua", 75.0)])
    assert _props(found["Petrolatum"]) == {"required_hlb_wo"}
    assert found["Petrolatum"].severity.value == "error"


def test_a_predicted_type_counts_as_the_working_type(library: api.Library) -> None:
    # no intended type; blend HLB 9.65 and the solubility split both predict O/W
    found = _evd01(library, None, [("Petrolatum", 20.0), ("Polysorbate 80", 2.5),
                                   ("Sorbitan Oleate", 2.5), ("Aqua", 75.0)])
    # and the ends of its O/W range (7-8, the supplier booklet recalled) that widen HLB01's band
    assert _props(found["Petrolatum"]) == {"required_hlb_ow", "required_hlb_ow_low",
                                           "required_hlb_ow_high"}


def test_an_undecided_type_names_both_types_values(library: api.Library) -> None:
    # blend HLB 7.5 (between the W/O and O/W classes) against a W/O solubility split: no
    # prediction, so both required HLB values are shown and both are named
    found = _evd01(library, None, [("Petrolatum", 20.0), ("Polysorbate 80", 1.5),
                                   ("Sorbitan Oleate", 3.5), ("Aqua", 75.0)])
    assert _props(found["Petrolatum"]) == {"required_hlb_ow", "required_hlb_wo"}


def test_the_facts_record_the_values_they_read(library: api.Library) -> None:
    result = api.check(library, 'name = "x"\ncategory = "leave-on"\nintended_type = "O/W"\n'
        '[[ingredients]]\ninci = "Mineral Oil"\npercent = 20\n'
        '[[ingredients]]\ninci = "Polysorbate 80"\npercent = 5\n'
        '[[ingredients]]\ninci = "Aqua"\npercent = 75\n')
    read = {(v.ingredient, v.property) for v in result.facts.values_read}
    # the O/W need only (the W/O one is worked out, never read); solubilities that placed a
    # line (Aqua is placed by its water role); the emulsifier's ionic character; every density
    # once the dispersed fraction is worked out; the continuous phase's main viscosity (Stokes);
    # the low end of the oil's O/W range (10, below its 12), which widens HLB01's band
    assert read == {("Polysorbate 80", "hlb"), ("Paraffinum Liquidum", "required_hlb_ow"),
                    ("Paraffinum Liquidum", "required_hlb_ow_low"),
                    ("Paraffinum Liquidum", "solubility"), ("Polysorbate 80", "solubility"),
                    ("Polysorbate 80", "ionic_character"), ("Paraffinum Liquidum", "density"),
                    ("Polysorbate 80", "density"), ("Aqua", "density"),
                    ("Aqua", "viscosity_mpas")}


def test_an_hlb_that_only_decides_the_scale_is_still_read(tmp_path: Path) -> None:
    # an invented nonionic whose recalled HLB 22 is above Griffin's 20: the value alone keeps it
    # out of the blend, so a verdict rests on it; an unused W/O need of the oil is not named
    table = tmp_path / "lab.csv"
    table.write_text(
        "inci_name,roles,hlb,hlb_source,ionic_character,ionic_character_source,solubility,"
        "solubility_source\n"
        "Larkspur Test Ethoxylate,emulsifier,22,from-memory,nonionic,from-memory,water,"
        "from-memory\n", encoding="utf-8")
    lib = api.create_library(str(tmp_path / "lib.sqlite"), seed=True)
    try:
        api.import_ingredients(lib, table)
        found = _evd01(lib, "O/W", [("Mineral Oil", 20.0), ("Polysorbate 80", 4.0),
                                    ("Larkspur Test Ethoxylate", 1.0), ("Aqua", 75.0)])
    finally:
        lib.close()
    assert "hlb" in _props(found["Larkspur Test Ethoxylate"])
    assert "Paraffinum Liquidum" not in found


def test_a_soap_cream_rests_no_verdict_on_a_required_hlb(library: api.Library) -> None:
    # stearic acid neutralised by triethanolamine in the batch: the system is led by its soap,
    # so there is no HLB balance (Griffin's balance and his calculated values are for nonionic
    # surfactants: Griffin, J. Soc. Cosmet. Chem. 5 (1954) 249; a soap's value is on Davies'
    # scale); the oil phase's required HLB is shown for reference, and no band, advice or
    # EVD01 finding rests on it
    lines = [("Stearic Acid", 15.0), ("Petrolatum", 5.0), ("Triethanolamine", 1.2),
             ("Aqua", 78.8)]
    head = 'name = "soap cream"\ncategory = "leave-on"\nintended_type = "O/W"\n'
    body = "".join(f'[[ingredients]]\ninci = "{n}"\npercent = {p}\n' for n, p in lines)
    result = api.check(library, head + body, profile="strict")
    facts = result.facts
    assert facts is not None and facts.hlb_system is not None
    assert facts.hlb_system.led_by == "ionic"
    assert facts.required_hlb_ow is not None and facts.required_hlb_ow.value is not None
    assert facts.required_hlb is None and facts.target_low is None
    assert facts.blend_solution is None
    assert not [v for v in facts.values_read if v.property.startswith("required_hlb")]
    assert "required_hlb_ow" not in _props(_evd01(library, "O/W", lines).get("Petrolatum"))


def test_a_viscosity_is_named_only_for_the_continuous_phases_main_ingredient(
        library: api.Library) -> None:
    # the seed grades Glycerin's viscosity "from memory"; Stokes' creaming speed reads the
    # viscosity of the continuous phase's main ingredient alone (here Aqua), so none rests on it
    cream = _evd01(library, "O/W", [("Mineral Oil", 15.0), ("Polysorbate 80", 4.0),
                                    ("Sorbitan Oleate", 1.0), ("Glycerin", 10.0),
                                    ("Aqua", 70.0)])
    assert "viscosity_mpas" not in _props(cream.get("Glycerin"))
    # with Glycerin the main part of the water phase, the creaming speed is worked from it
    syrup = _evd01(library, "O/W", [("Mineral Oil", 15.0), ("Polysorbate 80", 4.0),
                                    ("Sorbitan Oleate", 1.0), ("Glycerin", 45.0),
                                    ("Aqua", 35.0)])
    assert "viscosity_mpas" in _props(syrup["Glycerin"])


def test_ph_windows_are_named_only_when_the_formula_states_a_ph(library: api.Library) -> None:
    # the seed grades Phenoxyethanol's working pH range "from memory"; PH01 compares it only
    # with a stated pH (without one it says the ranges could not be checked)
    lines = [("Mineral Oil", 15.0), ("Polysorbate 80", 4.0), ("Sorbitan Oleate", 1.0),
             ("Phenoxyethanol", 1.0), ("Aqua", 79.0)]
    without_ph = _evd01(library, "O/W", lines)
    assert not {"ph_min", "ph_max"} & _props(without_ph.get("Phenoxyethanol"))
    body = "".join(f'[[ingredients]]\ninci = "{n}"\npercent = {p}\n' for n, p in lines)
    result = api.check(library, 'name = "with a pH"\ncategory = "leave-on"\n'
                       'intended_type = "O/W"\nph = 5.5\n' + body, profile="strict")
    named = [f for f in result.findings if f.rule == "EVD01"
             and f.ingredients[0] == "Phenoxyethanol" and f.values["evidence"] == "from memory"]
    assert {"ph_min", "ph_max"} <= _props(named[0] if named else None)


def test_an_hld_worked_out_names_the_eacn_and_cc_it_rests_on(library: api.Library) -> None:
    # the seed's only EACN (Squalane) and Cc (Sodium Lauryl Sulfate) are from memory; with
    # sodium chloride for the salinity the ionic HLD is worked out from both, so both are named
    # (before the facts recorded these reads, neither was)
    found = _evd01(library, None, [("Squalane", 20.0), ("Sodium Lauryl Sulfate", 2.0),
                                   ("Sodium Chloride", 1.0), ("Aqua", 77.0)])
    assert "eacn" in _props(found["Squalane"])
    assert "hld_cc" in _props(found["Sodium Lauryl Sulfate"])
    # without the salt no HLD is worked out, and neither value is read
    none = _evd01(library, None, [("Squalane", 20.0), ("Sodium Lauryl Sulfate", 2.0),
                                  ("Aqua", 78.0)])
    assert "eacn" not in _props(none.get("Squalane"))
    assert "hld_cc" not in _props(none.get("Sodium Lauryl Sulfate"))


def test_the_soap_formed_in_the_batch_is_named_for_the_values_read_from_it(
        library: api.Library) -> None:
    # the seed grades TEA-Stearate's solubility "from memory" (its sodium and potassium soaps
    # cite McBain and Sierichs 1948); the soap formed from stearic acid and triethanolamine is
    # placed on the water side by it, so the O/W it favours rests on it, though no line names it
    found = _evd01(library, "O/W", [("Stearic Acid", 15.0), ("Petrolatum", 5.0),
                                    ("Triethanolamine", 1.2), ("Aqua", 78.8)])
    assert _props(found["TEA-Stearate"]) == {"solubility"}
    assert "(the soap formed in the batch)" in found["TEA-Stearate"].message
    # with no base there is no soap, and nothing is read from its record
    acid_only = _evd01(library, "O/W", [("Stearic Acid", 15.0), ("Petrolatum", 5.0),
                                        ("Polysorbate 80", 3.0), ("Aqua", 77.0)])
    assert "TEA-Stearate" not in acid_only


def test_a_margin_of_safety_names_the_unverified_point_of_departure_it_rests_on(
        library: api.Library) -> None:
    # the seed's one toxicology record, Phenoxyethanol's NOAEL 357 mg/kg bw/day, cites
    # "from-memory"; a hand cream's margin of safety is worked out from it, so under the strict
    # profile it is an open item (an error), as a from-memory HLB would be
    lines = [("Mineral Oil", 15.0), ("Polysorbate 80", 4.0), ("Sorbitan Oleate", 1.0),
             ("Phenoxyethanol", 0.8), ("Aqua", 79.2)]
    body = "".join(f'[[ingredients]]\ninci = "{n}"\npercent = {p}\n' for n, p in lines)
    result = api.check(library, 'name = "hand cream"\ncategory = "leave-on"\n'
                       'product = "hand cream"\nintended_type = "O/W"\n' + body,
                       profile="strict")
    assert result.facts is not None and result.facts.exposure is not None
    assert [m.inci for m in result.facts.exposure.lines] == ["Phenoxyethanol"]
    named = [f for f in result.findings if f.rule == "EVD01"
             and "margin of safety" in f.message]
    assert len(named) == 1 and named[0].severity.value == "error"
    assert named[0].values["properties"] == "point of departure (NOAEL 357 mg/kg bw/day)"
    assert "phenoxyethanol-noael-rat-oral" in (named[0].advice or "")
    # no product type, no exposure sheet: no margin is worked out and nothing is named
    plain = api.check(library, 'name = "no product"\ncategory = "leave-on"\n'
                      'intended_type = "O/W"\n' + body, profile="strict")
    assert not [f for f in plain.findings if f.rule == "EVD01"
                and "margin of safety" in f.message]
