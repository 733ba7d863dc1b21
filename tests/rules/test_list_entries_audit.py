"""LIM03 against realistic regulatory cases, read in the Commission's annex exports of
31/10/2025 (Regulation (EC) No 1223/2009 Annexes II-VI, files COSING_Annex_*_v2.txt, read in
place). Each test names the annex and reference number whose text decides what a careful
reviewer expects: an error, a condition to confirm by hand, or no objection. Skips with a
reason where the exports are not on the machine.
"""

from __future__ import annotations

import pytest

from formdb.rules.limits import acid_units
from formdb.schemas.findings import Finding
from formdb.schemas.lists import ListEntry
from formdb.services.lists.importing import read_export
from formdb.services.lists.parse import exclusions, parse_maximum
from formdb.store.library import Library
from tests.conftest import TEST_USER
from tests.helpers import ANNEX_EXPORTS, needs_annex_exports
from tests.rules.test_list_entries import formula, lim

pytestmark = needs_annex_exports()


@pytest.fixture
def library(lists_library: Library) -> Library:
    """The seed library with the five exports imported (tests/rules/conftest.py), this test's."""
    return lists_library


def entry_findings(found: list[Finding], entry: str) -> list[Finding]:
    return [f for f in found if f.values.get("entry") == entry]


def one(found: list[Finding], entry: str) -> Finding:
    hits = entry_findings(found, entry)
    assert len(hits) == 1, [f.message for f in found]
    return hits[0]


def severities(found: list[Finding], entry: str) -> set[str]:
    return {f.severity.value for f in entry_findings(found, entry)}


def _set(library: Library, name: str, **values: str) -> None:
    from formdb.services.library.ingredients import edit_ingredient

    with library.write() as session:
        edit_ingredient(session, name, list(values.items()), user=TEST_USER,
                        source="from-memory", reason="test")


# ----- Annex II: prohibitions limited to one use --------------------------------------------

def test_hair_dye_prohibition_is_not_a_colorant_prohibition(library: Library) -> None:
    """II/1342: Acid Green 1 (CI 10020) is prohibited "when used as a substance in hair dye
    products"; IV/2 allows it as a colorant except on mucous membranes. A body lotion coloured
    with it breaks neither (it was an error at any concentration); a lipstick breaks IV/2."""
    body = lim(library, formula([("CI 10020", 0.1, "colorant")], product="body lotion"))
    assert severities(body, "II/1342") == {"info"}
    assert "does not apply" in one(body, "II/1342").message
    assert severities(body, "IV/2") == {"info"}
    lipstick = lim(library, formula([("CI 10020", 0.1, "colorant")], product="lipstick"))
    assert severities(lipstick, "IV/2") == {"error"}
    assert severities(lipstick, "II/1342") == {"info"}


def test_hair_dye_prohibition_asks_without_a_product(library: Library) -> None:
    """II/1342 with no product named: a hair dye cannot be ruled out, so a warning, not
    silence and not an error."""
    found = lim(library, formula([("CI 10020", 0.1, "colorant")]))
    assert severities(found, "II/1342") == {"warning"}


def test_fragrance_ingredient_prohibition_follows_the_purpose(library: Library) -> None:
    """II/424: benzyl cyanide (INCI PHENYLACETONITRILE) is prohibited "when used as a fragrance
    ingredient": an error as fragrance, nothing to do as a solvent, a question without a
    purpose."""
    def verdict(purpose: str | None) -> set[str]:
        return severities(lim(library, formula([("Phenylacetonitrile", 0.01, purpose)],
                                               product="body lotion")), "II/424")

    assert verdict("fragrance") == {"error"}
    assert verdict("solvent") == {"info"}
    assert verdict(None) == {"warning"}


def test_unconditional_prohibition_stays_an_error(library: Library) -> None:
    """II/1666 butylphenyl methylpropional (Reg. (EU) 2021/1902) and II/1670 zinc pyrithione
    have no use limit: an error at any level, whatever the purpose and the name's case or
    spacing."""
    found = lim(library, formula([("butylphenyl   METHYLPROPIONAL", 0.001, "fragrance")],
                                 product="body lotion"))
    assert severities(found, "II/1666") == {"error"}
    found = lim(library, formula([("Zinc Pyrithione", 0.5, "active")], category="rinse-off",
                                 product="shampoo"))
    assert severities(found, "II/1670") == {"error"}


def test_names_from_chemical_names_leave_the_use_out() -> None:
    """II/423 gives no INCI name, only "Alanroot oil (Inula helenium L.) (CAS No 97676-35-2),
    when used as a fragrance ingredient": the record is the oil, the use is the condition."""
    entries = {e.key: e for e in read_export(ANNEX_EXPORTS / "COSING_Annex_II_v2.txt").entries}
    alanroot = entries["423"]
    assert alanroot.inci_names == ("Alanroot oil (Inula helenium L.) (CAS No 97676-35-2)",)
    assert alanroot.only_when == "when used as a fragrance ingredient"
    assert sum(1 for e in entries.values() if "hair" in e.only_when) >= 145


def test_prohibited_inside_a_nested_blend(library: Library) -> None:
    """II/1666 inside a fragrance accord (2 %) inside a perfume base (20 %) at 0.5 %: 0.002 %
    of the product, prohibited at any level."""
    from formdb.services.library.ingredients import add_ingredient
    from formdb.services.library.mixtures import Part, declare

    with library.write() as session:
        for name in ("Larkspur Floral Accord", "Larkspur Perfume Base"):
            add_ingredient(session, name, user=TEST_USER, reason="test")
        declare(session, "Larkspur Floral Accord",
                [Part("Butylphenyl Methylpropional", 2.0, "from-memory"),
                 Part("Linalool", 10.0, "from-memory")], partial=True, user=TEST_USER,
                reason="test")
        declare(session, "Larkspur Perfume Base",
                [Part("Larkspur Floral Accord", 20.0, "from-memory")], partial=True,
                user=TEST_USER, reason="test")
    found = lim(library, formula([("Larkspur Perfume Base", 0.5, "fragrance")],
                                 product="body lotion"))
    hit = one(found, "II/1666")
    assert hit.severity.value == "error" and "Larkspur Floral Accord" in hit.message


# ----- one entry, one maximum: the entry's substances together ------------------------------

def test_benzoic_acid_and_its_sodium_salt_together(library: Library) -> None:
    """V/1 (c): benzoic acid and its sodium salt, 0.5 % (acid) in leave-on products. 0.3 %
    benzoic acid with 0.3 % sodium benzoate is 0.3 + 0.3 x 122.12/144.10 = 0.554 % as acid:
    over, though each line alone is within (it passed). 0.2 % + 0.3 % = 0.454 %: within."""
    over = lim(library, formula([("Benzoic Acid", 0.3, "preservative"),
                                 ("Sodium Benzoate", 0.3, "preservative")],
                                product="body lotion"))
    assert severities(over, "V/1") == {"error"}
    assert all("0.5542 % as acid is over" in f.message and "together" in f.message
               for f in entry_findings(over, "V/1"))
    within = lim(library, formula([("Benzoic Acid", 0.2, "preservative"),
                                   ("Sodium Benzoate", 0.3, "preservative")],
                                  product="body lotion"))
    assert severities(within, "V/1") == {"info"}


def test_sorbic_acid_and_potassium_sorbate_together(library: Library) -> None:
    """V/4: sorbic acid and its salts, 0.6 % (acid). 0.5 % potassium sorbate (0.373 % as acid,
    M 112.13/150.22) with 0.3 % sorbic acid is 0.673 %: over."""
    found = lim(library, formula([("Potassium Sorbate", 0.5, "preservative"),
                                  ("Sorbic Acid", 0.3, "preservative")],
                                 product="body lotion"))
    assert severities(found, "V/4") == {"error"}


def test_salicylic_acid_levels_include_every_use(library: Library) -> None:
    """III/98 "These levels are inclusive of any use of salicylic acid": 0.4 % as a
    preservative (V/3, within its 0.5 %) and 0.3 % as an active in a body lotion are 0.7 %
    against the 0.5 % of part (c). It passed: the active line alone was judged."""
    found = lim(library, formula([("Salicylic Acid", 0.4, "preservative"),
                                  ("Salicylic Acid", 0.3, "active")], product="body lotion"))
    assert severities(found, "III/98") == {"error", "info"}  # info: not for the preservative
    iii = [f for f in entry_findings(found, "III/98") if f.severity.value == "error"]
    assert len(iii) == 1 and "0.7 % is over" in iii[0].message
    v3 = [f for f in entry_findings(found, "V/3") if "within" in f.message]
    assert [f.severity.value for f in v3] == ["info"]


def test_parabens_single_ester_and_mixture(library: Library) -> None:
    """V/12: "0,4 % (as acid) for single ester, 0,8 % (as acid) for mixtures of esters".
    Methylparaben 0.3 % with ethylparaben 0.3 % is no error (each is under 0.4 % as acid,
    together 0.52 % under 0.8 %). Methylparaben 0.44 %, ethylparaben 0.48 % and sodium
    methylparaben 0.2 % are 0.3994 + 0.3990 + 0.1586 = 0.957 % as acid (M 138.12 / 152.15,
    166.17, 174.13): over the mixture's 0.8 %, though each is within its 0.4 %."""
    assert parse_maximum("0,4% (as acid) for single ester\n0,8% (as acid) for mixtures of "
                         "esters")[2] == "single"
    pair = lim(library, formula([("Methylparaben", 0.3, "preservative"),
                                 ("Ethylparaben", 0.3, "preservative")], product="body lotion"))
    assert severities(pair, "V/12") == {"info"}
    three = formula([("Methylparaben", 0.44, "preservative"),
                     ("Ethylparaben", 0.48, "preservative"),
                     ("Sodium Methylparaben", 0.2, "preservative")], product="body lotion")
    # no molar mass for the sodium salt: over as-is, a person converts it
    assert severities(lim(library, three), "V/12") == {"warning"}
    _set(library, "Sodium Methylparaben", molar_mass="174.13")
    found = lim(library, three)
    assert severities(found, "V/12") == {"error"}
    assert "for mixtures" in entry_findings(found, "V/12")[0].message


def test_parabens_of_entries_12_and_12a_together(library: Library) -> None:
    """V/12a: "0,14 % (as acid) for the sum of the individual concentrations" of butyl- and
    propylparaben, and "0,8 % (as acid) for mixtures of substances mentioned in entry 12 and
    12a". Methylparaben 0.42 %, ethylparaben 0.45 % and propylparaben 0.15 % are each within
    their entry (V/12: 0.3813 + 0.3741 = 0.755 % as acid, under its 0.8 % for mixtures; V/12a:
    0.1150 % under 0.14 %), but together 0.870 % as acid (M 138.12 / 152.15, 166.17, 180.20),
    over the 0.8 % for mixtures of both entries: an error the seed's hand-written V/12 row also
    gives. Methylparaben 0.3 % with propylparaben 0.1 % (0.349 % as acid) is within."""
    part = read_export(ANNEX_EXPORTS / "COSING_Annex_V_v2.txt")
    v12a = next(e for e in part.entries if e.ref == "12a").parts[0]
    assert (v12a.max_percent, v12a.joint_max, v12a.joint_refs) == (0.14, 0.8, ("12", "12a"))
    trio = lim(library, formula([("Methylparaben", 0.42, "preservative"),
                                 ("Ethylparaben", 0.45, "preservative"),
                                 ("Propylparaben", 0.15, "preservative")],
                                product="body lotion"))
    assert severities(trio, "V/12") == {"info"}
    over = one(trio, "V/12a")
    assert over.severity.value == "error"
    assert "entries V/12 and V/12a together" in over.message
    assert "= 0.8703 % as acid" in over.message
    # the maxima for mixtures are judged, so they are not also left to a person (LIM04)
    conditions = lim(library, formula([("Methylparaben", 0.42, "preservative"),
                                       ("Ethylparaben", 0.45, "preservative"),
                                       ("Propylparaben", 0.15, "preservative")],
                                      product="body lotion"), code="LIM04")
    assert not entry_findings(conditions, "V/12")
    assert "0,8%" not in one(conditions, "V/12a").message
    assert "children under 3 years" in one(conditions, "V/12a").message
    pair = lim(library, formula([("Methylparaben", 0.3, "preservative"),
                                 ("Propylparaben", 0.1, "preservative")],
                                product="body lotion"))
    assert severities(pair, "V/12a") == {"info"}
    assert "together" not in one(pair, "V/12a").message


def test_steartrimonium_chloride_despite_the_exports_misspelling(library: Library) -> None:
    """III/286 (Regulation (EU) 2014/866): "C16-alkyltrimethylammonium chloride,
    C18-alkyltrimethylammonium chloride", rinse-off hair products 2.5 %, leave-on hair 1.0 %,
    leave-on face 0.5 %. The export spells the C18 one's INCI name "STRARTRIMONIUM CHLORIDE" and
    gives cetrimonium chloride's CAS number alone, so steartrimonium chloride (CAS 112-03-8) found
    no entry: 3 % in a hair conditioner, and any amount in a body lotion, passed unseen."""
    entry = next(e for e in read_export(ANNEX_EXPORTS / "COSING_Annex_III_v2.txt").entries
                 if e.ref == "286")
    assert "STEARTRIMONIUM CHLORIDE" in entry.inci_names
    assert "STRARTRIMONIUM CHLORIDE" in entry.inci_names  # as exported, kept
    assert len(entry.misspelt) == 1 and "STRARTRIMONIUM" in entry.misspelt[0]
    rinse = lim(library, formula([("Steartrimonium Chloride", 3.0, "conditioning")],
                                 product="hair conditioner", category="rinse-off"))
    assert severities(rinse, "III/286") == {"error"}
    together = lim(library, formula([("Cetrimonium Chloride", 1.5, "conditioning"),
                                     ("Steartrimonium Chloride", 1.5, "conditioning")],
                                    product="hair conditioner", category="rinse-off"))
    assert severities(together, "III/286") == {"error"}
    body = lim(library, formula([("Steartrimonium Chloride", 0.5, "conditioning")],
                                product="body lotion"))
    assert severities(body, "III/286") == {"error"}
    within = lim(library, formula([("Steartrimonium Chloride", 2.0, "conditioning")],
                                  product="hair conditioner", category="rinse-off"))
    assert severities(within, "III/286") == {"info"}


def test_quaternium_conditioners_summed_across_entries_286_and_287(library: Library) -> None:
    """III/287 (a), rinse-off hair products: "5,0 % for the individual concentration of
    behentrimonium chloride or the sum of the individual concentrations of cetrimonium chloride,
    steartrimonium chloride and behentrimonium chloride", while respecting III/286's 2.5 % for
    cetrimonium and steartrimonium chloride. A cream rinse with 3.5 % behentrimonium chloride
    (287) and 2.0 % cetrimonium chloride (286) meets each entry alone, and is 5.5 % together."""
    entry = next(e for e in read_export(ANNEX_EXPORTS / "COSING_Annex_III_v2.txt").entries
                 if e.ref == "287")
    assert (entry.parts[0].joint_max, entry.parts[0].joint_names) == (
        5.0, ("cetrimonium chloride", "steartrimonium chloride", "behentrimonium chloride"))
    rinse = formula([("Behentrimonium Chloride", 3.5, "conditioning"),
                     ("Cetrimonium Chloride", 2.0, "conditioning")],
                    product="hair conditioner", category="rinse-off")
    found = lim(library, rinse)
    over = one(found, "III/287")
    assert over.severity.value == "error" and "= 5.5 %" in over.message
    assert severities(found, "III/286") == {"info"}
    within = lim(library, formula([("Behentrimonium Chloride", 2.5, "conditioning"),
                                   ("Cetrimonium Chloride", 2.0, "conditioning")],
                                  product="hair conditioner", category="rinse-off"))
    assert severities(within, "III/287") == {"info"}


def test_methyl_heptine_and_octine_carbonate_combined(library: Library) -> None:
    """III/89 (methyl heptine carbonate, INCI methyl 2-octynoate), other products: 0.01 % alone,
    and "when present in combination with methyl octine carbonate, the combined level in the
    finished product shall not exceed 0,01 %"; III/173 (methyl octine carbonate): 0.002 %.
    0.009 % with 0.002 % meets each entry and is 0.011 % together."""
    both = lim(library, formula([("Methyl 2-Octynoate", 0.009, "fragrance"),
                                 ("Methyl Octine Carbonate", 0.002, "fragrance")],
                                product="body lotion"))
    over = one(both, "III/89")
    assert over.severity.value == "error" and "= 0.011 %" in over.message
    assert severities(both, "III/173") == {"info"}
    alone = lim(library, formula([("Methyl 2-Octynoate", 0.009, "fragrance")],
                                 product="body lotion"))
    assert severities(alone, "III/89") == {"info"}


def test_a_substance_and_its_nano_form_combined(library: Library) -> None:
    """VI/27 and VI/27a (titanium dioxide, and its nano form): 25 % each, and "in case of
    combined use of Titanium Dioxide and Titanium Dioxide (nano), the sum shall not exceed the
    limit of 25%" (27a; 27 says "the limit given in column g", its own 25 %). The same words in
    VI/30 and 30a (zinc oxide), VI/33 and 34; III/308 and 309 (the two Tagetes oils) say "the
    total combined content ... shall not exceed the maximum concentration limits given in column
    g", naming the other entry by number. A sun cream with 15 % titanium dioxide and 12 % of its
    nano form is 27 %: each entry's finding says so."""
    entries = {e.ref: e for a in ("III", "VI") for e in
               read_export(ANNEX_EXPORTS / f"COSING_Annex_{a}_v2.txt").entries
               if e.ref in ("27", "27a", "308")}
    for ref in ("27", "27a"):
        part = entries[ref].parts[0]
        assert (part.joint_max, part.joint_names) == (
            25.0, ("Titanium Dioxide", "Titanium Dioxide (nano)"))
    tagetes = entries["308"].parts
    assert [(p.joint_max, p.joint_refs) for p in tagetes] == [(0.01, ("309",)), (0.1, ("309",))]
    sun = lim(library, formula([("Titanium Dioxide", 15.0, "uv filter"),
                                ("Titanium Dioxide (nano)", 12.0, "uv filter")],
                               product="sunscreen cream"))
    nano = entry_findings(sun, "VI/27a")
    assert [f.severity.value for f in nano] == ["error"]
    assert "together" in nano[0].message and "= 27 %" in nano[0].message
    within = lim(library, formula([("Titanium Dioxide", 13.0, "uv filter"),
                                   ("Titanium Dioxide (nano)", 12.0, "uv filter")],
                                  product="sunscreen cream"))
    assert "error" not in severities(within, "VI/27a") | severities(within, "VI/27")


def test_several_substances_over_only_together_are_asked(library: Library) -> None:
    """III/12 (b): hydrogen peroxide "present or released", 4 % in skin products. 3 % hydrogen
    peroxide with 3 % urea peroxide (which releases about a third of its mass) may be over;
    the export gives no conversion, so a warning to confirm by hand, not silence (it passed)
    and not an error."""
    found = lim(library, formula([("Hydrogen Peroxide", 3.0, "active"),
                                  ("Urea Peroxide", 3.0, "active")], product="face cream"))
    assert severities(found, "III/12") == {"warning"}
    assert all("over only together" in f.message for f in entry_findings(found, "III/12"))


# ----- "Not to be used in ..." in the entry's text ------------------------------------------

def test_salicylic_acid_not_in_oral_products(library: Library) -> None:
    """III/98 and V/3 "Not to be used in oral products": salicylic acid in a toothpaste is not
    allowed, as an active or as a preservative (both passed as within). In V/3 the sentence
    stands in the paragraph "Salicylic acid:"; the paragraph "Salicylic acid salts:" has no
    such sentence, so sodium salicylate in a toothpaste is no error on that count."""
    active = lim(library, formula([("Salicylic Acid", 0.3, "active")], category="rinse-off",
                                  product="toothpaste"))
    assert severities(active, "III/98") == {"error"}
    assert "Not to be used in oral products" in one(active, "III/98").message
    kept = lim(library, formula([("Salicylic Acid", 0.3, "preservative")],
                                category="rinse-off", product="toothpaste"))
    assert "Not to be used in oral products" in next(
        f for f in entry_findings(kept, "V/3") if f.severity.value == "error").message
    salt = lim(library, formula([("Sodium Salicylate", 0.3, "preservative")],
                                category="rinse-off", product="toothpaste"))
    assert "error" not in severities(salt, "V/3")


def test_lauroyl_arginate_not_in_lip_or_oral_products_but_mouthwash(library: Library) -> None:
    """V/58 (b) other products, 0.4 %: "Not to be used in lip products, oral products (other
    than mouthwashes), and spray products". A lipstick and a toothpaste are errors; a
    mouthwash falls under part (a), 0.15 %."""
    assert [e.scope.excluded_products for e in exclusions(
        "Not to be used in lip products, oral products (other than mouthwashes), and spray "
        "products")] == [("mouthwash",)]
    name = "Ethyl-N-alpha-dodecanoyl-L-arginate hydrochloride"

    def verdict(category: str, product: str) -> set[str]:
        return severities(lim(library, formula([(name, 0.1, "preservative")],
                                               category=category, product=product)), "V/58")

    assert verdict("leave-on", "lipstick") == {"error"}
    assert verdict("rinse-off", "toothpaste") == {"error"}
    assert verdict("rinse-off", "mouthwash") == {"info"}
    assert verdict("leave-on", "body lotion") == {"info"}


# ----- "as acid": salts of a divalent cation ------------------------------------------------

def test_calcium_sorbate_holds_two_sorbates() -> None:
    """Calcium sorbate is Ca(C6H7O2)2: one formula unit stands for two of sorbic acid. Read as
    one, 0.71 % (M 262.32) would be 0.30 % as acid; it is 0.71 x 2 x 112.13 / 262.32 = 0.607 %
    (V/4, 0.6 % (acid)). Molar masses from the formulas (standard atomic weights)."""
    assert [acid_units(n) for n in ("Calcium Sorbate", "Magnesium Salicylate",
                                    "Sodium Benzoate", "TEA-Salicylate", "Methylparaben",
                                    "Aluminum Benzoate")] == [2, 2, 1, 1, 1, 3]


def test_calcium_sorbate_over_as_acid(library: Library) -> None:
    """V/4 with the library's molar mass of calcium sorbate (262.32, from the formula):
    0.71 % is 0.607 % as acid, over 0.6 % (it read 0.30 %, within); 0.7 % is 0.598 %,
    within."""
    _set(library, "Calcium Sorbate", molar_mass="262.32")
    over = lim(library, formula([("Calcium Sorbate", 0.71, "preservative")],
                                product="body lotion"))
    assert severities(over, "V/4") == {"error"}
    assert "0.607 % as acid is over" in one(over, "V/4").message
    within = lim(library, formula([("Calcium Sorbate", 0.7, "preservative")],
                                  product="body lotion"))
    assert severities(within, "V/4") == {"info"}


def test_just_over_says_by_how_much(library: Library) -> None:
    """V/1 (c): 0.59 % sodium benzoate is 0.59 x 122.12 / 144.10 = 0.5000056 % as acid, over
    0.5 %; the message must not print "0.5 % ... is over"."""
    found = lim(library, formula([("Sodium Benzoate", 0.59, "preservative")],
                                 product="body lotion"))
    assert "0.5000056 % as acid is over" in one(found, "V/1").message


# ----- which entry a CAS number names -------------------------------------------------------

def test_non_nano_titanium_dioxide_is_not_the_nano_entry(library: Library) -> None:
    """VI/27 titanium dioxide and VI/27a titanium dioxide (nano) give the same CAS numbers. A
    26 % titanium dioxide line is over VI/27 once (it was two errors, one citing the nano
    entry); with 15 % of each form the sum, 30 %, is over ("In case of combined use of
    Titanium Dioxide and Titanium Dioxide (nano), the sum shall not exceed the limit")."""
    found = lim(library, formula([("Titanium Dioxide", 26.0, "uv filter")],
                                 product="sunscreen lotion"))
    assert severities(found, "VI/27") == {"error"}
    assert not entry_findings(found, "VI/27a")
    both = lim(library, formula([("Titanium Dioxide", 15.0, "uv filter"),
                                 ("Titanium Dioxide (Nano)", 15.0, "uv filter")],
                                product="sunscreen lotion"))
    assert severities(both, "VI/27") == {"error"}


def test_iron_oxide_is_its_own_colour_index_entry(library: Library) -> None:
    """IV/135 CI 77491 shares CAS 1309-37-1 with other iron oxide entries (IV/134 CI 77489,
    IV/137 CI 77499); named by its colour index number it is IV/135 only."""
    found = lim(library, formula([("CI 77491", 2.0, "colorant")], product="lipstick"))
    assert {f.values["entry"] for f in found} == {"IV/135"}


def test_a_hair_dye_entry_defers_to_the_colorant_entry(library: Library) -> None:
    """III/214 covers Acid Yellow 1 (CI 10316) as a hair dye substance only; as a colorant
    IV/3 applies ("Not to be used in eye products"). In a body lotion it is allowed (it was
    an error: "the entry covers only ... hair dye products"); in a mascara IV/3 forbids it."""
    body = lim(library, formula([("CI 10316", 0.1, "colorant")], product="body lotion"))
    assert severities(body, "III/214") == {"info"} and severities(body, "IV/3") == {"info"}
    mascara = lim(library, formula([("CI 10316", 0.1, "colorant")], product="mascara"))
    assert severities(mascara, "IV/3") == {"error"}
    assert severities(mascara, "III/214") == {"info"}


def test_exclusions_keep_personal_conditions_for_a_person() -> None:
    """V/12a "Not to be used in leave-on products designed for application on the nappy area
    of children under three years of age" is a condition about a person (LIM04), not a
    product type formdb can rule out; V/52 splits into oral products, and eye and lip
    products."""
    assert exclusions("Not to be used in leave-on products designed for application on the "
                      "nappy area of children under three years of age.") == ()
    groups = exclusions("Not to be used in products for children under 3 years of age, in "
                        "oral products and in eye and lip products")
    assert [g.scope.areas for g in groups] == [("oral",), ("eye", "lip")]


# ----- a purpose only a listed substance may serve ------------------------------------------

def test_a_preservative_or_uv_filter_must_be_listed(library: Library) -> None:
    """Art. 14(1)(d) and (e): a preservative or UV filter not in Annex V or VI is prohibited.
    Ethylhexylglycerin declared a preservative and tocopherol declared a UV filter are errors
    (both passed in silence); phenoxyethanol as a preservative (V/29) is not."""
    ehg = lim(library, formula([("Ethylhexylglycerin", 0.5, "preservative")],
                               product="body lotion"))
    assert severities(ehg, "V") == {"error"} and "Art. 14(1)(d)" in one(ehg, "V").message
    uv = lim(library, formula([("Tocopherol", 0.5, "uv filter")], product="body lotion"))
    assert severities(uv, "VI") == {"error"}
    listed = lim(library, formula([("Phenoxyethanol", 0.8, "preservative")],
                                  product="body lotion"))
    assert not entry_findings(listed, "V") and severities(listed, "V/29") == {"info"}
    # no purpose declared: the formula does not claim it preserves
    assert not entry_findings(lim(library, formula([("Ethylhexylglycerin", 0.5, None)],
                                                   product="body lotion")), "V")


def test_titanium_dioxide_as_colorant_is_not_a_uv_filter(library: Library) -> None:
    """IV/143 (titanium dioxide as a colorant, no maximum; "For use as a UV filter, see Annex
    VI, No 27") and VI/27 (25 %; "For use as a colourant, see Annex IV, No 143"): 30 % as the
    colorant of a foundation is within (it was over VI/27); 26 % as a UV filter is over VI/27
    and IV/143 defers."""
    colour = lim(library, formula([("Titanium Dioxide", 30.0, "colorant")],
                                  product="liquid foundation"))
    assert "error" not in {f.severity.value for f in colour}
    assert "covers its use as a UV filter only" in one(colour, "VI/27").message
    uv = lim(library, formula([("Titanium Dioxide", 26.0, "uv filter")],
                              product="sunscreen lotion"))
    assert severities(uv, "VI/27") == {"error"} and severities(uv, "IV/143") == {"info"}


# ----- words that head several parts --------------------------------------------------------

def test_words_for_several_parts_reach_each_part() -> None:
    """VI/4 "For a) and b): Contains Benzophenone-3": part (b), body products, must print it
    too (its label was "For"); III/8 "For (a) and (b): After mixing under oxidative conditions
    the maximum concentration applied to hair must not exceed 3 %": part (b), professional use,
    has that maximum too (it had none)."""
    vi = {e.key: e for e in read_export(ANNEX_EXPORTS / "COSING_Annex_VI_v2.txt").entries}
    assert [("Contains Benzophenone-3" in p.labelling) for p in vi["4"].parts] == \
        [True, True, False]
    iii = {e.key: e for e in read_export(ANNEX_EXPORTS / "COSING_Annex_III_v2.txt").entries}
    assert [p.max_percent for p in iii["8"].parts] == [3.0, 3.0]


# ----- the export's own layout: soft hyphens, part ranges, bases for every part --------------

def _entries(annex: str) -> dict[str, ListEntry]:
    return {e.key: e for e in read_export(ANNEX_EXPORTS / f"COSING_Annex_{annex}_v2.txt").entries}


def test_parts_read_through_the_exports_layout() -> None:
    """III/200 tetraaminopyrimidine sulfate: "ap\\u00adplied to hair or eye\\u00adlashes must not
    ex\\u00adceed 3,4 %" (soft hyphens in the export) is the maximum of parts (a) and (c), which
    had none. III/22 resorcinol "(For (a) and (b): ... must not exceed 1,25 %": both parts.
    III/297 ethoxydiglycol "(a) to (e): ... Not to be used in eye products and oral products":
    every part (parts (b) to (e) had no condition). III/2a "The abovementioned percentages are
    calculated as thioglycollic acid": the basis of parts (a) to (d), not of (d) alone."""
    iii = _entries("III")
    assert [p.max_percent for p in iii["200 [TETRAAMINOPYRIMIDINE SULFATE]"].parts] == \
        [3.4, 3.4, 3.4]
    assert [p.max_percent for p in iii["22"].parts] == [1.25, 1.25, 0.5]
    assert all(p.exclusions and "oral products" in p.exclusions[0].words
               for p in iii["297"].parts)
    assert [p.basis for p in iii["2a"].parts] == ["as acid"] * 4
    assert [p.basis for p in iii["259"].parts] == ["as hydrochloride"]


def test_a_basis_the_amount_was_not_converted_to_is_said(library: Library) -> None:
    """III/31 sodium fluoride, oral products 0.15 % "calculated as F": 0.1 % sodium fluoride is
    at most 0.1 % fluorine, within, and the message says the amount is as-is (it said "0.1 % as
    F"). III/259 HC Yellow No 9 is 0.5 % "calculated as hydrochloride", and HC Yellow No 9 is
    that hydrochloride: 0.45 % is within, not a question."""
    naf = lim(library, formula([("Sodium Fluoride", 0.1, "active")], category="rinse-off",
                               product="toothpaste"))
    assert "0.1 % is within as-is (so at most that much as F)" in one(naf, "III/31").message
    dye = lim(library, formula([("HC Yellow No 9", 0.45, None)], category="rinse-off"))
    assert "as-is is under it" not in one(dye, "III/259").message


def test_thioglycolate_over_as_acid_needs_its_molar_mass(library: Library) -> None:
    """III/2a (a) hair products, 8 % as thioglycollic acid at pH 7 to 9.5: 9 % ammonium
    thioglycolate is over as-is, a question until the library holds the molar masses; with them
    (109.15 from NH4 C2H3O2S, 92.12 from C2H4O2S) 9 % is 9 x 92.12 / 109.15 = 7.6 % as acid,
    within (it was an error: the basis was read for part (d) only, and the acid named by an
    imported entry was never looked up). At pH 10 it is outside the pH range."""
    def verdict(percent: float, ph: float) -> set[str]:
        return severities(lim(library, formula([("Ammonium Thioglycolate", percent, "active")],
                                               product="hair styling", ph=ph)), "III/2a")

    assert verdict(9.0, 9.0) == {"warning"}
    _set(library, "Ammonium Thioglycolate", molar_mass="109.15")
    _set(library, "Thioglycolic Acid", molar_mass="92.12")
    assert verdict(9.0, 9.0) == {"info"}
    assert verdict(7.0, 10.0) == {"error"}


def test_a_colorant_and_uv_filter_without_a_purpose_names_the_reading(library: Library) -> None:
    """VI/30 zinc oxide (25 % as a UV filter) and IV/144 (as a colorant, no maximum): 26 % with
    no purpose declared is over only if it is a UV filter, so a warning naming that reading (it
    was an error claiming the UV filter use); declared a UV filter it is an error."""
    found = lim(library, formula([("Zinc Oxide", 26.0, None)], product="sunscreen lotion"))
    vi = one(found, "VI/30")
    assert vi.severity.value == "warning" and vi.message.startswith("if used as a UV filter:")
    declared = lim(library, formula([("Zinc Oxide", 26.0, "uv filter")],
                                    product="sunscreen lotion"))
    assert severities(declared, "VI/30") == {"error"}
