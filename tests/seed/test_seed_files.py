"""Checksum tests of the bundled seed library (seed_data/*.csv).

They fail loudly on an accidental edit: row counts, unique keys, every source key resolving, every
row importable, every CAS check digit, every ingredient DESIGN.md section 4 names, and the key
published values against the project's reference files (each source is named beside its check).
"""

from __future__ import annotations

import csv
import math
import re
from datetime import date

import pytest

from formdb.schemas.ingredient import (
    PROPERTY_NAMES,
    IngredientIn,
    IngredientProperties,
    cas_is_valid,
    name_key,
)
from formdb.schemas.reference import Incompatibility, LimitRecord, SoapPair
from formdb.schemas.vocab import COMPAT_CLASSES, Evidence
from tests.seed.tables import SEED, read_seed

INGREDIENT_FIXED = ["inci_name", "synonyms", "cas", "roles", "classes"]

# Changing a seed file on purpose means changing its count here too.
ROW_COUNTS = {
    "sources.csv": 173,
    "ingredients.csv": 111,
    "limits.csv": 57,
    "incompatibilities.csv": 15,
    "soap_pairs.csv": 8,
}

# DESIGN.md section 4: every ingredient the seed library must hold, with the synonyms given there
# in brackets (each must resolve to the INCI name).
DESIGN_NAMES: dict[str, tuple[str, ...]] = {
    # emulsifiers, nonionic
    "Sorbitan Laurate": (), "Sorbitan Stearate": (), "Sorbitan Oleate": (),
    "Sorbitan Sesquioleate": (), "Sorbitan Trioleate": (), "Polysorbate 20": (),
    "Polysorbate 60": (), "Polysorbate 80": (), "Glyceryl Stearate": (), "PEG-100 Stearate": (),
    "Steareth-2": (), "Steareth-20": (), "Ceteth-20": (), "Laureth-4": (), "Ceteareth-20": (),
    "PEG-40 Hydrogenated Castor Oil": (), "Polyglyceryl-3 Diisostearate": (), "Cholesterol": (),
    "Lanolin Alcohol": (),
    # emulsifiers, ionic and natural
    "Sodium Lauryl Sulfate": (), "Sodium Laureth Sulfate": (), "Sodium Stearate": (),
    "Cetrimonium Chloride": (), "Behentrimonium Chloride": (), "Benzalkonium Chloride": (),
    "Cocamidopropyl Betaine": (), "Lecithin": (), "Acacia Senegal Gum": ("Gum Arabic",),
    "Gelatin": (),
    # oils, waxes, fatty alcohols and acids
    "Paraffinum Liquidum": ("Mineral Oil",), "Petrolatum": (), "Cera Alba": ("Beeswax",),
    "Lanolin": (), "Cetyl Alcohol": (), "Stearyl Alcohol": (), "Cetearyl Alcohol": (),
    "Stearic Acid": (), "Oleic Acid": (), "Isopropyl Myristate": (), "Isopropyl Palmitate": (),
    "Caprylic/Capric Triglyceride": (), "Dimethicone": (), "Cyclopentasiloxane": (),
    "Simmondsia Chinensis Seed Oil": ("Jojoba Oil",),
    "Butyrospermum Parkii Butter": ("Shea Butter",),
    "Ricinus Communis Seed Oil": ("Castor Oil",), "Cocos Nucifera Oil": ("Coconut Oil",),
    "Helianthus Annuus Seed Oil": ("Sunflower Seed Oil",), "Squalane": (), "Cetyl Palmitate": (),
    "Ethylhexyl Palmitate": (),
    # water phase and others
    "Aqua": ("Water",), "Glycerin": (), "Propylene Glycol": (), "Butylene Glycol": (),
    "Alcohol": ("Ethanol",), "Sodium Chloride": (), "Magnesium Sulfate": (), "Xanthan Gum": (),
    "Carbomer": (), "Hydroxyethylcellulose": (), "Sodium Hydroxide": (), "Triethanolamine": (),
    "Magnesium Oxide": (), "Citric Acid": (), "Lactic Acid": (), "Tocopherol": (),
    "Allantoin": (), "Panthenol": (), "Niacinamide": (), "Salicylic Acid": (), "Zinc Oxide": (),
    "Titanium Dioxide": (),
    # preservatives
    "Phenoxyethanol": (), "Ethylhexylglycerin": (), "Sodium Benzoate": (),
    "Potassium Sorbate": (), "Benzyl Alcohol": (), "Methylparaben": (), "Propylparaben": (),
    "Methylisothiazolinone": (), "Dehydroacetic Acid": (), "Chlorphenesin": (),
    # fragrance and UV filters
    "Parfum": ("Fragrance",), "Limonene": (), "Linalool": (), "Citronellol": (), "Geraniol": (),
    "Coumarin": (), "Benzyl Salicylate": (), "Hexyl Cinnamal": (), "Octocrylene": (),
    "Butyl Methoxydibenzoylmethane": (), "Ethylhexyl Methoxycinnamate": (),
}

# Published values from /work/shared/references/science.md, each with the source it names.
PUBLISHED = [
    # Sorbitan oleate 4.30 and polysorbate 80 15.00: PMC4137601 Table 2 (Griffin; HPE6).
    ("Sorbitan Oleate", "hlb", 4.3, "pmc4137601-table2"),
    ("Polysorbate 80", "hlb", 15.0, "pmc4137601-table2"),
    # Sorbitan stearate 4.7: Wangpradit et al., OCL 29:29 (2022) Table 5.
    ("Sorbitan Stearate", "hlb", 4.7, "wangpradit-2022-ocl"),
    # Glyceryl monostearate 3.8: OCL 2022 Table 4 (Griffin 1954 computes 3.74, printed 3.8).
    ("Glyceryl Stearate", "hlb", 3.8, "wangpradit-2022-ocl"),
    # Sorbitan laurate 8.6: PMC3969497 Table I.
    ("Sorbitan Laurate", "hlb", 8.6, "pmc3969497-table1"),
    # Polysorbate 20 16.7: HPE6 Table IX (seen second-hand).
    ("Polysorbate 20", "hlb", 16.7, "hpe6"),
    # Sodium lauryl sulfate 40: IUPAC Gold Book, doi:10.1351/goldbook.15196 (Davies 1957).
    ("Sodium Lauryl Sulfate", "hlb", 40, "iupac-goldbook-hlb"),
    # Sodium oleate 18, cetyl alcohol 1, oleic acid 1: Birdi, Surface and Colloid Chemistry,
    # Table 9.3 (Davies).
    ("Sodium Oleate", "hlb", 18, "birdi-table-9-3"),
    ("Cetyl Alcohol", "hlb", 1, "birdi-table-9-3"),
    ("Oleic Acid", "hlb", 1, "birdi-table-9-3"),
    # Required HLB (O/W), OCL 2022 Table 4: stearic acid 15, isopropyl myristate 11.5,
    # white beeswax 12; coconut oil 5.4 measured in the same study.
    ("Stearic Acid", "required_hlb_ow", 15, "wangpradit-2022-ocl"),
    ("Isopropyl Myristate", "required_hlb_ow", 11.5, "wangpradit-2022-ocl"),
    ("Cera Alba", "required_hlb_ow", 12, "wangpradit-2022-ocl"),
    ("Cocos Nucifera Oil", "required_hlb_ow", 5.4, "wangpradit-2022-ocl"),
    # Water at 25 C: 0.99705 g/mL and 0.890 mPa s (CRC Handbook; IAPWS 2008).
    ("Aqua", "density", 0.99705, "crc-handbook"),
    ("Aqua", "viscosity_mpas", 0.890, "crc-handbook"),
]


def _split(cell: str) -> list[str]:
    return [item.strip() for item in cell.split(";") if item.strip()]


@pytest.fixture(scope="module")
def ingredients() -> list[dict[str, str]]:
    return read_seed("ingredients.csv")


@pytest.fixture(scope="module")
def by_name(ingredients: list[dict[str, str]]) -> dict[str, dict[str, str]]:
    """Every INCI name and synonym (compared case-insensitively) -> its ingredient row."""
    found: dict[str, dict[str, str]] = {}
    for row in ingredients:
        for name in [row["inci_name"], *_split(row["synonyms"])]:
            found[name_key(name)] = row
    return found


def _ingredient_in(row: dict[str, str]) -> IngredientIn:
    values = {p: row[p] for p in PROPERTY_NAMES if row.get(p, "").strip()}
    return IngredientIn(
        inci_name=row["inci_name"], synonyms=tuple(_split(row["synonyms"])),
        cas_numbers=tuple(_split(row["cas"])), roles=row["roles"], classes=row["classes"],
        properties=IngredientProperties(**values),
        sources={p: row[f"{p}_source"] for p in values},
        notes={p: row[f"{p}_note"] for p in values if row.get(f"{p}_note")})


@pytest.mark.parametrize("name, count", sorted(ROW_COUNTS.items()))
def test_row_count(name: str, count: int) -> None:
    assert len(read_seed(name)) == count


def test_sources_are_unique_and_well_formed(sources: dict[str, dict[str, str]]) -> None:
    keys = [row["key"] for row in read_seed("sources.csv")]
    assert len(keys) == len(set(keys))
    evidence = {e.value for e in Evidence}
    for key, row in sources.items():
        assert re.fullmatch(r"[a-z0-9][a-z0-9.-]*", key), key
        assert row["citation"].strip(), key
        assert row["evidence"] in evidence, key
        assert row["seen"] in {"found", "found-secondary", "memory", "calc"}, key
        assert not row["url"] or row["url"].startswith(("http://", "https://")), key
    assert sources["rule-of-thumb"]["evidence"] == "rule of thumb"
    assert sources["from-memory"]["evidence"] == "from memory"


def test_memory_and_calc_sources_claim_no_more_than_they_are(
        sources: dict[str, dict[str, str]]) -> None:
    """A source recalled, not seen, must say 'from memory' (or 'rule of thumb'); a computed one
    'estimated'. A seen source may not hide behind 'from memory'."""
    for key, row in sources.items():
        if row["seen"] == "memory":
            assert row["evidence"] in {"from memory", "rule of thumb"}, key
        elif row["seen"] == "calc":
            assert row["evidence"] == "estimated", key
        else:
            assert row["evidence"] != "from memory", key


def test_every_source_key_resolves(sources: dict[str, dict[str, str]],
                                   ingredients: list[dict[str, str]]) -> None:
    used: list[tuple[str, str]] = [
        (f"ingredients.csv {row['inci_name']}.{prop}", row[f"{prop}_source"])
        for row in ingredients for prop in PROPERTY_NAMES if row.get(prop, "").strip()]
    for name in ("limits.csv", "incompatibilities.csv", "soap_pairs.csv"):
        used += [(f"{name} row {i}", row["source"])
                 for i, row in enumerate(read_seed(name), start=2)]
    # other seed tables that carry a source column (e.g. the SCCS exposure table)
    for path in sorted(SEED.glob("*.csv")):
        if path.name not in ROW_COUNTS:
            rows = read_seed(path.name)
            used += [(f"{path.name} row {i}", row["source"])
                     for i, row in enumerate(rows, start=2) if "source" in row]
    missing = [(where, key) for where, key in used if key not in sources]
    assert not missing


def test_every_source_is_cited_somewhere(sources: dict[str, dict[str, str]]) -> None:
    """sources.csv holds only sources actually cited: as a value's source, or named by key in
    another source's note or a value's note (e.g. the method behind a computed value)."""
    text_by_file = {p.name: p.read_text(encoding="utf-8") for p in SEED.glob("*.csv")}
    def names(key: str, text: str) -> bool:
        return re.search(rf"(?<![\w-]){re.escape(key)}(?![\w-])", text) is not None

    cited_keys = {k for name, text in text_by_file.items() if name != "sources.csv"
                  for k in sources if names(k, text)}
    cited_keys |= {key for key in sources for other, row in sources.items()
                   if other != key and names(key, row["note"] + row["citation"])}
    assert set(sources) - cited_keys == set()


def test_ingredient_columns_are_the_catalogue() -> None:
    with open(SEED / "ingredients.csv", newline="", encoding="utf-8") as handle:
        header = next(csv.reader(handle))
    assert header[:5] == INGREDIENT_FIXED
    assert len(header) == len(set(header))
    for column in header[5:]:
        prop = re.sub(r"_(source|note)$", "", column)
        assert prop in IngredientProperties.model_fields, column
        assert f"{prop}_source" in header, column
    assert set(PROPERTY_NAMES) <= set(header)  # every property has its column


def test_every_row_validates_as_ingredient_input(ingredients: list[dict[str, str]]) -> None:
    for row in ingredients:
        _ingredient_in(row)
        for prop in PROPERTY_NAMES:  # a source or a note never hangs on an empty value
            if not row.get(prop, "").strip():
                assert not row.get(f"{prop}_source") and not row.get(f"{prop}_note"), (
                    row["inci_name"], prop)


def test_names_and_synonyms_unique_case_insensitively(ingredients: list[dict[str, str]]) -> None:
    keys = [name_key(n) for row in ingredients
            for n in [row["inci_name"], *_split(row["synonyms"])]]
    duplicates = {k for k in keys if keys.count(k) > 1}
    assert not duplicates


def test_every_cas_passes_its_check_digit(ingredients: list[dict[str, str]]) -> None:
    bad = [(row["inci_name"], cas) for row in ingredients for cas in _split(row["cas"])
           if not cas_is_valid(cas)]
    assert not bad
    # water 7732-18-5 (CAS Registry check-digit example): the check itself can fail
    assert not cas_is_valid("7732-18-4")


def test_every_class_is_a_compat_class(ingredients: list[dict[str, str]]) -> None:
    used = {c for row in ingredients for c in _split(row["classes"])}
    for row in read_seed("incompatibilities.csv"):
        used |= {row["class_a"], row["class_b"]}
    assert used - set(COMPAT_CLASSES) == set()


@pytest.mark.parametrize("inci, synonyms", sorted(DESIGN_NAMES.items()))
def test_design_ingredient_present(inci: str, synonyms: tuple[str, ...],
                                   by_name: dict[str, dict[str, str]]) -> None:
    row = by_name.get(name_key(inci))
    assert row is not None and row["inci_name"] == inci
    for synonym in synonyms:
        assert by_name[name_key(synonym)]["inci_name"] == inci
    assert row["roles"].strip()


@pytest.mark.parametrize("inci, prop, value, source", PUBLISHED)
def test_published_value(inci: str, prop: str, value: float, source: str,
                         by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert float(row[prop]) == pytest.approx(value)
    assert row[f"{prop}_source"] == source


def test_fatty_alcohol_keeps_emulsifier_hlb_and_required_hlb_apart(
        by_name: dict[str, dict[str, str]]) -> None:
    # Cetyl alcohol: HLB 1 as an emulsifier (Birdi Table 9.3) and required HLB about 15 as an oil
    # (teaching document; science.md section 4): two properties.
    row = by_name["cetyl alcohol"]
    assert float(row["hlb"]) == 1 and float(row["required_hlb_ow"]) == 15


def test_computed_hlb_values_reproduce(by_name: dict[str, dict[str, str]]) -> None:
    # Davies 1957 group numbers: -COO-Na+ 19.1, -COO-K+ 21.1, 0.475 per CHx (17 in a C18 acid).
    assert float(by_name["sodium stearate"]["hlb"]) == pytest.approx(7 + 19.1 - 17 * 0.475,
                                                                      abs=0.05)
    assert float(by_name["potassium stearate"]["hlb"]) == pytest.approx(7 + 21.1 - 17 * 0.475,
                                                                         abs=0.05)
    # Griffin 1954 E/5 with EO 44.053 g/mol and stearyl alcohol 270.50 g/mol: steareth-20 15.30.
    e = 20 * 44.053 / (270.50 + 20 * 44.053) * 100
    assert float(by_name["steareth-20"]["hlb"]) == pytest.approx(e / 5, abs=0.05)
    for name in ("steareth-20", "sodium stearate", "potassium stearate", "ceteth-20", "laureth-4"):
        assert by_name[name]["hlb_source"] in {"calc-davies", "calc-griffin-e5"}


_ATOMIC = {"H": 1.008, "C": 12.011, "O": 15.999, "Na": 22.990, "Mg": 24.305, "K": 39.098,
           "N": 14.007}  # IUPAC standard atomic weights (abridged)


def _formula_mass(formula: str) -> float:
    return sum(_ATOMIC[el] * int(n or 1) for el, n in re.findall(r"([A-Z][a-z]?)(\d*)", formula))


@pytest.mark.parametrize("inci, formula", [
    ("Stearic Acid", "C18H36O2"), ("Oleic Acid", "C18H34O2"), ("Sodium Hydroxide", "NaOH"),
    ("Potassium Hydroxide", "KOH"), ("Triethanolamine", "C6H15NO3"), ("Magnesium Oxide", "MgO"),
    ("Benzoic Acid", "C7H6O2"), ("Sodium Benzoate", "C7H5NaO2"), ("Sorbic Acid", "C6H8O2"),
    ("Potassium Sorbate", "C6H7KO2"), ("4-Hydroxybenzoic Acid", "C7H6O3"),
    ("Methylparaben", "C8H8O3"), ("Magnesium Stearate", "C36H70MgO4"),
])
def test_molar_mass_matches_formula(inci: str, formula: str,
                                    by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert float(row["molar_mass"]) == pytest.approx(_formula_mass(formula), abs=0.01)


@pytest.mark.parametrize("base, equivalents, valence, water", [
    # stoichiometry: NaOH/KOH + RCOOH -> soap + H2O; MgO + 2 RCOOH -> Mg soap + H2O; amine: no water
    ("Sodium Hydroxide", 1, 1, 1), ("Potassium Hydroxide", 1, 1, 1),
    ("Triethanolamine", 1, 1, 0), ("Magnesium Oxide", 2, 2, 0.5),
])
def test_bases_carry_their_stoichiometry(base: str, equivalents: float, valence: int,
                                         water: float, by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(base)]
    assert (float(row["base_equivalents"]), int(row["cation_valence"]),
            float(row["neutralisation_water"])) == (equivalents, valence, water)


def test_values_marked_memory_cite_a_memory_source(
        ingredients: list[dict[str, str]], sources: dict[str, dict[str, str]]) -> None:
    """A note that says a value was recalled must not hang on a source seen in a copy."""
    for row in ingredients:
        for prop in PROPERTY_NAMES:
            note = row.get(f"{prop}_note", "").casefold()
            if row.get(prop) and note.startswith(("uncertain", "recalled")):
                assert sources[row[f"{prop}_source"]]["seen"] == "memory", (row["inci_name"], prop)


# --- limits ----------------------------------------------------------------------------------

def _limits() -> list[LimitRecord]:
    return [LimitRecord(
            key=row["key"], jurisdiction=row["jurisdiction"], list_name=row["list_name"],
            entry=row["entry"], ingredients=tuple(_split(row["ingredients"])),
            category=row["category"], product=row["product"] or None,
            max_percent=float(row["max_percent"]) if row["max_percent"] else None,
            ph_min=float(row["ph_min"]) if row["ph_min"] else None,
            ph_max=float(row["ph_max"]) if row["ph_max"] else None, aggregate=row["aggregate"],
            basis=row["basis"], acid_inci=row["acid_inci"] or None,
            excludes=tuple(_split(row["excludes"])), conditions=row["conditions"] or None,
            source=row["source"], list_date=date.fromisoformat(row["list_date"]))
        for row in read_seed("limits.csv")]


def test_limits_are_well_formed_and_resolve(by_name: dict[str, dict[str, str]],
                                            sources: dict[str, dict[str, str]]) -> None:
    limits = _limits()
    keys = [lim.key for lim in limits]
    assert len(keys) == len(set(keys))
    products = {row["product"] for row in read_seed("exposure.csv")} \
        if (SEED / "exposure.csv").exists() else set()
    for lim in limits:
        assert lim.jurisdiction == "EU"
        assert lim.category in {"leave-on", "rinse-off", "any"}
        assert lim.aggregate in {"each", "sum"} and lim.basis in {"as-is", "as-acid"}
        if lim.max_percent is None:  # a row that limits the pH only (III/15a)
            assert lim.ph_max is not None or lim.ph_min is not None, lim.key
        else:
            assert 0 <= lim.max_percent <= 100 and not math.isnan(lim.max_percent)
        for inci in (*lim.ingredients, *([lim.acid_inci] if lim.acid_inci else [])):
            assert by_name[name_key(inci)]["inci_name"] == inci, (lim.key, inci)
        if lim.basis == "as-acid":
            assert lim.acid_inci and by_name[name_key(lim.acid_inci)]["molar_mass"], lim.key
            for inci in lim.ingredients:  # the conversion needs both molar masses
                assert by_name[name_key(inci)]["molar_mass"], (lim.key, inci)
        # excludes names entries of the same list (LimitRecord; the exclusive-entries rule)
        entries = {x.entry for x in limits if x.list_name == lim.list_name}
        assert set(lim.excludes) <= entries - {lim.entry}, lim.key
        assert lim.source in sources
        if products and lim.product:
            assert lim.product in products, lim.key  # a product type of the exposure table


def test_limits_match_the_regulatory_reference() -> None:
    """Figures of /work/shared/references/regulatory.md section 1.2 (and science.md section 9)."""
    lim = {x.key: x for x in _limits()}
    # Annex V/1 benzoic acid and sodium benzoate (legislation.gov.uk Annex V, 2017-09-03)
    assert (lim["eu-v-1-rinse-off"].max_percent, lim["eu-v-1-leave-on"].max_percent) == (2.5, 0.5)
    assert lim["eu-v-1-leave-on"].basis == "as-acid"
    assert lim["eu-v-1-leave-on"].acid_inci == "Benzoic Acid"
    # Annex V/4 sorbic acid and its salts 0.6 % as acid (Directive 76/768 Annex VI text)
    assert (lim["eu-v-4"].max_percent, lim["eu-v-4"].acid_inci) == (0.6, "Sorbic Acid")
    # Annex V/12 and 12a parabens (Reg. (EU) No 1004/2014, seen second-hand)
    assert (lim["eu-v-12-single"].max_percent, lim["eu-v-12-single"].aggregate) == (0.4, "each")
    assert (lim["eu-v-12-mixture"].max_percent, lim["eu-v-12-mixture"].aggregate) == (0.8, "sum")
    assert (lim["eu-v-12a"].max_percent, lim["eu-v-12a"].aggregate) == (0.14, "sum")
    assert set(lim["eu-v-12a"].ingredients) == {"Propylparaben", "Butylparaben"}
    # Annex V/57 methylisothiazolinone: rinse-off 0.0015 % (Reg. (EU) 2017/1224), leave-on not
    # allowed (Reg. (EU) 2016/1198, from memory); V/39 and V/57 exclude each other (Reg. 1003/2014)
    assert lim["eu-v-57-rinse-off"].max_percent == 0.0015
    leave_on = lim["eu-v-57-leave-on"]
    assert (leave_on.max_percent, leave_on.category) == (0, "leave-on")
    for key in ("eu-v-57-rinse-off", "eu-v-57-leave-on"):
        assert lim[key].excludes == ("V/39",)
    for key in ("eu-v-39-rinse-off", "eu-v-39-leave-on"):
        assert lim[key].excludes == ("V/57",)
    # Annex V/29 phenoxyethanol 1 % (SCCS/1575/16 summaries); V/3 salicylic acid 0.5 % (ECHA)
    assert lim["eu-v-29"].max_percent == 1.0 and lim["eu-v-3"].max_percent == 0.5
    # Annex VI UV filters (legislation.gov.uk Annex VI 2020-12-31; Reg. (EU) 2022/1176)
    for key, value in {"eu-vi-27": 25, "eu-vi-30": 25, "eu-vi-10": 10, "eu-vi-8": 5,
                       "eu-vi-12": 10}.items():
        assert lim[key].max_percent == value, key
    # Annex III/286 (Reg. (EU) No 866/2014): rinse-off hair 2.5, leave-on hair 1.0, face 0.5
    assert lim["eu-iii-286-shampoo"].max_percent == 2.5
    assert lim["eu-iii-286-hair-styling"].max_percent == 1.0
    assert lim["eu-iii-286-face-cream"].max_percent == 0.5
    assert lim["eu-iii-287-hair-conditioner"].max_percent == 5.0
    # Annex III/98 salicylic acid (Reg. (EU) 2019/1966): 3.0 / 2.0 / 0.5 (body lotion)
    assert lim["eu-iii-98-shampoo"].max_percent == 3.0
    assert lim["eu-iii-98-other"].max_percent == 2.0
    assert lim["eu-iii-98-body-lotion"].max_percent == 0.5
    # Annex III/62 triethanolamine 2.5 % leave-on: from memory, so its source says so
    assert lim["eu-iii-62"].max_percent == 2.5
    assert lim["eu-iii-62"].source == "reg-1223-2009-annex-iii-recalled"


def test_limits_from_memory_cite_a_memory_source(sources: dict[str, dict[str, str]]) -> None:
    # regulatory.md marks these "memory": chlorphenesin, dehydroacetic acid, benzyl alcohol 1 %,
    # triethanolamine 2.5 %, behentrimonium leave-on limits, the MI leave-on ban act.
    for key in ("eu-v-50", "eu-v-13", "eu-v-34", "eu-iii-62", "eu-iii-287-hair-styling",
                "eu-iii-287-face-cream", "eu-v-57-leave-on"):
        source = next(r["source"] for r in read_seed("limits.csv") if r["key"] == key)
        assert sources[source]["seen"] == "memory", key


# --- incompatibilities and soap pairs ---------------------------------------------------------

def test_incompatibilities_are_well_formed(sources: dict[str, dict[str, str]]) -> None:
    rows = [Incompatibility(**row) for row in read_seed("incompatibilities.csv")]
    keys = [r.key for r in rows]
    assert len(keys) == len(set(keys))
    pairs = [frozenset((r.class_a, r.class_b)) for r in rows]
    assert len(pairs) == len(set(pairs))  # one row per pair of classes
    assert all(r.source in sources and r.reason and r.advice for r in rows)
    by_pair = {frozenset((r.class_a, r.class_b)): r for r in rows}
    # Yuli, Tzafrir & Salama, Cosmetics 10(2):45 (2023): sulfate + quaternary binds most strongly
    # (error); carboxylate soaps up to ~10x weaker (warning)
    assert by_pair[frozenset(("sulfate anionic", "quaternary cationic"))].severity == "error"
    assert by_pair[frozenset(("carboxylate soap", "quaternary cationic"))].severity == "warning"
    # EU Annex III alkanolamine conditions (ECHA list): no nitrosating systems
    assert by_pair[frozenset(("alkanolamine", "nitrosating agent"))].severity == "error"


def test_soap_pairs_resolve(by_name: dict[str, dict[str, str]],
                            sources: dict[str, dict[str, str]]) -> None:
    rows = [SoapPair(**row) for row in read_seed("soap_pairs.csv")]
    assert len({(r.acid_inci, r.base_inci) for r in rows}) == len(rows)
    for pair in rows:
        acid, base, soap = (by_name[name_key(n)] for n in (pair.acid_inci, pair.base_inci,
                                                           pair.soap_inci))
        assert (acid["inci_name"], base["inci_name"], soap["inci_name"]) == (
            pair.acid_inci, pair.base_inci, pair.soap_inci)
        assert acid["molar_mass"] and base["molar_mass"] and soap["molar_mass"]
        assert base["base_equivalents"] and base["cation_valence"]
        assert "carboxylate soap" in _split(soap["classes"])
        assert pair.source in sources
        # the soap's molar mass follows from the pair: acid + base/eq - water/eq x 18.015 per acid
        eq, water = float(base["base_equivalents"]), float(base["neutralisation_water"])
        per_acid = float(acid["molar_mass"]) + float(base["molar_mass"]) / eq - water * 18.015
        assert float(soap["molar_mass"]) == pytest.approx(per_acid * eq, abs=0.05), pair.soap_inci


# Densities checked against pharmacopoeial specific gravity ranges read in copies of the
# monographs (sources.csv names each page). USP <841> specific gravity is 25/25 C and
# Ph. Eur. relative density 20/20 C, so density = ratio x water's density at that temperature
# (0.99705 g/mL at 25 C, 0.99820 at 20 C).
PHARMACOPOEIA_DENSITY = [
    # USP 29-NF 24 Isopropyl Myristate: specific gravity 0.846-0.854.
    ("Isopropyl Myristate", 0.846, 0.854, 0.99705, "usp29-nf24-isopropyl-myristate"),
    # USP 29-NF 24 Glycerin: specific gravity not less than 1.249.
    ("Glycerin", 1.249, 1.265, 0.99705, "usp29-nf24-glycerin"),
    # USP 29-NF 24 Propylene Glycol: specific gravity 1.035-1.037.
    ("Propylene Glycol", 1.035, 1.037, 0.99705, "usp29-nf24-propylene-glycol"),
    # USP 29-NF 24 Castor Oil: specific gravity 0.957-0.961.
    ("Ricinus Communis Seed Oil", 0.957, 0.961, 0.99705, "usp29-nf24-castor-oil"),
    # USP 35-NF 30 Mineral Oil (Rectal): specific gravity 0.845-0.905.
    ("Paraffinum Liquidum", 0.845, 0.905, 0.99705, "usp35-nf30-mineral-oil-rectal"),
    # USP 32-NF 27 Oleic Acid: specific gravity 0.889-0.895.
    ("Oleic Acid", 0.889, 0.895, 0.99705, "usp32-nf27-oleic-acid"),
    # USP 32-NF 27 Trolamine: specific gravity 1.120-1.128.
    ("Triethanolamine", 1.120, 1.128, 0.99705, "usp32-nf27-trolamine"),
    # Ph. Eur. 0256 (BP 2025) Benzyl Alcohol: relative density 1.043-1.049.
    ("Benzyl Alcohol", 1.043, 1.049, 0.99820, "bp2025-benzyl-alcohol"),
]


@pytest.mark.parametrize("inci, low, high, water, source", PHARMACOPOEIA_DENSITY)
def test_density_within_pharmacopoeial_specific_gravity(
        inci: str, low: float, high: float, water: float, source: str,
        by_name: dict[str, dict[str, str]]) -> None:
    row = by_name[name_key(inci)]
    assert row["density_source"] == source
    assert low * water <= float(row["density"]) <= high * water


def test_unverified_share_of_property_values(sources: dict[str, dict[str, str]],
                                             ingredients: list[dict[str, str]]) -> None:
    """Issue 12 counts values graded from memory or a rule of thumb; pinned so a change is
    deliberate (seed_data/README.md gives the before and after figures)."""
    cited = [row[column] for row in ingredients for column in row
             if column.endswith("_source") and row[column]]
    unverified = [key for key in cited
                  if sources[key]["evidence"] in ("from memory", "rule of thumb")]
    assert (len(cited), len(unverified)) == (598, 224)


def test_the_seed_readme_counts_the_rows_of_every_file() -> None:
    """seed_data/README.md's table of files says how many rows each holds; it said 92 sources
    when the file held 172."""
    table = (SEED / "README.md").read_text(encoding="utf-8")
    stated = {name: int(count) for name, count in
              re.findall(r"^\| `([a-z_]+\.csv)` \| (\d+) \|", table, flags=re.MULTILINE)}
    assert stated, "the README's table of files was not found"
    for name, count in stated.items():
        assert len(read_seed(name)) == count, name
