"""Outside checks of the oils, waxes, water-phase ingredients and actives of the seed library
(ingredients.csv, Paraffinum Liquidum ... Ascorbic Acid) against the texts their sources quote.

Each row names the source key its value cites, and a comment names the text the figure was read
in. They fail when a value drifts from what the text says, or when a value is re-pointed to
another source without the check following it.
"""

from __future__ import annotations

import pytest

from formdb.schemas.ingredient import name_key
from tests.seed.tables import read_seed

# Water at 20 C (g/mL), for a relative density d20/20 (CRC Handbook; IAPWS).
WATER_20C = 0.99820
# Water at 25 C (g/mL), for a specific gravity at 25/25 C (USP <841>).
WATER_25C = 0.99705


@pytest.fixture(scope="module")
def by_name() -> dict[str, dict[str, str]]:
    return {name_key(row["inci_name"]): row for row in read_seed("ingredients.csv")}


# (ingredient, relative density low, high, density of water it is relative to, source key)
DENSITY = [
    # Merck Index, 1,3-Butylene Glycol (drugfuture.com copy): d20/20 1.004-1.006.
    ("Butylene Glycol", 1.004, 1.006, WATER_20C, "merck-index-butylene-glycol-copy"),
    # Compounding note on white petrolatum (Scribd copy): specific gravity about 0.815-0.880.
    ("Petrolatum", 0.815, 0.880, WATER_25C, "compounding-note-white-petrolatum"),
    # BP / Ph. Eur. Lactic Acid test (Finar Chemicals specification): relative density (20 C)
    # 1.20-1.21.
    ("Lactic Acid", 1.20, 1.21, WATER_20C, "finar-lactic-acid-bp"),
    # BP 2025 / Ph. Eur. Refined Sunflower Oil: relative density about 0.921 (+-0.002 read as
    # "about").
    ("Helianthus Annuus Seed Oil", 0.919, 0.923, WATER_20C, "bp2025-refined-sunflower-oil"),
    # J. Cosmet. Sci. 49 (1998) Table I: jojoba oil specific gravity 0.864-0.865 (25/25 C).
    ("Simmondsia Chinensis Seed Oil", 0.864, 0.865, WATER_25C, "jcs-1998-jojoba-oil-properties"),
]

# (ingredient, density low, high in g/cm3 as printed, source key)
DENSITY_PRINTED = [
    # DocCheck Flexikon 'Stearylalkohol' (after Schmidt & Lang 2013): 0.81-0.90 g/cm3.
    ("Stearyl Alcohol", 0.81, 0.90, "doccheck-stearyl-alcohol"),
    # DocCheck Flexikon 'Cetylstearylalkohol': 0.816 g/cm3.
    ("Cetearyl Alcohol", 0.816, 0.816, "doccheck-cetostearyl-alcohol"),
    # DocCheck Flexikon 'Squalan' (after Schmidt & Lang 2013): 0.815 g/cm3.
    ("Squalane", 0.815, 0.815, "doccheck-squalane"),
    # Wikipedia 'Cetyl alcohol' infobox (after the Merck Index): 0.811 g/cm3.
    ("Cetyl Alcohol", 0.811, 0.811, "wikipedia-cetyl-alcohol-chembox"),
    # Wikipedia 'Stearic acid' infobox: 0.9408 g/cm3 at 20 C.
    ("Stearic Acid", 0.935, 0.945, "wikipedia-stearic-acid-chembox"),
    # Wikipedia 'Citric acid' infobox: 1.665 g/cm3 (anhydrous).
    ("Citric Acid", 1.665, 1.665, "wikipedia-citric-acid-chembox"),
    # Wikipedia 'alpha-Tocopherol' infobox: 0.950 g/cm3.
    ("Tocopherol", 0.950, 0.950, "wikipedia-alpha-tocopherol-chembox"),
    # ECHA dossier D5: measured 0.959 g/cm3 at 20 C (Merck Index d 0.9593).
    ("Cyclopentasiloxane", 0.959, 0.959, "echa-d5-dossier"),
]

# (ingredient, phase its solubility text puts it in, source key)
SOLUBILITY = [
    # PubChem/HSDB (Smolecule copy): insoluble in water, soluble in mineral oil.
    ("Isopropyl Myristate", "oil", "pubchem-isopropyl-myristate-copy"),
    # Merck Index (drugfuture.com copy): soluble in water.
    ("Butylene Glycol", "water", "merck-index-butylene-glycol-copy"),
    # USP 32-NF 27 Hydroxyethyl Cellulose, identification A: dissolves to a colloidal solution.
    ("Hydroxyethylcellulose", "water", "usp32-nf27-hydroxyethyl-cellulose"),
    # DocCheck Flexikon 'Stearylalkohol': insoluble in water, soluble in ethanol and ether.
    ("Stearyl Alcohol", "oil", "doccheck-stearyl-alcohol"),
    # DocCheck Flexikon 'Squalan': insoluble in water and ethanol, soluble in acetone and ether.
    ("Squalane", "oil", "doccheck-squalane"),
    # PharmaWiki 'Wollwachs': practically insoluble in water.
    ("Lanolin", "oil", "pharmawiki-wool-fat"),
    # British Pharmaceutical Codex 1911, Paraffinum Liquidum: insoluble in water, soluble in oils.
    ("Paraffinum Liquidum", "oil", "bpc1911-liquid-paraffin-copy"),
    # Martindale quoting Ph. Eur. 6.2 Trolamine: miscible with water and with alcohol.
    ("Triethanolamine", "water", "martindale-trolamine-copy"),
    # ChemicalBook text citing BP 2009 / Ph. Eur. 6.4: practically insoluble in water.
    ("Magnesium Oxide", "insoluble", "chemicalbook-magnesium-oxide"),
    # International Pharmacopoeia, Carbomerum: disperses; soluble only after neutralisation.
    ("Carbomer", "dispersible", "who-intph-carbomer"),
    # ECHA registration dossier, Allantoin: water soluble, 4.9 g/L at 20 C.
    ("Allantoin", "water", "echa-allantoin-dossier"),
    # Troebitscher (tara24.at), Dexpanthenol: freely or very soluble in water.
    ("Panthenol", "water", "troebitscher-dexpanthenol-rezeptur"),
    # BP 2025 / Ph. Eur. Refined Sunflower Oil: practically insoluble in water.
    ("Helianthus Annuus Seed Oil", "oil", "bp2025-refined-sunflower-oil"),
    # Czech Pharmacopoeia 1997, Cetylis palmitas: practically insoluble in water.
    ("Cetyl Palmitate", "oil", "cesky-lekopis-1997-cetyl-palmitate"),
    # Ph. Eur. wording on ChemicalBook, coconut oil: practically insoluble in water.
    ("Cocos Nucifera Oil", "oil", "chemicalbook-coconut-oil"),
    # Northchem castor oil page: insoluble in water.
    ("Ricinus Communis Seed Oil", "oil", "northchem-castor-oil"),
    # ECHA dossier D5 and Merck Index: water solubility about 17 ppb.
    ("Cyclopentasiloxane", "oil", "echa-d5-dossier"),
]

# (ingredient, pH low, pH high, source key); None where the text gives no bound
PH_WINDOW = [
    # Polymer table (what-when-how.com copy): viscosity stable over pH 2-12.
    ("Xanthan Gum", 2, 12, "polymer-table-xanthan-guar-copy"),
    # Troebitscher (tara24.at), after DAC/NRF: dexpanthenol stability optimum pH 4-7.
    ("Panthenol", 4, 7, "troebitscher-dexpanthenol-rezeptur"),
    # Pinnell et al., Dermatol. Surg. 27:137 (2001), abstract: formulate below pH 3.5.
    ("Ascorbic Acid", None, 3.5, "pinnell-2001-ascorbic-acid"),
    # NINGBO INNO PHARMCHEM article: niacinamide most stable at pH 5-7.
    ("Niacinamide", 5, 7, "nbinno-niacinamide-formulating"),
    # Kima Chemical pages: hydroxyethyl cellulose stable over pH 3-12 typically.
    ("Hydroxyethylcellulose", 3, 12, "kima-hec-properties"),
]

# (ingredient, use % low, high, source key)
USE_RANGE = [
    # NINGBO INNO PHARMCHEM article: niacinamide generally 1-6 %.
    ("Niacinamide", 1, 6, "nbinno-niacinamide-formulating"),
    # INCI Guide, propylene glycol: 1-5 %, in some cases up to 10 %.
    ("Propylene Glycol", 1, 10, "inci-guide-propylene-glycol"),
]

# (ingredient, use % bound, "min" or "max", source key) where one end of the range is read
USE_BOUND = [
    # IMCD petrolatum page: topical emulsions 4-25 % (the low end).
    ("Petrolatum", 4, "min", "imcd-petrolatum-topicals"),
    # Compounding note on white petrolatum: topical ointments up to 100 % (formdb checks
    # ointment bases too, so the top of the range is the ointment's).
    ("Petrolatum", 100, "max", "compounding-note-white-petrolatum"),
    # 21 CFR 347.10(a): allantoin 0.5 to 2 percent (skin protectant active); the low end is
    # kept a rule of thumb for cosmetic soothing use below a drug claim.
    ("Allantoin", 2, "max", "cfr-21-347-10"),
    # 21 CFR 347.10(u): zinc oxide 1 to 25 percent (skin protectant active).
    ("Zinc Oxide", 1, "min", "cfr-21-347-10"),
    # 21 CFR 352.10(r) and (p): zinc oxide and titanium dioxide up to 25 percent (sunscreen).
    ("Zinc Oxide", 25, "max", "cfr-21-352-10"),
    ("Titanium Dioxide", 25, "max", "cfr-21-352-10"),
    # Pinnell et al. 2001, abstract: 20 % maximal for optimal percutaneous absorption.
    ("Ascorbic Acid", 20, "max", "pinnell-2001-ascorbic-acid"),
    # Troebitscher (tara24.at): dexpanthenol therapeutic range 2-5 %.
    ("Panthenol", 5, "max", "troebitscher-dexpanthenol-rezeptur"),
    # Chemball stearic acid page: ointment or cream 10-20 %.
    ("Stearic Acid", 20, "max", "chemball-stearic-acid"),
]

# (ingredient, property, value, source key) for single values read as printed
PRINTED = [
    # IMCD cetostearyl alcohol page: 'RHLB: 15.5'.
    ("Cetearyl Alcohol", "required_hlb_ow", 15.5, "imcd-cetostearyl-alcohol-topicals"),
    # AOCS Inform (2014), excerpt: required HLB of castor oil 14; mineral oil 10.
    ("Ricinus Communis Seed Oil", "required_hlb_ow", 14, "aocs-inform-2014-emulsions-copy"),
    ("Paraffinum Liquidum", "required_hlb_ow_low", 10, "aocs-inform-2014-emulsions-copy"),
    # chemhdi.com castor oil article: 680 cP at 25 C.
    ("Ricinus Communis Seed Oil", "viscosity_mpas", 680, "chemhdi-castor-oil"),
    # Wikipedia 'Squalane' infobox: 31.123 mPa s.
    ("Squalane", "viscosity_mpas", 31, "wikipedia-squalane-chembox"),
    # Wikipedia 'Ethanol (data page)' (after Lange's Handbook): 1.040 mPa s at 25 C.
    ("Alcohol", "viscosity_mpas", 1.04, "wikipedia-ethanol-data-page"),
]

# (ingredient, electrolyte sensitive, source key)
ELECTROLYTES = [
    # Polymer table (copy): more tolerant of electrolytes than most other organic gums.
    ("Xanthan Gum", "no", "polymer-table-xanthan-guar-copy"),
    # Kima Chemical: non-ionic HEC thickens high-concentration electrolyte solutions.
    ("Hydroxyethylcellulose", "no", "kima-hec-properties"),
]

# Sources read at the official body's own site or published by the journal (graded published).
PUBLISHED_HERE = {"cfr-21-347-10", "cfr-21-352-10", "pinnell-2001-ascorbic-acid",
                  "jcs-1998-jojoba-oil-properties"}


@pytest.mark.parametrize("inci, low, high, water, source", DENSITY)
def test_density_within_relative_density(inci: str, low: float, high: float, water: float,
                                         source: str, by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert row["density_source"] == source
    assert low * water <= float(row["density"]) <= high * water


@pytest.mark.parametrize("inci, low, high, source", DENSITY_PRINTED)
def test_density_as_printed(inci: str, low: float, high: float, source: str,
                            by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert row["density_source"] == source
    assert low <= float(row["density"]) <= high


@pytest.mark.parametrize("inci, phase, source", SOLUBILITY)
def test_solubility_as_the_text_reads(inci: str, phase: str, source: str,
                                      by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert (row["solubility"], row["solubility_source"]) == (phase, source)


@pytest.mark.parametrize("inci, low, high, source", PH_WINDOW)
def test_ph_window_as_printed(inci: str, low: float | None, high: float | None, source: str,
                              by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    for prop, bound in (("ph_min", low), ("ph_max", high)):
        if bound is not None:
            assert (float(row[prop]), row[f"{prop}_source"]) == (bound, source), prop


@pytest.mark.parametrize("inci, low, high, source", USE_RANGE)
def test_use_range_as_printed(inci: str, low: float, high: float, source: str,
                              by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert (float(row["use_min_percent"]), row["use_min_percent_source"]) == (low, source)
    assert (float(row["use_max_percent"]), row["use_max_percent_source"]) == (high, source)


@pytest.mark.parametrize("inci, bound, end, source", USE_BOUND)
def test_use_bound_as_printed(inci: str, bound: float, end: str, source: str,
                              by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    prop = f"use_{end}_percent"
    assert (float(row[prop]), row[f"{prop}_source"]) == (bound, source)


@pytest.mark.parametrize("inci, prop, value, source", PRINTED)
def test_value_as_printed(inci: str, prop: str, value: float, source: str,
                          by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert (float(row[prop]), row[f"{prop}_source"]) == (value, source)


@pytest.mark.parametrize("inci, sensitive, source", ELECTROLYTES)
def test_electrolyte_tolerance_as_printed(inci: str, sensitive: str, source: str,
                                          by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert (row["electrolyte_sensitive"], row["electrolyte_sensitive_source"]) == (
        sensitive, source)


def _checked_sources() -> set[str]:
    tables: list[list[tuple[object, ...]]] = [
        DENSITY, DENSITY_PRINTED, SOLUBILITY, PH_WINDOW, USE_RANGE, USE_BOUND, PRINTED,
        ELECTROLYTES]
    return {str(entry[-1]) for table in tables for entry in table}


def test_sources_read_in_copies_claim_no_more_than_a_copy(
        sources: dict[str, dict[str, str]]) -> None:
    """A source read on a third-party site may not pass as 'published'; the few read at the
    publisher or the official body's own site say so and what kind they are."""
    for key in _checked_sources():
        row = sources[key]
        assert row["url"].startswith(("http://", "https://")), key
        if key in PUBLISHED_HERE:
            assert (row["evidence"], row["seen"]) == ("published", "found"), key
            assert row["kind"] in ("regulation", "peer-reviewed publication"), key
        else:
            assert (row["evidence"], row["seen"], row["kind"]) == (
                "secondary copy", "found-secondary", "secondary copy"), key
