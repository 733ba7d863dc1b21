"""Hostile input to the commands around the fuzz suites (mixtures, prices, screening, records,
stored formulas, batches, blends, outputs, the library location): each input once ended in an
internal problem, a misleading refusal or a wrong record, and is kept as a regression test, on
both backends where the library is involved. Names and values are made up for the test
(Larkspur Bench Laboratories)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import select

from formdb.services.checking.flow import FormulaInput, resolve_all
from formdb.services.library.formula_files import read_formula_file
from formdb.services.review.runs import used_records
from formdb.store.db import make_engine
from formdb.store.library import Library
from formdb.store.models import ChangeLogEntry
from formdb.store.queries import load_reference_data
from tests.helpers import CliResult, library_state, run_formdb


def _refused(result: CliResult, *fragments: str) -> None:
    """Exit 2 with one ``Error:`` line (naming what went wrong), never an internal problem."""
    assert result.exit_code == 2, result
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.stderr
    assert "internal problem" not in result.stderr
    for fragment in fragments:
        assert fragment in result.stderr, result.stderr


def _formula(path: Path) -> Path:
    path.write_text('name = "Larkspur hostile lotion"\ncategory = "leave-on"\n'
                    '[[ingredients]]\ninci = "Aqua"\npercent = 90\n'
                    '[[ingredients]]\ninci = "Glycerin"\npercent = 10\n', encoding="utf-8")
    return path


# --- output files ----------------------------------------------------------------------------

def test_an_output_onto_a_symlink_loop_is_refused(seeded_sqlite_url: str, tmp_path: Path) -> None:
    """Found by hand: `check --out` (or `batch --out`, `formula export`) onto a symbolic link
    that points at itself through another ended in RuntimeError 'Symlink loop' (exit 70)."""
    out = tmp_path / "out"
    out.mkdir()
    formula = _formula(tmp_path / "f.toml")
    (out / "loop1.html").symlink_to(out / "loop2.html")
    (out / "loop2.html").symlink_to(out / "loop1.html")
    loop = str(out / "loop1.html")
    for extra in ([], ["--force"]):
        _refused(run_formdb(["--db", seeded_sqlite_url, "check", str(formula), "--format",
                             "html", "--out", loop, *extra]), "symbolic link")
        _refused(run_formdb(["--db", seeded_sqlite_url, "batch", str(formula), "--kg", "1",
                             "--out", loop, *extra]), "symbolic link")
    assert sorted(p.name for p in out.iterdir() if p.is_symlink()) == ["loop1.html",
                                                                       "loop2.html"]
    assert len(list(out.iterdir())) == 2  # nor a temporary file left behind


# --- toxicology and exposure records ---------------------------------------------------------

_TOX = ["--set", "inci=Glycerin", "--set", "pod_kind=NOAEL", "--set", "pod_unit=mg/kg bw/day",
        "--set", "route=oral", "--set", "species=rat", "--set", "study=Larkspur study 7",
        "--set", "source=from-memory"]


@pytest.mark.parametrize(("value", "says"), [
    ("inf", "not a finite number"), ("1e309", "not a finite number"),
    ("١٢", "ASCII digits"), ("１２", "ASCII digits")])  # Arabic-Indic and fullwidth 12
def test_record_numbers_are_ascii_and_finite(seeded_library_url: str, tmp_path: Path,
                                             value: str, says: str) -> None:
    """Found by hand: `toxicology add --set pod_value=inf` stored a NOAEL of infinity, and
    every margin of safety of the substance then 'passes' (MoS = inf / SED); '١٢' was stored
    as 12; `exposure add` and `exposure import` took the same."""
    url = seeded_library_url
    before = library_state(url)
    _refused(run_formdb(["--db", url, "toxicology", "add", "larkspur-glycerin-noael", *_TOX,
                         "--set", f"pod_value={value}"]), "column pod_value", says)
    _refused(run_formdb(["--db", url, "toxicology", "edit", "phenoxyethanol-noael-rat-oral",
                         "--set", f"pod_value={value}"]), "column pod_value", says)
    _refused(run_formdb(["--db", url, "exposure", "add", "larkspur balm", "--set",
                         "category=leave-on", "--set", "source=from-memory", "--set",
                         "retention_factor=1", "--set", f"exposure_g_day={value}"]),
             "column exposure_g_day", says)
    table = tmp_path / "exposure.csv"
    table.write_text("product,category,retention_factor,exposure_g_day,source\n"
                     f"larkspur balm,leave-on,1,{value},from-memory\n", encoding="utf-8")
    _refused(run_formdb(["--db", url, "exposure", "import", str(table)]),
             "row 2, column exposure_g_day", says)
    assert library_state(url) == before
    added = run_formdb(["--db", url, "toxicology", "add", "larkspur-glycerin-noael", *_TOX,
                        "--set", "pod_value=1e3"])
    assert added.exit_code == 0, added.stderr  # a finite ASCII number is still taken


# --- mixtures ---------------------------------------------------------------------------------

_BLEND = "Cetearyl Alcohol (and) Ceteareth-20"


def _blend(url: str) -> None:
    added = run_formdb(["--db", url, "ingredient", "add", _BLEND, "--role", "emulsifier",
                        "--reason", "Larkspur supplier blend"])
    assert added.exit_code == 0, added.stderr
    declared = run_formdb(["--db", url, "mixture", "set", _BLEND, "--part",
                           "Cetearyl Alcohol=80", "--part", "Ceteareth-20=20", "--source",
                           "from-memory", "--reason", "Larkspur data sheet"])
    assert declared.exit_code == 0, declared.stderr


def test_a_dropped_constituent_is_named_in_the_change_log(seeded_library_url: str) -> None:
    """Found by hand: a declaration that left a constituent out (`mixture set` with other parts,
    `mixture clear`, an import) reported and logged it by its row id ('37: 80 % (from-memory)
    -> (none)'): the hash-chained change log held a number where the name belongs."""
    url = seeded_library_url
    _blend(url)
    swapped = run_formdb(["--db", url, "mixture", "set", _BLEND, "--part",
                          "Cetearyl Alcohol=80", "--part", "Ceteth-20=20", "--source",
                          "from-memory", "--reason", "supplier changed the ethoxylate"])
    assert swapped.exit_code == 0, swapped.stderr
    assert "  Ceteareth-20: 20 % (from-memory) -> (none)" in swapped.stdout, swapped.stdout
    cleared = run_formdb(["--db", url, "mixture", "clear", _BLEND, "--reason", "withdrawn"])
    assert cleared.exit_code == 0, cleared.stderr
    assert "  Cetearyl Alcohol: 80 % (from-memory) -> (none)" in cleared.stdout, cleared.stdout
    engine = make_engine(url, must_exist=True)
    try:
        with engine.connect() as conn:
            payloads = conn.execute(select(ChangeLogEntry.payload).where(
                ChangeLogEntry.entity == "mixture")).scalars().all()
    finally:
        engine.dispose()
    fields = [c["field"] for p in payloads for c in json.loads(p)["changes"]]
    # declared (two), swapped (one out, one in), cleared (two out): every one by name
    assert sorted(fields) == ["Ceteareth-20", "Ceteareth-20", "Cetearyl Alcohol",
                              "Cetearyl Alcohol", "Ceteth-20", "Ceteth-20"], fields


# --- the library's location -------------------------------------------------------------------

@pytest.mark.parametrize("value", ["", "  "])
def test_an_empty_formdb_db_is_refused_not_read_as_unset(tmp_path: Path,
                                                         monkeypatch: pytest.MonkeyPatch,
                                                         value: str) -> None:
    """Found by hand: `FORMDB_DB= formdb init --seed` (a variable set from an unset one) built
    and seeded ./formdb.sqlite, as click reads an empty variable as unset, while FORMDB_DB='  '
    was refused; both are now refused as `--db ''` is, and nothing is created."""
    monkeypatch.chdir(tmp_path)
    for args in (["init"], ["ingredient", "list"]):
        _refused(run_formdb(args, env={"FORMDB_DB": value}), "no database given")
    assert list(tmp_path.iterdir()) == []
    given = run_formdb(["--db", str(tmp_path / "lab.sqlite"), "init"], env={"FORMDB_DB": value})
    assert given.exit_code == 0, given.stderr  # --db still wins over the variable


# --- refusals that named the wrong reason -----------------------------------------------------

@pytest.mark.parametrize("hours", ["1e308", "200000"])
def test_an_age_beyond_its_bound_says_the_bound(seeded_sqlite_url: str, hours: str) -> None:
    """Found by hand: `screen record --after-hours 1e308` was refused as 'must be above 0'."""
    for args in (["screen", "record", "larkspur-s1", "--blend", "1", "--stability", "5"],
                 ["screen", "fit", "larkspur-s1"]):
        _refused(run_formdb(["--db", seeded_sqlite_url, *args, "--after-hours", hours]),
                 "must be above 0 and at most 100000 h")


def test_a_profile_that_is_a_folder_is_not_said_to_be_missing(seeded_sqlite_url: str,
                                                             tmp_path: Path) -> None:
    """Found by hand: `check --profile FOLDER` said 'profile file FOLDER does not exist'."""
    formula = _formula(tmp_path / "f.toml")
    folder = tmp_path / "profiles.toml"
    folder.mkdir()
    for spec in (str(tmp_path), str(folder)):
        _refused(run_formdb(["--db", seeded_sqlite_url, "check", str(formula), "--profile",
                             spec]), "is a folder, not a TOML file")


@pytest.mark.parametrize("parts", [["Cetearyl Alcohol=inf"], ["Ceteareth-20=150"],
                                   ["Cetearyl Alcohol=1e308", "Ceteareth-20=20"]])
def test_one_bad_share_is_one_line(seeded_library_url: str, parts: list[str]) -> None:
    """Found by hand: one share out of range (inf, 150, 1e308) was refused twice, the second
    line its sum ('add up to inf %, more than 100 %'), a consequence of the first."""
    url = seeded_library_url
    _blend(url)
    before = library_state(url)
    for partial in ([], ["--partial"]):
        args = ["--db", url, "mixture", "set", _BLEND, "--source", "from-memory", *partial]
        for part in parts:
            args += ["--part", part]
        _refused(run_formdb(args), "is not a share of a mixture")
    assert library_state(url) == before


def test_a_partial_declaration_says_why_no_hlb(seeded_sqlite_url: str) -> None:
    """Found by hand: a partial declaration whose constituents all have an HLB but cover too
    little of the blend said 'only 5 % of the blend has an HLB (none for )'."""
    url = seeded_sqlite_url
    _blend(url)
    declared = run_formdb(["--db", url, "mixture", "set", _BLEND, "--part", "Ceteareth-20=5",
                           "--source", "from-memory", "--partial"])
    assert declared.exit_code == 0, declared.stderr
    assert "only 5 % of the blend has an HLB (the rest is not declared)" in declared.stdout
    assert "none for )" not in declared.stdout


# --- stored formulas and profiles -------------------------------------------------------------

@pytest.mark.parametrize(("encode", "says"), [
    (lambda text: b"\xef\xbb\xbf" + text.encode("utf-8"), "starts with a byte-order mark"),
    (lambda text: text.encode("utf-16"), "is UTF-16 text"),
])
def test_a_toml_file_in_another_encoding_says_so(seeded_library_url: str, tmp_path: Path,
                                                 encode: Any, says: str) -> None:
    """Found by hand: a formula or profile saved with a byte-order mark (as some editors do)
    was refused as 'not a valid TOML formula file (Invalid statement (at line 1, column 1))',
    and one saved as UTF-16 as 'not UTF-8 text (byte 0)'."""
    url = seeded_library_url
    text = _formula(tmp_path / "plain.toml").read_text(encoding="utf-8")
    formula = tmp_path / "f.toml"
    formula.write_bytes(encode(text))
    profile = tmp_path / "p.toml"
    profile.write_bytes(encode('extends = "default"\n'))
    plain = tmp_path / "plain.toml"
    before = library_state(url)
    for args in (["formula", "import", str(formula)], ["check", str(formula)],
                 ["check", str(plain), "--profile", str(profile)]):
        _refused(run_formdb(["--db", url, *args]), says)
    assert library_state(url) == before


# --- record keys ------------------------------------------------------------------------------

@pytest.mark.parametrize(("key", "says"), [("larkspur\x1b[2J", "U+001B, a control character"),
                                           ("lark\u200bspur", "U+200B, an invisible"),
                                           ("lark\u202espur", "U+202E, an invisible")])
def test_a_new_record_key_holds_visible_characters_only(seeded_library_url: str,
                                                        tmp_path: Path, key: str,
                                                        says: str) -> None:
    """Found by hand: `source add`, `toxicology add` and `exposure add` stored keys holding ESC,
    BEL or a zero-width space; a key is never renamed, and once held it could not be typed
    again and made every XLSX export of its table fail ('an XLSX cell cannot hold' U+0007)."""
    url = seeded_library_url
    before = library_state(url)
    _refused(run_formdb(["--db", url, "source", "add", key, "--citation", "Larkspur notebook 9",
                         "--kind", "estimate"]), "column key", says)
    _refused(run_formdb(["--db", url, "toxicology", "add", key, *_TOX, "--set",
                         "pod_value=100"]), "column key", says)
    _refused(run_formdb(["--db", url, "exposure", "add", f"{key} balm", "--set",
                         "category=leave-on", "--set", "source=from-memory", "--set",
                         "retention_factor=1", "--set", "exposure_g_day=1"]),
             "column product", says)
    table = tmp_path / "sources.csv"
    table.write_text(f"key,citation,kind\nlarkspur-ok,Larkspur notebook 8,estimate\n"
                     f"{key},Larkspur notebook 9,estimate\n", encoding="utf-8")
    _refused(run_formdb(["--db", url, "source", "import", str(table)]),
             "row 3, column key", says)
    assert library_state(url) == before


def test_a_blend_inside_a_blend_is_exploded_to_its_substances(seeded_library_url: str,
                                                              tmp_path: Path) -> None:
    """Found by hand: a declared mixture whose constituent is itself a declared mixture (which
    `mixture set` accepts; only a cycle is refused) was exploded one level: Phenoxyethanol
    at 5 % x 50 % x 90 % = 2.25 % inside 'Larkspur Preservative Base' passed the 1 % limit of
    Regulation (EC) No 1223/2009 Annex V entry 29 (the seed's row LIM01 reads) unseen."""
    url = seeded_library_url
    inner, outer = "Phenoxyethanol (and) Ethylhexylglycerin", "Larkspur Preservative Base"
    for name in (inner, outer):
        assert run_formdb(["--db", url, "ingredient", "add", name, "--role", "preservative",
                           "--reason", "Larkspur supplier blend"]).exit_code == 0
    for name, parts in ((inner, ["Phenoxyethanol=90", "Ethylhexylglycerin=10"]),
                        (outer, [f"{inner}=50", "Glycerin=50"])):
        args = ["--db", url, "mixture", "set", name, "--source", "from-memory"]
        for part in parts:
            args += ["--part", part]
        declared = run_formdb(args)
        assert declared.exit_code == 0, declared.stderr
    formula = tmp_path / "gel.toml"
    formula.write_text('name = "Larkspur preserved gel"\ncategory = "leave-on"\n'
                       f'[[ingredients]]\ninci = "Aqua"\npercent = 95\n'
                       f'[[ingredients]]\ninci = "{outer}"\npercent = 5\n', encoding="utf-8")
    checked = run_formdb(["--db", url, "check", str(formula), "--format", "json"])
    assert checked.exit_code == 1, checked.stderr
    findings = json.loads(checked.stdout)["findings"]
    assert [f["message"] for f in findings if f["rule"] == "LIM01"] == [
        "Phenoxyethanol 2.25 % is over the 1 % limit for all products (EU Regulation (EC) "
        "No 1223/2009 Annex V, entry V/29)"]
    # `impact` finds the stored formula through both mixtures, and a review run records the
    # inner declaration among the records it used (its change makes the run stale)
    assert run_formdb(["--db", url, "formula", "import", str(formula)]).exit_code == 0
    impact = run_formdb(["--db", url, "impact", "Phenoxyethanol", "--format", "json"])
    assert [f["via"] for f in json.loads(impact.stdout)["formulas"]] == [
        [f"line 2 {outer} (a mixture containing Phenoxyethanol)"]], impact.stdout
    with Library.open(url) as library, library.read() as session:
        content, text = read_formula_file(formula)
        [resolved] = resolve_all(session, [FormulaInput(content, text, str(formula))])
        used = used_records(resolved, load_reference_data(session))
    assert {r["key"] for r in used if r["kind"] == "constituent"} == {
        f"{outer} > {inner}", f"{outer} > Glycerin", f"{inner} > Phenoxyethanol",
        f"{inner} > Ethylhexylglycerin"}


def test_a_path_too_long_for_the_file_system_is_refused(seeded_sqlite_url: str,
                                                        tmp_path: Path) -> None:
    """Found by an option fuzz: a file name of 300 characters (over the 255 of most file
    systems) as --out, an export's FILE, --profile or --sheets ended in 'internal problem
    (OSError: [Errno 36] File name too long)', exit 70: Path.exists and is_symlink raise it."""
    url = seeded_sqlite_url
    formula = _formula(tmp_path / "f.toml")
    long = str(tmp_path / ("a" * 300))
    for args in (["check", str(formula), "--out", long],
                 ["batch", str(formula), "--kg", "1", "--out", f"{long}.csv"],
                 ["ingredient", "export", f"{long}.csv"],
                 ["source", "export", f"{long}.xlsx"]):
        _refused(run_formdb(["--db", url, *args]), "cannot be written (File name too long)")
    for args in (["check", str(formula), "--profile", f"{long}.toml"],
                 ["rules", "--profile", long]):
        _refused(run_formdb(["--db", url, *args]), "cannot be read (File name too long)")
    planned = run_formdb(["--db", url, "screen", "plan", "larkspur-s1", "--oil",
                          "Caprylic/Capric Triglyceride=1", "--low", "Sorbitan Oleate",
                          "--high", "Polysorbate 80", "--from-hlb", "5", "--to-hlb", "15"])
    assert planned.exit_code == 0, planned.stderr
    _refused(run_formdb(["--db", url, "screen", "show", "larkspur-s1", "--sheets", long]),
             "cannot be used (File name too long)")
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


def test_a_source_is_not_issued_in_the_future(seeded_library_url: str, tmp_path: Path) -> None:
    """Found by hand: `source add --set issued=2999-01-01` stored a supplier data sheet issued
    in 2999 (`price add --date` in the future was already refused); a real date that does not
    exist (2026-02-30) was and is refused."""
    url = seeded_library_url
    sds = ["--citation", "Larkspur supplier sheet 12", "--kind", "supplier data sheet",
           "--set", "supplier=Larkspur Supply", "--set", "document=LS-12"]
    before = library_state(url)
    _refused(run_formdb(["--db", url, "source", "add", "larkspur-sds-12", *sds,
                         "--set", "issued=2999-01-01"]), "column issued: is in the future")
    _refused(run_formdb(["--db", url, "source", "add", "larkspur-sds-12", *sds,
                         "--set", "issued=2026-02-30"]), "column issued")
    table = tmp_path / "sources.csv"
    table.write_text("key,citation,kind,supplier,document,issued\n"
                     "larkspur-sds-12,Larkspur supplier sheet 12,supplier data sheet,"
                     "Larkspur Supply,LS-12,2999-01-01\n", encoding="utf-8")
    _refused(run_formdb(["--db", url, "source", "import", str(table)]),
             "row 2, column issued: is in the future")
    assert library_state(url) == before
    added = run_formdb(["--db", url, "source", "add", "larkspur-sds-12", *sds,
                        "--set", "issued=2025-06-30"])
    assert added.exit_code == 0, added.stderr
    _refused(run_formdb(["--db", url, "source", "edit", "larkspur-sds-12", "--set",
                         "issued=2999-01-01"]), "column issued: is in the future")


# --- a report's format and its file name ------------------------------------------------------

def test_a_check_report_is_what_its_file_name_says(seeded_sqlite_url: str,
                                                   tmp_path: Path) -> None:
    """Found by hand: `check f.toml --out report.html` wrote the text report into report.html
    (and report.json held text), where `batch --out sheet.csv` takes its format from the name.
    Now the name's extension sets the format when --format is not given, and a name that says
    another format than --format is refused."""
    url = seeded_sqlite_url
    formula = _formula(tmp_path / "f.toml")
    for name, starts in (("r.html", "<!DOCTYPE html>"), ("r.HTM", "<!DOCTYPE html>"),
                         ("r.json", "{"), ("r.txt", "─"), ("r.out", "─")):
        done = run_formdb(["--db", url, "check", str(formula), "--out", str(tmp_path / name)])
        assert done.exit_code == 0, done.stderr
        assert (tmp_path / name).read_text(encoding="utf-8").lstrip().startswith(starts), name
    jsonl = tmp_path / "r.jsonl"
    assert run_formdb(["--db", url, "check", str(formula), "--out", str(jsonl)]).exit_code == 0
    assert json.loads(jsonl.read_text(encoding="utf-8").splitlines()[0])
    _refused(run_formdb(["--db", url, "check", str(formula), "--format", "text", "--out",
                         str(tmp_path / "s.html")]), "the name says html, but --format is text")
    assert not (tmp_path / "s.html").exists()
    same = run_formdb(["--db", url, "check", str(formula), "--format", "json", "--out",
                       str(tmp_path / "s.report")])
    assert same.exit_code == 0 and (tmp_path / "s.report").read_text().startswith("{")
    # JSON is text: a .txt name takes the format asked for, as a name that says none does
    as_text = run_formdb(["--db", url, "check", str(formula), "--format", "json", "--out",
                          str(tmp_path / "s.txt")])
    assert as_text.exit_code == 0 and (tmp_path / "s.txt").read_text().startswith("{")
