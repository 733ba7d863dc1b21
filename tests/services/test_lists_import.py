"""Importing the Commission's annex exports (Annexes II-VI of Regulation (EC) No 1223/2009).

The entries are checked against the regulation text as amended, naming each entry and the act
that amended it (Regulation (EC) No 1223/2009 consolidated; the amending acts named per test,
recalled from the Official Journal texts, and the same values read in the export itself). The
real exports are read from ../shared/regulatory/ (never copied into the repository); the tests
skip with a reason when that folder is absent.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from formdb.errors import InvalidData
from formdb.schemas.ingredient import name_key
from formdb.schemas.lists import ListEntry
from formdb.services.lists.importing import entry_match_keys, import_lists, read_export
from formdb.services.lists.reading import show_entry
from formdb.store import queries
from formdb.store.library import Library
from formdb.store.lists import record_match_keys
from tests.conftest import TEST_USER
from tests.helpers import (
    ANNEX_EXPORTS,
    library_state,
    needs_annex_exports,
    run_formdb,
)

SHARED = ANNEX_EXPORTS
needs_exports = needs_annex_exports()


def export(annex: str) -> Path:
    return SHARED / f"COSING_Annex_{annex}_v2.txt"


_parsed: dict[str, dict[str, list[ListEntry]]] = {}


def entries(annex: str) -> dict[str, list[ListEntry]]:
    if annex not in _parsed:
        by_ref: dict[str, list[ListEntry]] = {}
        for entry in read_export(export(annex)).entries:
            by_ref.setdefault(entry.ref, []).append(entry)
        _parsed[annex] = by_ref
    return _parsed[annex]


def one(annex: str, ref: str) -> ListEntry:
    found = entries(annex)[ref]
    assert len(found) == 1
    return found[0]


# ----- the named sample entries, structured ---------------------------------------------------

@needs_exports
def test_salicylic_acid_iii_98() -> None:
    """Annex III/98 as amended by Reg. (EU) 2019/1966 and (EU) 2021/850: rinse-off hair products
    3.0 %, other products 2.0 % except body lotion, eye shadow, mascara, eyeliner, lipstick and
    roll-on deodorant (0.5 %); for purposes other than inhibiting micro-organisms."""
    entry = one("III", "98")
    assert entry.regulation == "(EU) 2021/850"
    assert "SALICYLIC ACID" in entry.inci_names and "69-72-7" in entry.cas_numbers
    assert entry.purpose == "not-preservative"
    a, b, c = entry.parts
    assert (a.label, a.max_percent, a.scope.categories, a.scope.areas) == \
        ("a", 3.0, ("rinse-off",), ("hair",))
    assert (b.max_percent, b.scope.other) == (2.0, True)
    assert set(b.scope.excluded_products) == {"body lotion", "eye shadow", "mascara",
                                              "eyeliner", "lipstick", "roll-on deodorant"}
    assert c.max_percent == 0.5 and set(c.scope.products) == set(b.scope.excluded_products)
    assert "children under 3 years" in a.conditions
    assert all(p.structured for p in entry.parts)


@needs_exports
def test_salicylic_acid_preservative_v_3() -> None:
    """Annex V/3 (Reg. (EU) 2019/1966): salicylic acid and its salts 0.5 % (acid) as a
    preservative."""
    entry = one("V", "3")
    assert entry.purpose == "preservative"
    assert entry.parts[0].max_percent == 0.5 and entry.parts[0].basis == "as acid"
    assert len(entry.cas_numbers) == 7  # acid and six salts, each CAS kept


@needs_exports
def test_cetrimonium_chloride_iii_286() -> None:
    """Annex III/286 (Reg. (EU) No 866/2014): rinse-off hair 2.5 %, leave-on hair 1.0 %,
    leave-on face 0.5 %, individually or summed with steartrimonium chloride; non-preservative
    use. The export's typo "STRARTRIMONIUM" is kept, never corrected silently."""
    entry = one("III", "286")
    assert entry.regulation == "(EU) 2014/866"
    assert entry.inci_names[:2] == ("CETRIMONIUM CHLORIDE", "STRARTRIMONIUM CHLORIDE")
    assert [(p.label, p.max_percent, p.aggregate) for p in entry.parts] == [
        ("a", 2.5, "sum"), ("b", 1.0, "sum"), ("c", 0.5, "sum")]
    assert [(p.scope.categories, p.scope.areas) for p in entry.parts] == [
        (("rinse-off",), ("hair",)), (("leave-on",), ("hair",)), (("leave-on",), ("face",))]
    assert entry.purpose == "not-preservative"


@needs_exports
def test_sodium_hydroxide_iii_15a() -> None:
    """Annex III/15a (Reg. (EU) 2016/622): potassium or sodium hydroxide, (a) nail cuticle
    solvent 5 %, (b) hair straightener 2 % general / 4.5 % professional, (c) pH adjuster for
    depilatories up to pH 12.7, (d) other uses as pH adjuster up to pH 11."""
    entry = one("III", "15a")
    assert entry.regulation == "(EU) 2016/622"
    assert "SODIUM HYDROXIDE" in entry.inci_names and "1310-73-2" in entry.cas_numbers
    parts = {p.label: p for p in entry.parts}
    assert parts["a"].max_percent == 5.0
    assert parts["b"].max_percent == 2.0 and parts["b"].further_limits
    assert parts["c"].ph_max == 12.7 and "ph adjuster" in parts["c"].scope.purposes
    assert parts["d"].ph_max == 11.0 and "ph adjuster" in parts["d"].scope.purposes
    # "Callosity softener/remover (entry 15d)" rides in the same cell: kept for a person
    assert any("Callosity" in u for u in parts["d"].unparsed)


@needs_exports
def test_parabens_v_12a() -> None:
    """Annex V/12a (Reg. (EU) No 1004/2014): butyl- and propylparaben and their salts 0.14 %
    (as acid) for the sum; not in leave-on products for the nappy area of children under 3."""
    entry = one("V", "12a")
    assert entry.regulation == "(EC) 2014/1004"
    assert {"PROPYLPARABEN", "BUTYLPARABEN"} <= set(entry.inci_names)
    part = entry.parts[0]
    assert (part.max_percent, part.basis, part.aggregate) == (0.14, "as acid", "sum")
    assert part.further_limits  # the 0.8 % for mixtures with entry 12, kept to read
    assert "children under 3 years" in part.conditions
    assert "nappy" in part.labelling


@needs_exports
def test_homosalate_vi_3() -> None:
    """Annex VI/3 as replaced by Reg. (EU) 2022/2195: homosalate 7.34 % in face products, not in
    propellant sprays; placing from 1 January 2025, making available from 1 July 2025."""
    entry = one("VI", "3")
    part = entry.parts[0]
    assert part.max_percent == pytest.approx(7.34)
    assert part.scope.areas == ("face",) and part.scope.not_in == ("spray",)
    assert "1 January 2025" in part.other and "a dated transition" in part.conditions
    assert entry.inci_names == ("HOMOSALATE",) and entry.cas_numbers == ("118-56-9",)


@needs_exports
def test_butylphenyl_methylpropional_ii() -> None:
    """Annex II/1666 (Reg. (EU) 2021/1902): 2-(4-tert-butylbenzyl)propionaldehyde prohibited."""
    entry = one("II", "1666")
    assert entry.regulation == "(EU) 2021/1902"
    assert entry.inci_names == ("BUTYLPHENYL METHYLPROPIONAL",)
    assert entry.cas_numbers == ("80-54-6",) and entry.ec_numbers == ("201-289-8",)


@needs_exports
def test_linalyl_acetate_iii_allergen() -> None:
    """Annex III/337, added by Reg. (EU) 2023/1545: linalyl acetate named on the label above
    0.001 % (leave-on) / 0.01 % (rinse-off); one of the extended allergens."""
    entry = one("III", "337")
    assert entry.regulation == "(EU) 2023/1545"
    assert entry.inci_names[0].casefold() == "linalyl acetate"
    assert entry.allergen and entry.extended_allergen
    assert one("III", "67").allergen and not one("III", "67").extended_allergen  # amyl cinnamal


@needs_exports
def test_methyl_salicylate_iii_324_fourteen_parts() -> None:
    """Annex III/324 methyl salicylate (added by Reg. (EU) 2021/1099, recalled; the export names
    Reg. (EU) 2023/1545, which made it a labelled allergen): parts (a) to (n). Part (i) is a
    letter after (h), not a roman sub-part: hydroalcoholic-based fragrances 0.6 %, (j) lip
    products 0.03 %, (k) toothpaste 2.52 %, (n) mouth spray 0.65 %."""
    entry = one("III", "324")
    parts = {p.label: p for p in entry.parts}
    assert list(parts) == list("abcdefghijklmn")
    assert (parts["h"].max_percent, parts["h"].scope.products) == (0.6, ("hand wash",))
    assert parts["i"].max_percent == 0.6 and parts["i"].scope.text.startswith("Hydroalcoholic")
    assert (parts["j"].max_percent, parts["j"].scope.areas) == (0.03, ("lip",))
    assert (parts["k"].max_percent, parts["k"].scope.products) == (2.52, ("toothpaste",))
    assert (parts["n"].max_percent, parts["n"].scope.areas, parts["n"].scope.products) == \
        (0.65, ("oral",), ("spray",))
    # (f) body lotion in spray/aerosol form: the spray is the form, asked besides the kind
    assert set(parts["f"].scope.products) == {"body lotion", "spray"}
    assert not parts["h"].further_limits  # no longer (i)-(n) folded into (h) as "also:"


@needs_exports
def test_roman_sub_parts_stay_inside_their_part() -> None:
    """Annex III/2a thioglycolic acid (Reg. (EU) 2015/1190): "(a) (i) 8 % (ii) 11 %" are the
    general and professional figures of part (a), not parts (i) and (ii)."""
    entry = one("III", "2a")
    assert [p.label for p in entry.parts] == ["a", "b", "c", "d"]
    assert entry.parts[0].max_percent == 8.0 and entry.parts[0].further_limits


@needs_exports
def test_spray_forms_ethoxydiglycol_iii_297_and_benzophenone_3_vi_4() -> None:
    """Annex III/297 ethoxydiglycol (Reg. (EU) 2016/314): (d) other non-spray products 2.6 %,
    (e) fine fragrances, hair sprays, antiperspirant and deodorant sprays 2.6 % (the export
    writes "(e)2,6%" without a space). Annex VI/4 benzophenone-3 (Reg. (EU) 2022/1176): (a)
    face, hand and lip products excluding propellant and pump sprays 6 %, (b) body products
    including sprays 2.2 %, (c) other products 0.5 %."""
    d, e = one("III", "297").parts[3:]
    assert (d.max_percent, d.scope.not_in, d.scope.other, d.scope.products) == \
        (2.6, ("spray",), True, ())
    assert e.max_percent == 2.6 and "spray" in e.scope.products
    a, b, c = one("VI", "4").parts
    assert (a.max_percent, set(a.scope.areas), a.scope.not_in) == \
        (6.0, {"face", "hand", "lip"}, ("spray",))
    assert (b.max_percent, b.scope.areas, b.scope.products, b.scope.not_in) == \
        (2.2, ("body",), (), ())  # "including ... spray products" widens, never narrows
    assert all(p.structured for p in (a, b, c))


@needs_exports
def test_oxidative_hair_dye_maximum_on_the_hair() -> None:
    """Annex III/193 Acid Red 52 (Reg. (EU) No 344/2013 as the export names it): (a) in
    oxidative hair dye products, after mixing the concentration applied to hair must not exceed
    1.5 % (written under "Other"); (b) non-oxidative 0.6 %. The 1.5 % is kept with its basis,
    never read as "no maximum"."""
    a, b = one("III", "193").parts
    assert (a.max_percent, a.basis) == (1.5, "applied to the hair after mixing")
    assert (b.max_percent, b.basis) == (0.6, None)


@needs_exports
def test_scope_written_in_the_maximum_cell_v_57_and_v_7() -> None:
    """Annex V/57 methylisothiazolinone (Reg. (EU) 2017/1224): 0.0015 % in rinse-off products
    only, written "0,0015 % Rinse-off products" under the maximum with no product type (leave-on
    use was banned by Reg. (EU) 2016/1198): the scope is rinse-off, never all products. V/7
    o-phenylphenol (Reg. (EU) 2018/1847): 0.15 % (as phenol) leave-on, 0.2 % rinse-off."""
    [mi] = one("V", "57").parts
    assert (mi.max_percent, mi.scope.categories) == (0.0015, ("rinse-off",))
    leave_on, rinse_off = one("V", "7").parts
    assert (leave_on.max_percent, leave_on.scope.categories) == (0.15, ("leave-on",))
    assert (rinse_off.max_percent, rinse_off.scope.categories) == (0.2, ("rinse-off",))
    assert "as phenol" in leave_on.max_text


@needs_exports
def test_labelled_allergens_cinnamal_included() -> None:
    """Annex III/76 cinnamal, one of the allergens of Regulation (EC) No 1223/2009 as adopted
    (0.001 % leave-on, 0.01 % rinse-off), is written in the export with the labelling article of
    the old Directive ("Article 6(1)g"); it is an allergen all the same. The export of
    31/10/2025 carries the labelling condition in 81 entries of Annex III."""
    cinnamal = one("III", "76")
    assert cinnamal.allergen and not cinnamal.extended_allergen
    assert sum(e.allergen for es in entries("III").values() for e in es) == 81


@needs_exports
def test_maximum_in_mg_per_kg_glyoxal_iii_194() -> None:
    """Annex III/194 glyoxal (Regulation (EC) No 1223/2009; Reg. (EU) No 344/2013 as the export
    names it): 100 mg/kg, that is 0.01 %."""
    [part] = one("III", "194").parts
    assert part.max_percent == pytest.approx(0.01) and part.structured


@needs_exports
def test_counts_and_coverage() -> None:
    """Entry counts as the export's README gives them; more than 90 % of parts structured."""
    counts = {a: sum(len(v) for v in entries(a).values()) for a in ("II", "III", "IV", "V", "VI")}
    assert counts == {"II": 1744, "III": 373, "IV": 154, "V": 57, "VI": 34}
    parts = [p for a in ("III", "IV", "V", "VI") for es in entries(a).values() for e in es
             for p in e.parts]
    assert sum(p.structured for p in parts) / len(parts) > 0.90
    # the export repeats some numbers for different substances: both kept, apart
    assert len(entries("III")["196"]) == 2
    assert len({e.key for e in entries("III")["196"]}) == 2


@needs_exports
def test_seed_rows_cite_the_act_of_their_entry() -> None:
    """Issue 11, item 1: each hand-written EU row of seed_data/limits.csv cites its entry and the
    latest act the Commission's export of 31/10/2025 gives for that entry (in the row's
    conditions or its source), so a reader sees how current the row is."""
    import csv
    import re

    seed = Path(__file__).resolve().parents[2] / "seed_data"
    with (seed / "sources.csv").open(newline="", encoding="utf-8") as handle:
        sources = {r["key"]: " ".join(r.values()) for r in csv.DictReader(handle)}
    with (seed / "limits.csv").open(newline="", encoding="utf-8") as handle:
        rows = [r for r in csv.DictReader(handle) if r["jurisdiction"] == "EU"]
    uncited = []
    for row in rows:
        annex, ref = row["entry"].split("/")
        [entry] = entries(annex)[ref]
        year, number = re.findall(r"(\d{4})/(\d+)", entry.regulation)[0]
        text = f"{row['conditions']} {sources[row['source']]}"
        if f"{year}/{number}" not in text and f"{number}/{year}" not in text:
            uncited.append((row["key"], entry.regulation))
    assert len(rows) == 57 and uncited == []


# ----- importing into a library ---------------------------------------------------------------

@needs_exports
@pytest.mark.slow
def test_import_all_five(library_url: str) -> None:
    files = [export(a) for a in ("II", "III", "IV", "V", "VI")]
    with Library.open(library_url) as library:
        dry = import_lists(library, files, user=TEST_USER, dry_run=True)
    assert dry.dry_run and dry.structured_parts / dry.parts > 0.9
    before = library_state(library_url)
    with Library.open(library_url) as library:
        result = import_lists(library, files, user=TEST_USER)
    assert library_state(library_url) != before
    by_annex = {a.snapshot.annex: a for a in result.annexes}
    assert by_annex["II"].snapshot.entries == 1744
    assert str(by_annex["III"].snapshot.last_update) == "2025-10-31"
    assert str(by_annex["III"].snapshot.file_created) == "2025-11-11"
    assert by_annex["III"].ingredients_created > 0
    assert [a.ingredients_created for a in dry.annexes] == \
        [a.ingredients_created for a in result.annexes]
    # the same files again: nothing changes
    with Library.open(library_url) as library:
        again = import_lists(library, files, user=TEST_USER)
    assert all(a.unchanged for a in again.annexes)


def _copy(tmp_path: Path, annex: str, edit: object = None) -> Path:
    target = tmp_path / f"COSING_Annex_{annex}_v2.txt"
    text = export(annex).read_text(encoding="utf-8")
    if callable(edit):
        text = edit(text)
    target.write_text(text, encoding="utf-8", newline="")
    return target


@needs_exports
def test_not_an_annex_export(tmp_path: Path, sqlite_url: str) -> None:
    bad = tmp_path / "supplier.csv"
    bad.write_text("inci_name,hlb\nPolysorbate 80,15\n", encoding="utf-8")
    before = library_state(sqlite_url)
    result = run_formdb(["--db", sqlite_url, "lists", "import", str(bad)])
    assert result.exit_code == 2
    assert result.stderr.count("Error:") == 1 and "not an annex export" in result.stderr
    assert str(bad) in result.stderr and "Traceback" not in result.stderr
    assert library_state(sqlite_url) == before


@needs_exports
def test_truncated_export(tmp_path: Path, sqlite_url: str) -> None:
    cut = _copy(tmp_path, "V", lambda t: t[: len(t) // 2])
    before = library_state(sqlite_url)
    good = export("VI")
    result = run_formdb(["--db", sqlite_url, "lists", "import", str(good), str(cut)])
    assert result.exit_code == 2 and "truncated" in result.stderr and str(cut) in result.stderr
    assert "line" in result.stderr
    assert library_state(sqlite_url) == before  # the good file is not imported either


@needs_exports
def test_truncated_on_a_row_boundary(tmp_path: Path) -> None:
    def cut(text: str) -> str:
        lines = text.splitlines(keepends=True)
        return "".join(lines[:40]) + lines[40][:25]  # a row cut mid-way, no closing quote/cells
    with pytest.raises(InvalidData, match="line"):
        read_export(_copy(tmp_path, "VI", cut))


@needs_exports
def test_duplicate_reference(tmp_path: Path, sqlite_url: str) -> None:
    def twice(text: str) -> str:
        start = text.index("\n3,")  # the row of V/3, given a second time at the end
        end = text.index("\n4,", start)
        return text + text[start + 1:end + 1]
    dup = _copy(tmp_path, "V", twice)
    before = library_state(sqlite_url)
    result = run_formdb(["--db", sqlite_url, "lists", "import", str(dup)])
    assert result.exit_code == 2
    assert "duplicate reference number '3'" in result.stderr and str(dup) in result.stderr
    assert library_state(sqlite_url) == before


@needs_exports
def test_real_repeated_numbers_accepted() -> None:
    """The exports of 31/10/2025 repeat numbers: II/38 for three coal-tar substances, III/196 for
    HC Blue No. 11 (Reg. (EC) 2013/344) and Lippia citriodora absolute (Reg. (EU) 2023/1545), and
    III/16, 250 and 253 for the same substance under two acts. Every row is kept, apart."""
    repeated = {(a, ref): len(es) for a in ("II", "III", "IV", "V", "VI")
                for ref, es in entries(a).items() if len(es) > 1}
    assert repeated == {("II", "38"): 3, **{("III", r): 2 for r in (
        "9", "16", "196", "200", "208", "250", "251", "253", "269")}}
    for annex, ref in repeated:
        keys = [e.key for e in entries(annex)[ref]]
        assert len(set(keys)) == len(keys) and all(k.startswith(f"{ref} [") for k in keys)
    assert {e.regulation for e in entries("III")["16"]} == {"(EC) 2013/344", "(EU) 2013/658"}


@needs_exports
def test_concatenated_rows_refused(tmp_path: Path, sqlite_url: str) -> None:
    """The rows of Annex VI given twice (a file concatenated by hand): the same number, substance
    and act twice is refused, naming the first repeated line; nothing imported."""
    def doubled(text: str) -> str:
        start = text.index("\n2,")  # the first entry row, after the title lines and header
        return text + text[start + 1:]
    dup = _copy(tmp_path, "VI", doubled)
    before = library_state(sqlite_url)
    result = run_formdb(["--db", sqlite_url, "lists", "import", str(dup)])
    assert result.exit_code == 2 and result.stderr.count("Error:") == 1
    assert "duplicate reference number '2'" in result.stderr and str(dup) in result.stderr
    assert "same substance under the same act" in result.stderr
    assert library_state(sqlite_url) == before


@needs_exports
def test_older_over_newer_refused_unless_asked(tmp_path: Path, sqlite_url: str) -> None:
    older = _copy(tmp_path, "VI", lambda t: t.replace("Last update: 31/10/2025",
                                                      "Last update: 30/06/2024"))
    assert run_formdb(["--db", sqlite_url, "lists", "import", str(export("VI"))]).exit_code == 0
    before = library_state(sqlite_url)
    refused = run_formdb(["--db", sqlite_url, "lists", "import", str(older)])
    assert refused.exit_code == 2 and "older than the one in force" in refused.stderr
    assert refused.stderr.count("Error:") == 1
    assert library_state(sqlite_url) == before
    asked = run_formdb(["--db", sqlite_url, "lists", "import", "--allow-older", str(older)])
    assert asked.exit_code == 0, asked.stderr
    status = run_formdb(["--db", sqlite_url, "lists", "status"])
    assert "last update 30/06/2024" in status.stdout


@needs_exports
def test_last_update_after_the_file_was_made_refused(tmp_path: Path, sqlite_url: str) -> None:
    """The Commission writes a file after the last update it holds; a 'Last update' later than
    the 'File creation date' is an edited file and would put it ahead of every real export."""
    edited = _copy(tmp_path, "VI", lambda t: t.replace("Last update: 31/10/2025",
                                                       "Last update: 31/10/2099"))
    before = library_state(sqlite_url)
    result = run_formdb(["--db", sqlite_url, "lists", "import", str(edited)])
    assert result.exit_code == 2 and result.stderr.count("Error:") == 1
    assert f"{edited}, line 2: 'Last update' 31/10/2099 is after the 'File creation date' " \
        "11/11/2025" in result.stderr
    assert library_state(sqlite_url) == before


@needs_exports
def test_update_names_what_changed(tmp_path: Path, sqlite_url: str) -> None:
    """A newer export: entries added, removed and changed, each old -> new."""
    def newer(text: str) -> str:
        text = text.replace("Last update: 31/10/2025", "Last update: 30/11/2025")
        text = text.replace("File creation date: 11/11/2025", "File creation date: 02/12/2025")
        text = text.replace('"Face products with the exception of propellent spray products",'
                            '"7,34 %"', '"Face products with the exception of propellent spray '
                            'products","6,5 %"')
        start = text.index("\n4,")  # VI/4 removed
        end = text.index("\n5,", start)
        return text[:start] + text[end:]
    changed = _copy(tmp_path, "VI", newer)
    assert run_formdb(["--db", sqlite_url, "lists", "import", str(export("VI"))]).exit_code == 0
    result = run_formdb(["--db", sqlite_url, "lists", "import", str(changed)])
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert "entries added 0, removed 1, changed 1" in out
    assert "removed: EU Annex VI/4" in out
    assert "changed: EU Annex VI/3 (HOMOSALATE)" in out
    assert "'7,34 %' -> '6,5 %'" in out
    show = run_formdb(["--db", sqlite_url, "lists", "show", "VI/3"])
    assert "max 6.5 %" in show.stdout


@needs_exports
def test_dry_run_writes_nothing(sqlite_url: str) -> None:
    before = library_state(sqlite_url)
    result = run_formdb(["--db", sqlite_url, "lists", "import", "--dry-run", str(export("V"))])
    assert result.exit_code == 0 and result.stdout.startswith("Dry run")
    assert "Parse coverage:" in result.stdout
    assert library_state(sqlite_url) == before


@needs_exports
def test_dry_run_of_a_copy(tmp_path: Path, sqlite_url: str) -> None:
    """The file name does not matter; the title lines and the header do."""
    renamed = tmp_path / "annex-five.csv"
    shutil.copy(export("V"), renamed)
    result = run_formdb(["--db", sqlite_url, "lists", "import", "--dry-run", str(renamed)])
    assert result.exit_code == 0 and "EU Annex V (allowed preservatives)" in result.stdout


@needs_exports
@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_ingredient_show_lists_the_entries(sqlite_url: str) -> None:
    assert run_formdb(["--db", sqlite_url, "lists", "import", str(export("II")),
                       str(export("III"))]).exit_code == 0
    shown = run_formdb(["--db", sqlite_url, "ingredient", "show", "Hydroquinone"])
    assert shown.exit_code == 0, shown.stderr
    assert "From the lists: created from EU Annex" in shown.stdout
    assert "no physical data" in shown.stdout
    assert "EU Annex III/14 (HYDROQUINONE)" in shown.stdout
    assert "Artificial nail systems: max 0.02 %" in shown.stdout


HOMOSALATE_CREAM = """name = "Larkspur sun day cream"
category = "leave-on"
product = "face cream"

[[ingredients]]
inci = "Aqua"
percent = 93.0

[[ingredients]]
inci = "Homosalate"
percent = 7.0
purpose = "uv filter"
"""


def _newer_vi(text: str) -> str:
    """Annex VI as a later export might give it: VI/3 (homosalate) lowered to 6.5 %."""
    text = text.replace("Last update: 31/10/2025", "Last update: 30/11/2025")
    text = text.replace("File creation date: 11/11/2025", "File creation date: 02/12/2025")
    return text.replace('"Face products with the exception of propellent spray products",'
                        '"7,34 %"', '"Face products with the exception of propellent spray '
                        'products","6,5 %"')


@needs_exports
def test_update_makes_signed_runs_stale_and_names_the_entry(tmp_path: Path,
                                                            seeded_sqlite_url: str) -> None:
    from formdb.services.review.runs import review_status, run_review, sign_run
    from tests.signing import enrolled_key

    cream = tmp_path / "sun-cream.toml"
    cream.write_text(HOMOSALATE_CREAM, encoding="utf-8")
    with Library.open(seeded_sqlite_url) as library:
        import_lists(library, [export("VI")], user=TEST_USER)
        run = run_review(library, str(cream), user=TEST_USER)
    key = enrolled_key(seeded_sqlite_url, "larkspur-reviewer", "A. Reviewer")
    with Library.open(seeded_sqlite_url) as library:
        sign_run(library, run.run_key, "reviewed", user="larkspur-reviewer", signing_key=key)
    stored = run_formdb(["--db", seeded_sqlite_url, "formula", "import", str(cream)])
    assert stored.exit_code == 0, stored.stderr
    newer = _copy(tmp_path, "VI", _newer_vi)
    with Library.open(seeded_sqlite_url) as library:
        dry = import_lists(library, [newer], user=TEST_USER, dry_run=True)
        assert dry.stale_runs and dry.touched_formulas  # the dry run says it too
        result = import_lists(library, [newer], user=TEST_USER)
        assert result.touched_formulas == ("Larkspur sun day cream: EU Annex VI/3",)
        # the stored formula re-checked: 7 % homosalate was within 7.34 %, is over 6.5 %
        [moved] = result.formula_changes
        assert moved.startswith("Larkspur sun day cream: errors 0 -> 1")
        assert "new: LIM03 error" in moved and dry.formula_changes == result.formula_changes
        assert result.stale_runs == (f"run {run.run_key} (Larkspur sun day cream): "
                                     "EU Annex VI/3",)
        [state] = [s for s in review_status(library).runs if s.run_key == run.run_key]
    assert state.state == "stale"
    assert any(c.startswith("list entry EU Annex VI/3:") and "'7,34 %' -> '6,5 %'" in c
               for c in state.changes), state.changes


BLEND_CREAM = """name = "Larkspur blended sun cream"
category = "leave-on"
product = "face cream"

[[ingredients]]
inci = "Aqua"
percent = 90.0

[[ingredients]]
inci = "Larkspur Sun Blend"
percent = 10.0
"""


@needs_exports
def test_update_touches_formulas_through_a_mixture(tmp_path: Path,
                                                   seeded_sqlite_url: str) -> None:
    """A stored formula that holds homosalate only inside a declared supplier blend is touched
    by a change to Annex VI/3 (Reg. (EU) 2022/2195: 7.34 %) as the check itself sees it."""
    from formdb.services.library.ingredients import add_ingredient
    from formdb.services.library.mixtures import Part, declare

    with Library.open(seeded_sqlite_url) as library:
        import_lists(library, [export("VI")], user=TEST_USER)
        with library.write() as session:
            add_ingredient(session, "Larkspur Sun Blend", user=TEST_USER, reason="test")
            declare(session, "Larkspur Sun Blend",
                    [Part("Homosalate", 70.0, "eu-cosing-annex-vi-2025-10-31"),
                     Part("Caprylic/Capric Triglyceride", 30.0, "eu-cosing-annex-vi-2025-10-31")],
                    user=TEST_USER, reason="test")
    cream = tmp_path / "blend-cream.toml"
    cream.write_text(BLEND_CREAM, encoding="utf-8")
    stored = run_formdb(["--db", seeded_sqlite_url, "formula", "import", str(cream)])
    assert stored.exit_code == 0, stored.stderr
    with Library.open(seeded_sqlite_url) as library:
        result = import_lists(library, [_copy(tmp_path, "VI", _newer_vi)], user=TEST_USER)
    assert result.touched_formulas == ("Larkspur blended sun cream: EU Annex VI/3",)
    [moved] = result.formula_changes  # 7 % homosalate: within 7.34 %, over 6.5 %
    assert moved.startswith("Larkspur blended sun cream: errors ") and \
        "new: LIM03 error: HOMOSALATE (70 % of Larkspur Sun Blend, line 2) 7 %" in moved, moved
    # the superseded snapshot's VI/3 (7.34 %) keeps its match keys but is no longer found
    assert "gone: LIM03 info: HOMOSALATE" in moved and "max 7.34 %" in moved


@needs_exports
def test_status_and_show_as_a_reviewer_reads_them(sqlite_url: str) -> None:
    none = run_formdb(["--db", sqlite_url, "lists", "status"])
    assert none.exit_code == 0 and "No list snapshot is in force" in none.stdout
    assert run_formdb(["--db", sqlite_url, "lists", "import", str(export("V"))]).exit_code == 0
    status = run_formdb(["--db", sqlite_url, "lists", "status"])
    assert "EU Annex V (allowed preservatives): COSING_Annex_V_v2.txt, last update 31/10/2025" \
        in status.stdout
    assert "No export imported for Annex II, III, IV, VI" in status.stdout
    shown = run_formdb(["--db", sqlite_url, "lists", "show", "V/12a"])
    assert shown.exit_code == 0 and "max 0.14 % (as acid, sum of the group)" in shown.stdout
    missing = run_formdb(["--db", sqlite_url, "lists", "show", "V/999"])
    assert missing.exit_code == 2 and missing.stderr.count("Error:") == 1
    assert "no entry V/999" in missing.stderr


@needs_exports
def test_an_older_reading_is_named_and_replaced_by_importing_again(
        tmp_path: Path, seeded_sqlite_url: str) -> None:
    """A snapshot imported by an older formdb keeps that version's reading of its entries: the
    status names the entries this version reads differently (the stored cells parsed again), and
    importing the same export again stores the new reading, re-checking the stored formulas that
    use them. The older reading is made here by rewriting one stored entry's maximum, as a parser
    that misread V/3 (salicylic acid as a preservative, 0.5 % as acid) as 5 % would have."""
    from sqlalchemy import create_engine, text

    sqlite_url = seeded_sqlite_url
    lotion = tmp_path / "lotion.toml"
    lotion.write_text('name = "Larkspur salicylic lotion"\ncategory = "leave-on"\n'
                      'product = "body lotion"\n\n[[ingredients]]\ninci = "Aqua"\n'
                      'percent = 99.2\n\n[[ingredients]]\ninci = "Salicylic Acid"\n'
                      'percent = 0.8\npurpose = "preservative"\n', encoding="utf-8")
    assert run_formdb(["--db", sqlite_url, "formula", "import", str(lotion)]).exit_code == 0
    assert run_formdb(["--db", sqlite_url, "lists", "import", str(export("V"))]).exit_code == 0
    clean_status = run_formdb(["--db", sqlite_url, "lists", "status"])
    assert "read differently" not in clean_status.stdout
    engine = create_engine(sqlite_url)
    with engine.begin() as conn:
        body = conn.execute(text("SELECT body FROM list_entries WHERE ref = '3'")).scalar_one()
        stored = ListEntry.model_validate_json(body)
        misread = stored.model_copy(update={"parts": tuple(
            p.model_copy(update={"max_percent": 5.0}) for p in stored.parts)})
        assert misread != stored
        conn.execute(text("UPDATE list_entries SET body = :b WHERE ref = '3'"),
                     {"b": misread.model_dump_json()})
    engine.dispose()

    status = run_formdb(["--db", sqlite_url, "lists", "status"])
    assert status.exit_code == 0
    assert "read differently by this version of formdb: 1 of " in status.stdout
    # a check of a formula using the entry says its verdict rests on the older reading
    stale = run_formdb(["--db", sqlite_url, "check", str(lotion), "--format", "json"])
    assert stale.exit_code == 0, stale.stderr  # 0.8 % is within the misread 5 %
    assert '"LIM05"' in stale.stdout and "V/3" in stale.stdout
    assert "(V/3)" in status.stdout and "formdb lists import COSING_Annex_V_v2.txt" in status.stdout

    again = run_formdb(["--db", sqlite_url, "lists", "import", str(export("V"))])
    assert again.exit_code == 0, again.stderr
    assert ("read again by this version of formdb: 1 entry read differently (V/3) now carries"
            in again.stdout)
    assert "nothing changed" not in again.stdout
    assert "changed: EU Annex V/3" in again.stdout
    assert "Larkspur salicylic lotion: errors 0 -> 1" in again.stdout
    assert "read differently" not in run_formdb(["--db", sqlite_url, "lists", "status"]).stdout
    fresh = run_formdb(["--db", sqlite_url, "check", str(lotion), "--format", "json"])
    assert fresh.exit_code == 1 and '"LIM05"' not in fresh.stdout  # over 0.5 % as acid now
    with Library.open(sqlite_url) as library:
        shown = show_entry(library, "V/3")
    assert shown == [one("V", "3")]
    # and the same file once more: now nothing to do
    third = run_formdb(["--db", sqlite_url, "lists", "import", str(export("V"))])
    assert "the same file is already in force: nothing changed" in third.stdout


# ----- every entry can be named in a formula --------------------------------------------------

@needs_exports
@pytest.mark.slow
def test_every_entry_is_nameable(tmp_path: Path, library_url: str) -> None:
    """Issue 11's 'a formula can name any substance the lists name', counted against the real
    exports: every entry that is not a number kept for a moved or deleted entry resolves, by one
    of its names, to an ingredient record whose match keys find that entry. An entry that gives
    no name of 200 characters or fewer (a class such as II/293 radioactive substances, a
    petroleum or reaction-mass description) is named by its reference form "EU Annex II/293"."""
    files = [export(a) for a in ("II", "III", "IV", "V", "VI")]
    with Library.open(library_url) as library:
        import_lists(library, files, user=TEST_USER)
    every = [e for a in ("II", "III", "IV", "V", "VI") for es in entries(a).values() for e in es]
    moved = [e for e in every if e.moved]
    by_reference = [e for e in every if not e.moved and not e.inci_names]
    # counts read in the exports of 31/10/2025: 2,362 entries, 22 of them "Moved or deleted"
    assert (len(every), len(moved)) == (2362, 22)
    assert len(by_reference) == 29  # 28 in Annex II, III/271 (a dye mixture in 259 characters)
    assert sum(e.annex == "II" for e in by_reference) == 28
    assert "EU Annex II/293" in {e.record_names[0] for e in by_reference}
    unnamed = []
    with Library.open(library_url) as library, library.read() as session:
        found = queries.find_ingredients(session, {n for e in every for n in e.record_names})
        for entry in every:
            if entry.moved:
                assert entry.record_names == ()
                continue
            records = [found.get(name_key(n)) for n in entry.record_names]
            if not any(r is not None and record_match_keys(r) & entry_match_keys(entry)
                       for r in records):
                unnamed.append(entry.label)
    assert unnamed == []
    assert len(every) - len(moved) == 2340

    # a formula names a class entry by its reference form and the check reports the entry
    formula = tmp_path / "radio.toml"
    formula.write_text('name = "Larkspur test lotion"\ncategory = "leave-on"\n\n'
                       '[[ingredients]]\ninci = "eu annex ii/293"\npercent = 100.0\n',
                       encoding="utf-8")
    checked = run_formdb(["--db", library_url, "check", str(formula)])
    assert checked.exit_code != 2, checked.stderr
    assert "LIM03" in checked.stdout and "EU Annex II/293" in checked.stdout
    assert "Radioactive substances" in checked.stdout


@needs_exports
def test_update_touches_formulas_through_a_blend_inside_a_blend(tmp_path: Path,
                                                                seeded_sqlite_url: str) -> None:
    """As above, with the homosalate one mixture deeper: 'Larkspur Sun Base' holds the sun
    blend at 100 %. Found by hand: the touched formulas were looked up one mixture deep, so
    this formula was not named."""
    from formdb.services.library.ingredients import add_ingredient
    from formdb.services.library.mixtures import Part, declare

    source = "eu-cosing-annex-vi-2025-10-31"
    with Library.open(seeded_sqlite_url) as library:
        import_lists(library, [export("VI")], user=TEST_USER)
        with library.write() as session:
            for name in ("Larkspur Sun Blend", "Larkspur Sun Base"):
                add_ingredient(session, name, user=TEST_USER, reason="test")
            declare(session, "Larkspur Sun Blend",
                    [Part("Homosalate", 70.0, source),
                     Part("Caprylic/Capric Triglyceride", 30.0, source)],
                    user=TEST_USER, reason="test")
            declare(session, "Larkspur Sun Base", [Part("Larkspur Sun Blend", 100.0, source)],
                    user=TEST_USER, reason="test")
    cream = tmp_path / "base-cream.toml"
    cream.write_text(BLEND_CREAM.replace("Larkspur Sun Blend", "Larkspur Sun Base")
                     .replace("Larkspur blended sun cream", "Larkspur based sun cream"),
                     encoding="utf-8")
    stored = run_formdb(["--db", seeded_sqlite_url, "formula", "import", str(cream)])
    assert stored.exit_code == 0, stored.stderr
    with Library.open(seeded_sqlite_url) as library:
        result = import_lists(library, [_copy(tmp_path, "VI", _newer_vi)], user=TEST_USER)
    assert result.touched_formulas == ("Larkspur based sun cream: EU Annex VI/3",)
