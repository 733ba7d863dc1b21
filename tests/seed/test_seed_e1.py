"""Outside checks of the emulsifier and surfactant rows of the seed library (issue 12, item 6).

Each list pairs a seed value with the source it was read in (sources.csv names the page and
what was read there). A check fails when the value drifts from the source or the value stops
citing it. The sources are copies of monographs and handbooks, graded as such in the seed.
"""

from __future__ import annotations

import pytest

from tests.seed.tables import read_seed

UNVERIFIED = ("from memory", "rule of thumb")


@pytest.fixture(scope="module")
def rows() -> dict[str, dict[str, str]]:
    return {row["inci_name"]: row for row in read_seed("ingredients.csv")}


# Typical use ranges, % w/w, for the use the seed row's roles name (emulsifier).
USE_RANGES = [
    # Handbook of Pharmaceutical Excipients, 'Cholesterol', Applications (copy on
    # drugsdose.com): emulsifying agent in cosmetics and topical formulations 0.3-5.0 % w/w.
    ("Cholesterol", 0.3, 5.0, "hpe-cholesterol-copy"),
    # Uses table of acacia as reproduced in Compounding Today newsletter 2-44: emulsifying
    # agent 10-20 % (pastille base 10-30, suspending agent 5-10, tablet binder 1-5).
    ("Acacia Senegal Gum", 10, 20, "compounding-today-acacia-2-44"),
    # IMCD Solution Centre page on glycerol monostearate in lotions (distributor):
    # as a non-aqueous base, usage levels 1-5 % w/w.
    ("Glyceryl Stearate", 1, 5, "imcd-glycerol-monostearate-lotion-page"),
    # Paula's Choice ingredient dictionary (copy on lica.vn): use levels 2-5 %.
    ("Polyglyceryl-3 Diisostearate", 2, 5, "paulas-choice-polyglyceryl-3-diisostearate-copy"),
]

# Lower bounds of use stated in a source ("as low as").
USE_MINIMUM = [
    # Handbook of Pharmaceutical Excipients, 'Lanolin Alcohols' (copy on chemicalbook.com):
    # water-in-oil creams and ointments at concentrations as low as 2 % w/w.
    ("Lanolin Alcohol", 2, "hpe-lanolin-alcohols-copy"),
]

# The phase an emulsifier dissolves in, as a monograph, handbook or paper states it.
SOLUBILITY = [
    # Merck Index, Sorbitan Esters (copy): sol in mineral oil, cottonseed oil; insol in water.
    ("Sorbitan Laurate", "oil", "merck-index-sorbitan-esters-copy"),
    # Merck Index, Polysorbates (copy): polysorbate 80 very sol in water, insol in mineral oil.
    ("Polysorbate 80", "water", "merck-index-polysorbates-copy"),
    # Compendial-style description on a supplier page: soluble in water, insoluble in oils.
    ("Polysorbate 60", "water", "estelle-polysorbate-60-page"),
    # Merck Index, Polyoxyethylene Fatty Acid Esters (copy): water-soluble from 12-15 EO units.
    ("PEG-100 Stearate", "water", "merck-index-peg-fatty-acid-esters-copy"),
    # International Pharmacopoeia, Cetomacrogol 1000 (copy): soluble in water.
    ("Ceteth-20", "water", "intph-cetomacrogol-1000-copy"),
    # Ph. Eur. 1123 (BP 2025 copy): higher-EO macrogol cetostearyl ethers dispersible or
    # soluble in water.
    ("Ceteareth-20", "water", "bp2025-macrogol-cetostearyl-ether"),
    # Handbook of Pharmaceutical Excipients, 'Gelatin' (copy): soluble in warm water (>30 C).
    ("Gelatin", "water", "hpe-gelatin-copy"),
    # Food Chemicals Codex, Lecithin (USP preview page): only partially soluble in water but
    # readily hydrates to form emulsions.
    ("Lecithin", "dispersible", "fcc-lecithin-usp-preview"),
    # McBain and Sierichs, J. Am. Oil Chem. Soc. 1948 (abstract): sodium oleate and potassium
    # oleate moderately soluble at room temperature; the saturated soaps need heat.
    ("Sodium Oleate", "water", "mcbain-sierichs-1948-soap-solubility"),
    ("Potassium Oleate", "water", "mcbain-sierichs-1948-soap-solubility"),
    ("Sodium Stearate", "water", "mcbain-sierichs-1948-soap-solubility"),
    ("Potassium Stearate", "water", "mcbain-sierichs-1948-soap-solubility"),
    # Manufacturer's article (Huana Chemical): insoluble in water, soluble in hot oil.
    ("Sorbitan Stearate", "oil", "huana-sorbitan-monostearate-page"),
    # USP 32-NF 27 Polyoxyl 40 Hydrogenated Castor Oil, identification A: 0.1 g dissolved
    # in 1 mL of water.
    ("PEG-40 Hydrogenated Castor Oil", "water", "usp32-nf27-polyoxyl-40-hydrogenated-castor-oil"),
    # Ingredient dictionary (copy): insoluble in water but mixes readily with oils.
    ("Polyglyceryl-3 Diisostearate", "oil", "paulas-choice-polyglyceryl-3-diisostearate-copy"),
]

# Polyoxyethylene chains stated by a monograph or report definition.
ETHOXYLATED = [
    # USP 35-NF 30 Polysorbate 60: copolymerized with about 20 mol ethylene oxide.
    ("Polysorbate 60", "usp35-nf30-polysorbate-60"),
    # USP-NF Polyoxyl Stearate (copy): polyethylene glycol esters, 6-100 EO units.
    ("PEG-100 Stearate", "usp-nf-polyoxyl-stearate-supplier-copy"),
    # USP 35-NF 30 Polyoxyl Stearyl Ether: CH3(CH2)17(OCH2CH2)nOH, n = 2-20.
    ("Steareth-2", "usp35-nf30-polyoxyl-stearyl-ether"),
    ("Steareth-20", "usp35-nf30-polyoxyl-stearyl-ether"),
    # USP 32-NF 27 Polyoxyl Lauryl Ether: 3-23 oxyethylene units.
    ("Laureth-4", "usp32-nf27-polyoxyl-lauryl-ether"),
    # USP 32-NF 27 Polyoxyl 40 Hydrogenated Castor Oil: about 40-45 mol ethylene oxide.
    ("PEG-40 Hydrogenated Castor Oil", "usp32-nf27-polyoxyl-40-hydrogenated-castor-oil"),
    # CIR ceteth report (abstract): PEG ethers of cetyl alcohol, made by ethoxylation.
    ("Ceteth-20", "cir-ceteth-final-report-abstract"),
]

# Ionic character stated by a definition.
IONIC = [
    # International Pharmacopoeia, Gummi arabicum (copy): mainly polymers of salts of arabic
    # acid, the salt of a polyacid.
    ("Acacia Senegal Gum", "anionic", "who-intph-acacia"),
    # GELITA technical page: gelatine is charged either way about its isoelectric point
    # (type A pH 8-9, type B 4.8-5.4).
    ("Gelatin", "amphoteric", "gelita-gelatine-amphoteric-page"),
]

# Densities, g/mL, read as a figure (not a pharmacopoeial range).
DENSITY = [
    # Distributor's product page (Tamin Kala Tak): sorbitan monooleate about 0.986 g/cm3
    # at 20 C.
    ("Sorbitan Oleate", 0.98, 0.995, "tamin-kala-tak-sorbitan-monooleate-page"),
]


def _cites(row: dict[str, str], prop: str, source: str,
           sources: dict[str, dict[str, str]]) -> None:
    assert row[f"{prop}_source"] == source
    assert sources[source]["evidence"] not in UNVERIFIED
    assert sources[source]["url"].startswith("http")


@pytest.mark.parametrize("inci, low, high, source", USE_RANGES)
def test_use_range_is_the_sources(inci: str, low: float, high: float, source: str,
                                  rows: dict[str, dict[str, str]],
                                  sources: dict[str, dict[str, str]]) -> None:
    row = rows[inci]
    assert float(row["use_min_percent"]) == pytest.approx(low)
    assert float(row["use_max_percent"]) == pytest.approx(high)
    _cites(row, "use_min_percent", source, sources)
    _cites(row, "use_max_percent", source, sources)


@pytest.mark.parametrize("inci, low, source", USE_MINIMUM)
def test_use_minimum_is_the_sources(inci: str, low: float, source: str,
                                    rows: dict[str, dict[str, str]],
                                    sources: dict[str, dict[str, str]]) -> None:
    row = rows[inci]
    assert float(row["use_min_percent"]) == pytest.approx(low)
    assert float(row["use_max_percent"]) >= low
    _cites(row, "use_min_percent", source, sources)


@pytest.mark.parametrize("inci, phase, source", SOLUBILITY)
def test_solubility_is_the_sources(inci: str, phase: str, source: str,
                                   rows: dict[str, dict[str, str]],
                                   sources: dict[str, dict[str, str]]) -> None:
    row = rows[inci]
    assert row["solubility"] == phase
    _cites(row, "solubility", source, sources)


@pytest.mark.parametrize("inci, source", ETHOXYLATED)
def test_ethoxylated_by_a_read_definition(inci: str, source: str,
                                          rows: dict[str, dict[str, str]],
                                          sources: dict[str, dict[str, str]]) -> None:
    row = rows[inci]
    assert row["ethoxylated"] == "yes"
    assert row["ionic_character"] == "nonionic"
    _cites(row, "ethoxylated", source, sources)


@pytest.mark.parametrize("inci, charge, source", IONIC)
def test_ionic_character_by_a_read_definition(inci: str, charge: str, source: str,
                                              rows: dict[str, dict[str, str]],
                                              sources: dict[str, dict[str, str]]) -> None:
    row = rows[inci]
    assert row["ionic_character"] == charge
    _cites(row, "ionic_character", source, sources)


@pytest.mark.parametrize("inci, low, high, source", DENSITY)
def test_density_is_the_sources(inci: str, low: float, high: float, source: str,
                                rows: dict[str, dict[str, str]],
                                sources: dict[str, dict[str, str]]) -> None:
    row = rows[inci]
    assert low <= float(row["density"]) <= high
    _cites(row, "density", source, sources)


def test_no_ethoxylated_value_rests_on_memory(rows: dict[str, dict[str, str]],
                                              sources: dict[str, dict[str, str]]) -> None:
    """Every 'ethoxylated' value of an emulsifier cites a definition actually read."""
    recalled = [name for name, row in rows.items() if row["ethoxylated"]
                and sources[row["ethoxylated_source"]]["evidence"] in UNVERIFIED]
    assert recalled == []
