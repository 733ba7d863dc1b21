"""Outside checks of the preservative, fragrance and UV-filter rows of the seed library (issue 12,
evidence pass E3: Phenoxyethanol ... Ethylhexyl Methoxycinnamate in seed_data/ingredients.csv).

Each list pins a value to the figure read in the source named beside it (sources.csv holds the
full citation and the page read). A copy read on a third-party site is graded "secondary copy",
never "published". The Annex V and VI maxima are checked a second time against the Commission's
own export in ../shared/regulatory/ when that folder is on the machine (read, never copied).
"""

from __future__ import annotations

import pytest

from formdb.schemas.ingredient import name_key
from formdb.schemas.lists import ListEntry
from formdb.services.lists.importing import read_export
from tests.helpers import ANNEX_EXPORTS, needs_annex_exports
from tests.seed.tables import read_seed

SHARED = ANNEX_EXPORTS
needs_exports = needs_annex_exports()


INGREDIENTS = {name_key(row["inci_name"]): row for row in read_seed("ingredients.csv")}
SOURCES = {row["key"]: row for row in read_seed("sources.csv")}


def _row(inci: str) -> dict[str, str]:
    return INGREDIENTS[name_key(inci)]


# Densities in g/mL: the range the source's figure allows at about 20-25 C.
DENSITY = [
    # Merck Index, Limonene (copy on druglead.com): d-limonene d(21/4) 0.8402 (water at 4 C = 1).
    ("Limonene", 0.838, 0.842, "merck-index-limonene-copy"),
    # Essential-oil chapter copy on ebrary.net: geraniol specific gravity 0.8894 at 20 C.
    ("Geraniol", 0.887, 0.891, "ebrary-terpene-alcohols-copy"),
    # Chemical encyclopedia (copy on xumuk.ru): citronellol d(20/4) 0.849-0.863.
    ("Citronellol", 0.849, 0.863, "khim-encyclopedia-citronellol-copy"),
    # ChemicalBook (copy): linalool specific gravity 0.860 (20/4 C); 0.858-0.868 the usual range.
    ("Linalool", 0.858, 0.868, "chemicalbook-linalool-copy"),
    # Food encyclopedia (foodmate): benzyl salicylate d25/25 1.176-1.180, water 0.99705 g/mL.
    ("Benzyl Salicylate", 1.176 * 0.99705, 1.180 * 0.99705, "foodmate-benzyl-salicylate-copy"),
]


@pytest.mark.parametrize("inci, low, high, source", DENSITY)
def test_density_matches_source(inci: str, low: float, high: float, source: str) -> None:
    row = _row(inci)
    assert row["density_source"] == source
    assert low <= float(row["density"]) <= high


# pH windows of preservative efficacy: (inci, ph_min or None, ph_max, source of the bound(s)).
PH_WINDOW = [
    # Parabens: "effective range of pH 3.0 to 8.0" (food-preservation text, copy on
    # barnardhealth.us; wording of Davidson's chapter 'Parabens', Antimicrobials in Food).
    ("Methylparaben", 3.0, 8.0, "parabens-food-text-copy"),
    ("Ethylparaben", 3.0, 8.0, "parabens-food-text-copy"),
    ("Propylparaben", 3.0, 8.0, "parabens-food-text-copy"),
    ("Butylparaben", 3.0, 8.0, "parabens-food-text-copy"),
    # Qualenica Table 1 'Preservatives': benzoic acid at pH 2-5; the salt works as the acid.
    ("Benzoic Acid", None, 5.0, "qualenica-preservatives"),
    ("Sodium Benzoate", None, 5.0, "qualenica-preservatives"),
]


@pytest.mark.parametrize("inci, ph_min, ph_max, source", PH_WINDOW)
def test_ph_window_matches_source(inci: str, ph_min: float | None, ph_max: float,
                                  source: str) -> None:
    row = _row(inci)
    assert row["ph_max_source"] == source
    assert float(row["ph_max"]) == ph_max
    if ph_min is not None:
        assert row["ph_min_source"] == source
        assert float(row["ph_min"]) == ph_min


# Typical use ranges (% w/w) read as ranges: (inci, low, high, source of both ends).
USE_RANGE = [
    # HPE 'Phenoxyethanol' (copy on drugsdose.com): cosmetics and topicals at 0.5-1.0 %.
    ("Phenoxyethanol", 0.5, 1.0, "hpe-phenoxyethanol-copy"),
    # HPE 6th ed. 'Potassium Sorbate' (copy on pharmacentral.com): 0.1-0.2 %.
    ("Potassium Sorbate", 0.1, 0.2, "hpe6-potassium-sorbate-copy"),
    # HPE 'Sorbic Acid' (copy on chemicalbook.com): 0.05-0.2 % in oral and topical formulations.
    ("Sorbic Acid", 0.05, 0.2, "hpe-sorbic-acid-copy"),
    # Bryce et al., J. Soc. Cosmet. Chem. 29:3-24 (1978), p. 23: bronopol at 0.01-0.1 %.
    ("2-Bromo-2-Nitropropane-1,3-Diol", 0.01, 0.1, "bryce-1978-bronopol"),
]


@pytest.mark.parametrize("inci, low, high, source", USE_RANGE)
def test_use_range_matches_source(inci: str, low: float, high: float, source: str) -> None:
    row = _row(inci)
    assert (row["use_min_percent_source"], row["use_max_percent_source"]) == (source, source)
    assert (float(row["use_min_percent"]), float(row["use_max_percent"])) == (low, high)


# Use maxima taken from the legal maximum of an EU annex entry, as the export of 31/10/2025 gives
# it: (inci, annex, entry, part label or None, the maximum in % as written there).
LEGAL_MAXIMUM = [
    ("Sodium Benzoate", "V", "1", "c", 0.5),      # leave-on products, 0.5 % as acid
    ("Benzoic Acid", "V", "1", "c", 0.5),
    ("Propylparaben", "V", "12a", None, 0.14),     # as acid, with butylparaben summed
    ("Dehydroacetic Acid", "V", "13", None, 0.6),  # 0.6 % as acid
    ("Benzyl Alcohol", "V", "34", None, 1.0),
    ("Methylchloroisothiazolinone", "V", "39", None, 0.0015),  # rinse-off, 3:1 mixture
    ("Chlorphenesin", "V", "50", None, 0.3),
    ("Methylisothiazolinone", "V", "57", None, 0.0015),  # rinse-off products
    ("Butyl Methoxydibenzoylmethane", "VI", "8", None, 5.0),
    ("Octocrylene", "VI", "10", "b", 10.0),  # other than propellant sprays
    ("Ethylhexyl Methoxycinnamate", "VI", "12", None, 10.0),
]


@pytest.mark.parametrize("inci, annex, ref, label, maximum", LEGAL_MAXIMUM)
def test_use_maximum_is_the_annex_maximum(inci: str, annex: str, ref: str, label: str | None,
                                          maximum: float) -> None:
    row = _row(inci)
    assert row["use_max_percent_source"] == f"eu-cosing-annex-{annex.lower()}-2025-10-31"
    assert float(row["use_max_percent"]) == maximum
    assert "legal maximum" in row["use_max_percent_note"]


_exports: dict[str, dict[str, ListEntry]] = {}


def _entry(annex: str, ref: str) -> ListEntry:
    if annex not in _exports:
        path = SHARED / f"COSING_Annex_{annex}_v2.txt"
        _exports[annex] = {e.ref: e for e in read_export(path).entries}
    return _exports[annex][ref]


@needs_exports
@pytest.mark.parametrize("inci, annex, ref, label, maximum", LEGAL_MAXIMUM)
def test_annex_maximum_matches_the_commission_export(inci: str, annex: str, ref: str,
                                                     label: str | None, maximum: float) -> None:
    """The figure pinned above is the one the Commission's export of 31/10/2025 gives."""
    entry = _entry(annex, ref)
    # the MCI/MI entry names the mixture ("... AND METHYLISOTHIAZOLINONE")
    assert any(name_key(inci) in name_key(n) for n in entry.inci_names)
    parts = {p.label: p for p in entry.parts}
    assert parts[label].max_percent == pytest.approx(maximum)


def test_cosing_sources_are_the_files_read() -> None:
    """The two export sources carry the checksum of the file read, so `formdb source identify`
    recognises a fresh download that is byte-identical."""
    for annex in ("v", "vi"):
        source = SOURCES[f"eu-cosing-annex-{annex}-2025-10-31"]
        assert source["kind"] == "regulation" and source["seen"] == "found"
        assert source["checksum"].startswith("sha256:") and len(source["checksum"]) == 71


@needs_exports
def test_cosing_checksums_match_the_exports() -> None:
    import hashlib
    for annex in ("V", "VI"):
        digest = hashlib.sha256((SHARED / f"COSING_Annex_{annex}_v2.txt").read_bytes())
        source = SOURCES[f"eu-cosing-annex-{annex.lower()}-2025-10-31"]
        assert source["checksum"] == f"sha256:{digest.hexdigest()}"


# Solubility (the phase the ingredient goes to) read in the source named.
SOLUBILITY = [
    # JECFA Methyl p-hydroxybenzoate (copy): slightly soluble in water.
    ("Methylparaben", "water", "jecfa-methylparaben-copy"),
    # BP 2009 Bronopol (copy): freely soluble in water.
    ("2-Bromo-2-Nitropropane-1,3-Diol", "water", "bp2009-bronopol-copy"),
    # Merck Index Limonene (copy): practically insoluble in water.
    ("Limonene", "oil", "merck-index-limonene-copy"),
    # Chapter copy on ebrary.net: geraniol insoluble in water; citronellol soluble in most oils.
    ("Geraniol", "oil", "ebrary-terpene-alcohols-copy"),
    ("Citronellol", "oil", "ebrary-terpene-alcohols-copy"),
    # Food encyclopedia (copy): benzyl salicylate almost insoluble in water.
    ("Benzyl Salicylate", "oil", "foodmate-benzyl-salicylate-copy"),
    # cosmeticsinfo.org (CIR summary): alkyl glyceryl ethers poorly soluble in water.
    ("Ethylhexylglycerin", "oil", "cosmeticsinfo-alkyl-glyceryl-ethers"),
    # HSDB statements compiled on scent.vn: coumarin freely soluble in oils.
    ("Coumarin", "oil", "coumarin-solubility-compilation"),
    # ChemicalBook (copy): linalool insoluble in water, soluble in ethanol and ether.
    ("Linalool", "oil", "chemicalbook-linalool-copy"),
    # ACS Molecule of the Week: 2-phenoxyethanol moderately water-soluble.
    ("Phenoxyethanol", "water", "acs-motw-phenoxyethanol"),
    # Supplier page: avobenzone water-insoluble, soluble in castor oil and triglycerides.
    ("Butyl Methoxydibenzoylmethane", "oil", "avobenzone-supplier-solubility"),
]


@pytest.mark.parametrize("inci, phase, source", SOLUBILITY)
def test_solubility_matches_source(inci: str, phase: str, source: str) -> None:
    row = _row(inci)
    assert (row["solubility"], row["solubility_source"]) == (phase, source)


E3_COPIES = ["hpe-phenoxyethanol-copy", "hpe-sorbic-acid-copy", "hpe6-potassium-sorbate-copy",
             "qualenica-preservatives", "parabens-food-text-copy", "jecfa-methylparaben-copy",
             "bp2009-bronopol-copy", "merck-index-limonene-copy", "ebrary-terpene-alcohols-copy",
             "foodmate-benzyl-salicylate-copy", "avobenzone-supplier-solubility",
             "cosmeticsinfo-alkyl-glyceryl-ethers", "khim-encyclopedia-citronellol-copy",
             "coumarin-solubility-compilation", "chemicalbook-linalool-copy",
             "acs-motw-phenoxyethanol"]


@pytest.mark.parametrize("key", E3_COPIES)
def test_sources_read_in_copies_are_not_graded_published(key: str) -> None:
    """A value read on a third-party site (or in a practice guide that names no sources) is a
    secondary copy until checked at the source."""
    assert (SOURCES[key]["evidence"], SOURCES[key]["kind"]) == ("secondary copy",
                                                                "secondary copy")
