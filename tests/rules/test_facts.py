"""The facts worked out once per formula, checked against numbers worked by hand.

Densities are those of tests/rules/library.toml (water 0.99705 g/mL and 0.890 mPa s: CRC
Handbook / IAPWS; mineral oil 0.85: from memory; polysorbate 80 1.08: HPE6 Table VI).
"""

from __future__ import annotations

import math

import pytest

from formdb.facts import compute_facts
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.result import DEFAULT_SURFACE_EXCESS_MG_M2, FactsSettings
from formdb.science.interface import TYPICAL_SURFACE_EXCESS_MG_M2
from tests.rules.library import formula, reference

LOTION = [("Water", 75.0), ("Paraffinum Liquidum", 20.0), ("Polysorbate 80", 5.0)]


def facts_of(lines, **fields):
    return compute_facts(formula("facts", lines, **fields), reference())


def test_volume_fraction_from_weights_and_densities_by_hand() -> None:
    facts = facts_of(LOTION, intended_type="O/W")
    oil_ml = 20 / 0.85  # 23.529 mL
    water_ml = 75 / 0.99705 + 5 / 1.08  # 75.222 + 4.630 = 79.852 mL (polysorbate 80 is water-side)
    assert facts.phases.oil_volume_ml == pytest.approx(oil_ml)
    assert facts.phases.water_volume_ml == pytest.approx(water_ml)
    assert facts.dispersed_phase == "oil"
    assert facts.dispersed_fraction == pytest.approx(oil_ml / (oil_ml + water_ml))
    assert facts.dispersed_fraction == pytest.approx(0.2276, abs=5e-5)
    assert facts.phases.oil_percent == 20.0 and facts.phases.water_percent == 80.0


def test_w_o_disperses_the_water_phase() -> None:
    facts = facts_of([("Water", 80.0), ("Paraffinum Liquidum", 15.0), ("Sorbitan Oleate", 5.0)],
                     intended_type="W/O")
    water_ml, oil_ml = 80 / 0.99705, 15 / 0.85 + 5 / 0.99
    assert facts.dispersed_phase == "water"
    assert facts.dispersed_fraction == pytest.approx(water_ml / (water_ml + oil_ml))


def test_stokes_worked_example() -> None:
    # science.md section 7 (CALC from Stokes 1851): d = 2 um, mineral oil 850 kg/m3 in water
    # 997.05 kg/m3, 0.890 mPa s -> 3.60e-7 m/s creaming
    facts = facts_of([("Water", 80.0), ("Paraffinum Liquidum", 20.0)], intended_type="O/W",
                     process={"droplet_diameter_um": 2.0})
    creaming = facts.creaming
    assert creaming is not None
    assert creaming.viscosity_from == "Water"
    assert creaming.density_difference_kg_m3 == pytest.approx(147.05)
    assert creaming.velocity_m_s == pytest.approx(3.60e-7, rel=2e-3)
    assert creaming.velocity_mm_per_day == pytest.approx(3.60e-7 * 1000 * 86400, rel=2e-3)


def test_interface_at_default_droplet_and_surface_excess() -> None:
    facts = facts_of(LOTION, intended_type="O/W")
    interface = facts.interface
    assert interface is not None
    phi, d = facts.dispersed_fraction, 5e-6
    assert interface.droplet_diameter_um == 5.0 and "rule of thumb" in interface.droplet_source
    assert interface.specific_area_m2_per_ml == pytest.approx(6 * phi / d * 1e-6)  # 6 phi / d
    area = 6 * (20 / 0.85) * 1e-6 / d  # 6 V / d = 28.24 m2 per 100 g
    assert interface.area_m2 == pytest.approx(area)
    assert interface.emulsifier_needed_percent == pytest.approx(area * 2.0 / 1000)  # 2 mg/m2
    assert interface.emulsifier_present_percent == 5.0
    assert "from memory" in interface.surface_excess_source


def test_interface_uses_the_formula_process_figures() -> None:
    facts = facts_of(LOTION, intended_type="O/W",
                     process={"droplet_diameter_um": 1.0, "surface_excess_mg_m2": 3.0})
    interface = facts.interface
    assert interface is not None
    area = 6 * (20 / 0.85) * 1e-6 / 1e-6
    assert interface.area_m2 == pytest.approx(area)
    assert interface.emulsifier_needed_percent == pytest.approx(area * 3.0 / 1000)
    assert interface.droplet_source == interface.surface_excess_source == "stated in the formula"


def test_default_surface_excess_is_the_science_figure() -> None:
    assert DEFAULT_SURFACE_EXCESS_MG_M2 == TYPICAL_SURFACE_EXCESS_MG_M2
    assert FactsSettings().surface_excess_mg_m2 == TYPICAL_SURFACE_EXCESS_MG_M2


def test_soap_from_sodium_hydroxide_by_hand() -> None:
    # 0.5 g NaOH / 40.00 = 0.0125 mol (limiting); stearic acid 15 / 284.48 = 0.05273 mol;
    # sodium stearate 0.0125 x (284.48 + 40.00 - 18.015) = 3.831 g; water 0.0125 x 18.015 =
    # 0.2252 g; stearic acid left 15 - 0.0125 x 284.48 = 11.444 g
    facts = facts_of([("Water", 79.5), ("Stearic Acid", 15.0), ("Sodium Hydroxide", 0.5),
                      ("Glycerin", 5.0)])
    (soap,) = facts.soaps
    assert soap.soap == "Sodium Stearate" and soap.soap_in_library
    assert soap.limiting == "base"
    assert soap.soap_percent == pytest.approx(3.8308, abs=1e-4)
    assert soap.water_formed_percent == pytest.approx(0.22519, abs=1e-5)
    assert soap.acid_left_percent == pytest.approx(11.444, abs=1e-3)
    assert soap.hlb == 18.0  # Davies, as in the library
    stearic = next(lf for lf in facts.lines if lf.inci == "Stearic Acid")
    assert stearic.remaining_percent == pytest.approx(11.444, abs=1e-3)
    # the acid left stays in the oil phase; soap and water formed join the water phase
    assert facts.phases.oil_percent == pytest.approx(11.444, abs=1e-3)
    assert facts.phases.water_percent == pytest.approx(79.5 + 5.0 + 3.8308 + 0.22519, abs=1e-3)
    assert facts.percent_total == pytest.approx(100.0)


def test_vanishing_cream_soap_is_the_only_emulsifier() -> None:
    facts = facts_of([("Water", 72.8), ("Stearic Acid", 18.0), ("Triethanolamine", 1.2),
                      ("Glycerin", 8.0)])
    (emulsifier,) = facts.emulsifiers
    assert emulsifier.inci == "TEA-Stearate" and emulsifier.formed_in_place
    assert emulsifier.share == 1.0 and emulsifier.side == "water"
    assert facts.predicted_type.value == "O/W"
    # required HLB: only the 15.71 % stearic acid left counts (rHLB 15, OCL 2022 Table 4)
    assert facts.required_hlb_ow.value == pytest.approx(15.0)
    assert facts.required_hlb_ow.covered_percent == pytest.approx(15.712, abs=1e-3)
    assert facts.soaps[0].classes == ("carboxylate soap",)


def test_cold_cream_divalent_soap_oil_side_and_oxide_in_neither_phase() -> None:
    facts = facts_of([("Paraffinum Liquidum", 35.0), ("Cera Alba", 10.0), ("Oleic Acid", 5.0),
                      ("Magnesium Oxide", 0.5), ("Water", 49.5)])
    (soap,) = facts.soaps
    assert not soap.soap_in_library and soap.cation_valence == 2
    assert soap.favours.value == "W/O"
    assert facts.type_by_bancroft.value == "W/O" and facts.type_by_hlb is None
    assert facts.oil_side_emulsifier_percent == pytest.approx(5.197, abs=1e-3)
    # the oleic acid is used up; its soap counts with the oil phase
    assert facts.phases.oil_percent == pytest.approx(35 + 10 + 5.197, abs=1e-3)
    assert facts.phases.neither == ("Magnesium Oxide",)
    assert facts.phases.other_percent == pytest.approx(0.1433, abs=1e-4)
    assert any("Magnesium Oxide" in note for note in facts.notes)
    # no library soap, so no HLB; none is asked for: a soap is never averaged into the blend HLB
    # (Davies' scale), and its type comes from its cation's valence
    assert soap.hlb is None and "hlb" not in {g.property for g in facts.gaps}


def test_required_hlb_of_ocl_2022_f1_and_the_co_emulsifier_note() -> None:
    # Wangpradit et al., OCL 29 (2022) 29, Table 4: required HLB 10.33 of a 34 % oil phase
    facts = facts_of([("Cera Alba", 1.5), ("Isopropyl Myristate", 7.5), ("Glyceryl Stearate", 7.5),
                      ("Stearic Acid", 12.5), ("Amesiodendron Chinense Seed Oil", 5.0),
                      ("Polysorbate 80", 1.64), ("Sorbitan Stearate", 1.36), ("Water", 63.0)],
                     intended_type="O/W")
    assert facts.required_hlb == pytest.approx(10.33, abs=5e-3)
    assert facts.required_hlb_ow.members_percent == pytest.approx(34.0)
    assert facts.co_emulsifiers == ("Glyceryl Stearate",)
    assert [e.inci for e in facts.emulsifiers] == ["Polysorbate 80", "Sorbitan Stearate"]
    assert any("Glyceryl Stearate" in note and "3.8" in note for note in facts.notes)
    solution = facts.blend_solution
    assert solution is not None and solution.reachable
    assert solution.percents == pytest.approx((1.64, 1.36), abs=5e-3)  # Table 5
    # W/O required HLB: only beeswax has a W/O value (5) and glyceryl stearate stands in (3.8)
    assert set(facts.required_hlb_wo.missing) == {"Isopropyl Myristate", "Stearic Acid",
                                                  "Amesiodendron Chinense Seed Oil"}


def test_oil_without_required_hlb_is_named() -> None:
    facts = facts_of([("Water", 70.0), ("Paraffinum Liquidum", 15.0), ("Squalane", 10.0),
                      ("Polysorbate 80", 5.0)], intended_type="O/W")
    assert facts.required_hlb_ow.value == pytest.approx(12.0)  # over the mineral oil only
    assert facts.required_hlb_ow.missing == ("Squalane",)
    assert facts.required_hlb_ow.covered_percent == 15.0
    # 15 of 25 % of the oil phase (60 %) is below the 80 % coverage threshold (rule of thumb):
    # no working required HLB, so no balance verdict and no ratio advice, only the gap
    assert facts.required_hlb_coverage == pytest.approx(0.6)
    assert facts.required_hlb is None and facts.blend_solution is None
    gap = next(g for g in facts.gaps if g.property == "required_hlb_ow")
    assert gap.ingredients == ("Squalane",) and gap.blocks == "required HLB (O/W)"
    assert "no balance verdict" in gap.detail


def test_required_hlb_above_the_coverage_threshold_is_given() -> None:
    # 20 of 22 % covered (91 %): the value stands, with its coverage
    facts = facts_of([("Water", 73.0), ("Paraffinum Liquidum", 20.0), ("Squalane", 2.0),
                      ("Polysorbate 80", 5.0)], intended_type="O/W")
    assert facts.required_hlb == pytest.approx(12.0)
    assert facts.required_hlb_coverage == pytest.approx(20 / 22)


def test_coverage_threshold_comes_from_the_settings() -> None:
    mini = formula("cover", [("Water", 70.0), ("Paraffinum Liquidum", 15.0), ("Squalane", 10.0),
                             ("Polysorbate 80", 5.0)], intended_type="O/W")
    loose = compute_facts(mini, reference(), FactsSettings(min_required_hlb_coverage=0.5))
    assert loose.required_hlb == pytest.approx(12.0)


def test_no_emulsifier_and_no_intended_type_leaves_numbers_out() -> None:
    facts = facts_of([("Water", 75.0), ("Paraffinum Liquidum", 20.0), ("Cetyl Alcohol", 5.0)])
    assert facts.emulsifiers == () and facts.emulsifier_percent == 0
    assert facts.blend_hlb is None and facts.predicted_type is None
    assert facts.working_type is None and facts.required_hlb is None
    assert facts.dispersed_fraction is None and facts.interface is None
    assert any("no intended type" in note for note in facts.notes)


def test_missing_molar_mass_blocks_the_soap() -> None:
    mini = formula("no molar mass", [("Water", 80.0), ("Stearic Acid", 18.0),
                                     ("Triethanolamine", 2.0)])
    acid = mini.lines[1]
    stripped = acid.ingredient.model_copy(update={
        "properties": acid.ingredient.properties.model_copy(update={"molar_mass": None})})
    lines = (mini.lines[0], ResolvedLine(**{**acid.model_dump(), "ingredient": stripped}),
             mini.lines[2])
    facts = compute_facts(ResolvedFormula(source=mini.source, formula=mini.formula, lines=lines,
                                          content_hash=mini.content_hash), reference())
    assert facts.soaps == ()
    gap = next(g for g in facts.gaps if g.property == "molar_mass")
    assert gap.ingredients == ("Stearic Acid",) and gap.blocks == "soap formed in place"


def test_bancroft_and_hlb_class_disagree() -> None:
    facts = facts_of([("Paraffinum Liquidum", 20.0), ("Sorbitan Oleate", 4.0),
                      ("Sodium Lauryl Sulfate", 1.0), ("Water", 75.0)])
    # Davies' 40 for SLS is not averaged with Griffin's 4.3: the blend is the nonionic's alone
    assert facts.blend_hlb == pytest.approx(4.3)
    assert facts.hlb_system.davies_percent == 1.0 and facts.hlb_system.coverage == 0.8
    sls = next(e for e in facts.emulsifiers if e.inci == "Sodium Lauryl Sulfate")
    assert sls.scale == "davies"
    assert facts.type_by_bancroft.value == "W/O" and facts.type_by_hlb.value == "W/O"
    ionic = next(i for i in facts.type_decision.indicators if i.name == "soap and ionic")
    assert ionic.favours.value == "O/W"
    assert facts.types_disagree and facts.predicted_type.value == "W/O"
    assert not facts.type_decision.strong


def test_blend_below_its_coverage_gives_no_hlb() -> None:
    # sorbitan oleate 2 % (Griffin 4.3) beside SLS 9 % (Davies 40): an ionic-led system; the
    # Griffin members cover 2/11 of it, so no blend HLB and no HLB class
    facts = facts_of([("Water", 69.0), ("Sorbitan Oleate", 2.0), ("Sodium Lauryl Sulfate", 9.0),
                      ("Paraffinum Liquidum", 20.0)])
    assert facts.blend_hlb is None
    assert facts.hlb_system.griffin_value == pytest.approx(4.3)
    assert facts.hlb_system.led_by == "ionic"
    assert facts.predicted_type.value == "O/W"  # the anionic, water-soluble, decides


def test_packing_constants() -> None:
    facts = facts_of(LOTION)
    assert facts.packing_limit == pytest.approx(math.pi / math.sqrt(18))  # Hales 2005
    assert facts.random_close_packing == 0.64  # Scott & Kilgour 1969


def test_a_fatty_alcohol_hlb_never_stands_in_for_its_required_hlb() -> None:
    # science.md section 1: cetyl alcohol HLB 1 (Birdi) but required HLB about 15: never mix them
    mini = formula("no rHLB", [("Water", 75.0), ("Paraffinum Liquidum", 15.0),
                               ("Cetyl Alcohol", 5.0), ("Polysorbate 80", 5.0)],
                   intended_type="O/W")
    cetyl = mini.lines[2]
    stripped = cetyl.ingredient.model_copy(update={
        "properties": cetyl.ingredient.properties.model_copy(update={"required_hlb_ow": None})})
    lines = (*mini.lines[:2], ResolvedLine(**{**cetyl.model_dump(), "ingredient": stripped}),
             mini.lines[3])
    facts = compute_facts(ResolvedFormula(source=mini.source, formula=mini.formula, lines=lines,
                                          content_hash=mini.content_hash), reference())
    assert facts.required_hlb_ow.value == pytest.approx(12.0)  # mineral oil alone
    assert facts.required_hlb_ow.missing == ("Cetyl Alcohol",)


def test_a_cleanser_is_a_surfactant_solution_with_no_type() -> None:
    # the same surfactants with 2 % oil: they outweigh the oil, so no emulsion type is predicted
    facts = facts_of([("Water", 87.0), ("Sorbitan Oleate", 2.0), ("Sodium Lauryl Sulfate", 9.0),
                      ("Paraffinum Liquidum", 2.0)])
    assert facts.kind.kind == "surfactant solution"
    assert facts.predicted_type is None and facts.type_decision is None
    assert facts.dispersed_fraction is None and facts.creaming is None


def test_a_wo_range_widens_the_wo_band() -> None:
    # mineral oil W/O: 4 in a supplier booklet, 5-6 in some tables (science.md section 4); a
    # hand-made record with that range, sorbitan oleate alone (4.3) as a W/O emulsifier
    mini = formula("wo range", [("Water", 40.0), ("Paraffinum Liquidum", 55.0),
                                ("Sorbitan Oleate", 5.0)], intended_type="W/O")
    oil = mini.lines[1]
    ranged = oil.ingredient.model_copy(update={"properties": oil.ingredient.properties.model_copy(
        update={"required_hlb_wo_low": 4.0, "required_hlb_wo_high": 6.0})})
    lines = (mini.lines[0], ResolvedLine(**{**oil.model_dump(), "ingredient": ranged}),
             mini.lines[2])
    facts = compute_facts(ResolvedFormula(source=mini.source, formula=mini.formula, lines=lines,
                                          content_hash=mini.content_hash), reference())
    assert facts.required_hlb_wo.low == pytest.approx(4.0)
    assert facts.required_hlb_wo.high == pytest.approx(6.0)
    assert facts.target_high == pytest.approx(6.0 + facts.settings.hlb_tolerance)
