"""HLB estimated from composition (Griffin 1954) and groups (Davies 1957): published checks."""

from __future__ import annotations

import pytest

from formdb.science.hlb import (
    DAVIES_GROUPS,
    EO_MOLAR_MASS,
    EstimateMethod,
    estimate_hlb,
    hlb_davies,
    hlb_from_ethoxylate,
    hlb_from_hydrophile_mass,
    hlb_from_saponification,
    oxyethylene_percent,
)

# IUPAC standard atomic weights (conventional values), g/mol
ATOMIC = {"C": 12.011, "H": 1.008, "O": 15.999}


def molar_mass(c: int, h: int, o: int) -> float:
    return c * ATOMIC["C"] + h * ATOMIC["H"] + o * ATOMIC["O"]


STEARYL_ALCOHOL = molar_mass(18, 38, 1)  # C18H38O, 270.50 (computed from molar masses)
CETYL_ALCOHOL = molar_mass(16, 34, 1)    # C16H34O
LAURYL_ALCOHOL = molar_mass(12, 26, 1)   # C12H26O


def test_ethylene_oxide_molar_mass() -> None:
    # C2H4O from IUPAC standard atomic weights (computed from molar masses).
    assert molar_mass(2, 4, 1) == pytest.approx(EO_MOLAR_MASS, abs=0.001)


def test_glyceryl_monostearate_by_ester_formula() -> None:
    # Griffin 1954 worked example, S = 161, A = 198 (numbers from memory): 3.74, published as 3.8.
    value = hlb_from_saponification(161, 198)
    assert value == pytest.approx(3.74, abs=0.005)
    assert value == pytest.approx(3.8, abs=0.1)


def test_polysorbate_20_by_ester_formula() -> None:
    # Griffin 1954 worked example, S = 45.5, A = 276 (numbers from memory): 16.70, the handbook
    # value 16.7 (HPE6 Table IX).
    assert hlb_from_saponification(45.5, 276) == pytest.approx(16.70, abs=0.005)


@pytest.mark.parametrize(("name", "alcohol", "eo_units", "published"), [
    ("steareth-20", STEARYL_ALCOHOL, 20, 15.3),  # handbook lists 15.3; computed 15.30
    ("ceteth-20", CETYL_ALCOHOL, 20, 15.7),      # handbook lists 15.7; computed 15.68
    ("laureth-4", LAURYL_ALCOHOL, 4, 9.7),       # handbook lists 9.7; computed 9.72
    ("steareth-2", STEARYL_ALCOHOL, 2, 4.9),     # handbook lists 4.9; computed 4.91
])
def test_alcohol_ethoxylates_by_e_over_5(name: str, alcohol: float, eo_units: int,
                                         published: float) -> None:
    # Griffin 1954 E/5 (computed from molar masses; Pasquali 2008 confirms Griffin computed these).
    e = oxyethylene_percent(alcohol, eo_units)
    assert hlb_from_ethoxylate(e) == pytest.approx(published, abs=0.05), name
    # 20 Mh/M (Griffin 1954; IUPAC Gold Book 15196) is the same estimate for a pure EO hydrophile
    eo_mass = eo_units * EO_MOLAR_MASS
    assert hlb_from_hydrophile_mass(eo_mass, alcohol + eo_mass) == pytest.approx(e / 5)


def test_steareth_20_oxyethylene_content() -> None:
    # science.md section 2: steareth-20 has E = 76.5 % (computed from molar masses).
    assert oxyethylene_percent(STEARYL_ALCOHOL, 20) == pytest.approx(76.5, abs=0.05)


def test_e_plus_p_over_5() -> None:
    # Griffin 1954 (E + P)/5, computed from the published formula.
    assert hlb_from_ethoxylate(60.0, 10.0) == pytest.approx(14.0)
    assert hlb_from_ethoxylate(60.0) == pytest.approx(12.0)
    with pytest.raises(ValueError, match="exceeds 100"):
        hlb_from_ethoxylate(90.0, 20.0)


@pytest.mark.parametrize(("groups", "published", "source"), [
    ({"sulfate": 1, "chx": 12}, 40.0, "sodium lauryl sulfate: Davies 1957; IUPAC Gold Book"),
    ({"carboxylate-sodium": 1, "chx": 17}, 18.0, "sodium oleate: Davies 1957; Birdi Table 9.3"),
    ({"carboxylate-potassium": 1, "chx": 17}, 20.0, "potassium oleate: Davies 1957 (from memory)"),
    ({"ester": 1, "hydroxyl": 2, "chx": 20}, 3.7, "glyceryl monostearate, computed; Griffin 3.8"),
])
def test_davies_group_numbers(groups: dict[str, int], published: float, source: str) -> None:
    assert hlb_davies(groups) == pytest.approx(published, abs=0.05), source


def test_davies_sulfate_is_the_original_38_7() -> None:
    # Davies 1957 (found in copies of the table): 38.7; lipophilic CHx -0.475.
    assert DAVIES_GROUPS["sulfate"] == 38.7
    assert DAVIES_GROUPS["chx"] == -0.475


def test_davies_group_names_are_forgiving_but_unknown_ones_fail() -> None:
    assert hlb_davies({"Carboxylate Sodium": 1, "CHx": 17}) == pytest.approx(18.025)
    with pytest.raises(ValueError, match=r"unknown Davies group 'sulphonate'.*groups: sulfate"):
        hlb_davies({"sulphonate": 1})
    with pytest.raises(ValueError, match="count of chx"):
        hlb_davies({"chx": -2})


def test_griffin_inputs_are_checked() -> None:
    with pytest.raises(ValueError, match="exceeds acid_number"):
        hlb_from_saponification(200, 198)
    with pytest.raises(ValueError, match="acid_number must be > 0"):
        hlb_from_saponification(0, 0)
    with pytest.raises(ValueError, match="exceeds total_mass"):
        hlb_from_hydrophile_mass(2.0, 1.0)


def test_estimate_dispatcher_records_a_method() -> None:
    # The same published checks, reached through the method names stored as provenance.
    assert estimate_hlb("griffin-ester", saponification_number=45.5,
                        acid_number=276) == pytest.approx(16.70, abs=0.005)
    assert estimate_hlb(EstimateMethod.GRIFFIN_ETHOXYLATE, hydrophobe_molar_mass=STEARYL_ALCOHOL,
                        ethylene_oxide_units=20) == pytest.approx(15.3, abs=0.05)
    assert estimate_hlb("griffin-ethoxylate", oxyethylene_percent=76.5) == pytest.approx(15.3)
    assert estimate_hlb("griffin-mass-fraction", hydrophilic_mass=1,
                        total_mass=4) == pytest.approx(5.0)
    assert estimate_hlb("davies-groups", groups={"sulfate": 1, "chx": 12}) == pytest.approx(40.0)
    assert {m.value for m in EstimateMethod} == {"griffin-ester", "griffin-ethoxylate",
                                                 "griffin-mass-fraction", "davies-groups"}


def test_estimate_dispatcher_says_what_it_needs() -> None:
    with pytest.raises(ValueError, match="choose one of: griffin-ester"):
        estimate_hlb("guess", x=1)
    with pytest.raises(ValueError, match="griffin-ester needs saponification_number, acid_number"):
        estimate_hlb("griffin-ester", saponification_number=161)
    with pytest.raises(ValueError, match="griffin-ethoxylate needs"):
        estimate_hlb("griffin-ethoxylate", oxyethylene_percent=50, ethylene_oxide_units=4)
    with pytest.raises(ValueError, match="mapping"):
        estimate_hlb("davies-groups", groups=[("chx", 1)])
