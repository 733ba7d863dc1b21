"""Every hostile input of issue 15 that once ended in an internal problem, a hang, a clobbered
file or a look-alike ingredient, kept as a regression test, on both backends where the library
is involved. The names and values are made up for the test (Larkspur Bench Laboratories)."""

from __future__ import annotations

import csv
import json
import os
import sqlite3
import stat
import unicodedata
import zipfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest
from sqlalchemy import inspect

from formdb.cli.main import EXIT_INTERNAL
from formdb.store.db import make_engine
from tests.helpers import (
    CliResult,
    cli_commands,
    dump_database,
    fresh_pg_database,
    library_state,
    pg_base_url,
    run_as,
    run_formdb,
)

EMULSIFIERS = ["Sorbitan Laurate", "Sorbitan Stearate", "Sorbitan Oleate", "Sorbitan Sesquioleate",
               "Sorbitan Trioleate", "Polysorbate 20", "Polysorbate 60", "Polysorbate 80",
               "Glyceryl Stearate", "PEG-100 Stearate", "Steareth-2", "Steareth-20", "Ceteth-20",
               "Laureth-4", "Ceteareth-20", "PEG-40 Hydrogenated Castor Oil",
               "Polyglyceryl-3 Diisostearate", "Lecithin"]


def _refused(result: CliResult, *fragments: str) -> None:
    """Exit 2 with one ``Error:`` line (naming what went wrong), never an internal problem."""
    assert result.exit_code == 2, result
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert lines and all(line.startswith("Error: ") for line in lines), result.stderr
    assert "internal problem" not in result.stderr
    for fragment in fragments:
        assert fragment in result.stderr, result.stderr


def _formula(path: Path, lines: list[tuple[str, float]], extra: str = "") -> Path:
    body = ['name = "Larkspur hostile cream"', 'category = "leave-on"', extra]
    for inci, percent in lines:
        body += ["[[ingredients]]", f'inci = "{inci}"', f"percent = {percent}"]
    path.write_text("\n".join(body) + "\n", encoding="utf-8")
    return path


# --- internal errors have their own exit code ---------------------------------------------------

def test_an_internal_error_exits_70_not_2(sqlite_url: str, monkeypatch: pytest.MonkeyPatch
                                           ) -> None:
    import formdb.services.library.ingredients as ingredients

    def broken(*_args: object, **_kwargs: object) -> None:
        raise RuntimeError("a planted bug")

    monkeypatch.setattr(ingredients, "list_ingredients", broken)
    result = run_formdb(["--db", sqlite_url, "ingredient", "list"])
    assert result.exit_code == EXIT_INTERNAL == 70
    assert result.stderr.startswith("Error: internal problem (RuntimeError: a planted bug)")


@pytest.mark.parametrize("value", ["yes\nno", "\x1c\x97\néíI", "a\rb", "a\u2028b"])
def test_a_line_break_in_quoted_input_keeps_the_error_one_line(seeded_library_url: str,
                                                               value: str) -> None:
    """Found by the fuzz suite (deep profile): a value holding a newline, quoted back in the
    refusal, split the one Error: line in two."""
    result = run_formdb(["--db", seeded_library_url, "ingredient", "edit", "Sorbitan Oleate",
                         "--set", f"electrolyte_sensitive={value}"])
    assert result.exit_code == 2
    assert len(result.stderr.splitlines()) == 1, result.stderr
    assert result.stderr.startswith("Error: ")
    usage = run_formdb(["--db", seeded_library_url, "ingredient", "list", "--format", value])
    assert usage.exit_code == 2 and len(usage.stderr.splitlines()) == 1, usage.stderr


def test_exit_codes_are_in_the_help() -> None:
    result = run_formdb(["--help"])
    assert result.exit_code == 0
    text = " ".join(result.stdout.split())
    assert "2 bad input" in text and "70 an internal error" in text


# --- the solver and formulas ---------------------------------------------------------------------

def test_eighteen_emulsifiers_are_solved(seeded_library_url: str, tmp_path: Path) -> None:
    share = 18 / len(EMULSIFIERS)
    path = _formula(tmp_path / "many.toml", [("Aqua", 70), ("Paraffinum Liquidum", 12),
                                              *((e, share) for e in EMULSIFIERS)],
                    'intended_type = "O/W"')
    checked = run_formdb(["--db", seeded_library_url, "check", str(path), "--format", "json"])
    assert checked.exit_code in (0, 1), checked.stderr
    blended = run_formdb(["--db", seeded_library_url, "blend", str(path)])
    assert blended.exit_code == 0, blended.stderr


@pytest.mark.parametrize(("other", "says"), [
    ("Sodium Lauryl Sulfate", "Davies' scale"),
    ("Acacia Senegal Gum", "a gum or protein"),
])
def test_blend_leaves_out_emulsifiers_off_griffins_scale(seeded_library_url: str, tmp_path: Path,
                                                         other: str, says: str) -> None:
    """Found by hand: an ionic surfactant or a gum beside Griffin-scale emulsifiers made
    ``blend FILE`` zip the check's fractions (Griffin members only) against every emulsifier
    with an HLB (an internal error)."""
    path = _formula(tmp_path / "ionic.toml", [("Aqua", 75), ("Paraffinum Liquidum", 15),
                                               ("Polysorbate 80", 4), ("Sorbitan Oleate", 4),
                                               (other, 2)], 'intended_type = "O/W"')
    blended = run_formdb(["--db", seeded_library_url, "blend", str(path)])
    assert blended.exit_code == 0, blended.stderr
    assert f"{other}: " in blended.stdout and says in " ".join(blended.stdout.split())
    assert "Polysorbate 80" in blended.stdout and "Sorbitan Oleate" in blended.stdout
    targeted = run_formdb(["--db", seeded_library_url, "blend", str(path), "--target", "11"])
    assert targeted.exit_code == 0, targeted.stderr


def test_one_ingredient_on_two_lines_over_100_with_a_product(seeded_library_url: str,
                                                             tmp_path: Path) -> None:
    path = _formula(tmp_path / "twice.toml", [("Aqua", 80), ("Aqua", 30)],
                    'product = "hand cream"')
    for fmt in ("text", "json", "html"):
        result = run_formdb(["--db", seeded_library_url, "check", str(path), "--profile",
                             "strict", "--format", fmt])
        assert result.exit_code == 1, result  # the total is off: an error finding, not a crash


def test_one_ingredient_on_many_lines_clashes_once(seeded_library_url: str,
                                                    tmp_path: Path) -> None:
    """Found by hand: a 1,000-line formula (the most a file may hold) repeating a few
    emulsifiers gave a clash finding per pair of lines, 26,000 findings and 20 s of CPU to
    print; an ingredient on several lines is one ingredient, at its total."""
    path = _formula(tmp_path / "repeated.toml", [("Aqua", 88), *[
        ("Sodium Lauryl Sulfate", 1), ("Cetrimonium Chloride", 1)] * 6])
    checked = run_formdb(["--db", seeded_library_url, "check", str(path), "--format", "json"])
    assert checked.exit_code == 1, checked.stderr
    result = json.loads(checked.stdout)
    result = result[0] if isinstance(result, list) else result
    clashes = [f for f in result["findings"] if f["rule"] == "ION01"]
    assert len(clashes) == 1, clashes
    assert {clashes[0]["values"]["percent_a"], clashes[0]["values"]["percent_b"]} == {6.0}


def test_deeply_nested_toml_is_refused(sqlite_url: str, tmp_path: Path) -> None:
    path = tmp_path / "nested.toml"
    path.write_text('name = "x"\ncategory = "leave-on"\nx = ' + "[" * 5000 + "]" * 5000 + "\n",
                    encoding="utf-8")
    _refused(run_formdb(["--db", sqlite_url, "check", str(path)]), "nested deeper than 16")
    profile = tmp_path / "nested-profile.toml"
    profile.write_text('name = "n"\nselect = ' + "[" * 3000 + "]" * 3000 + "\n", encoding="utf-8")
    formula = _formula(tmp_path / "ok.toml", [("Aqua", 100)])
    _refused(run_formdb(["--db", sqlite_url, "check", str(formula), "--profile", str(profile)]),
             "nested deeper")


def test_a_formula_or_profile_over_5_mb_is_refused(sqlite_url: str, tmp_path: Path) -> None:
    from formdb.schemas.bounds import MAX_TOML_BYTES

    padding = "#" + "x" * MAX_TOML_BYTES + "\n"
    huge = tmp_path / "huge.toml"
    huge.write_text('name = "x"\ncategory = "leave-on"\n' + padding, encoding="utf-8")
    _refused(run_formdb(["--db", sqlite_url, "check", str(huge)]), "more than 5,000,000 bytes")
    profile = tmp_path / "huge-profile.toml"
    profile.write_text('name = "p"\n' + padding, encoding="utf-8")
    formula = _formula(tmp_path / "ok.toml", [("Aqua", 100)])
    _refused(run_formdb(["--db", sqlite_url, "check", str(formula), "--profile", str(profile)]),
             "huge-profile.toml")


def test_a_table_of_too_many_rows_is_refused(sqlite_url: str, tmp_path: Path,
                                             monkeypatch: pytest.MonkeyPatch) -> None:
    """The row bound (200,000 data rows), lowered here so the test stays small."""
    import formdb.services.library.tables as tables

    monkeypatch.setattr(tables, "MAX_TABLE_ROWS", 50)
    rows = "".join(f"Larkspur Row {i},rule-of-thumb\n" for i in range(51))
    path = tmp_path / "rows.csv"
    path.write_text("inci_name,source\n" + rows, encoding="utf-8")
    before = library_state(sqlite_url)
    _refused(run_formdb(["--db", sqlite_url, "ingredient", "import", str(path)]),
             "more than 50 rows")
    assert library_state(sqlite_url) == before


@pytest.mark.slow  # packing 600 MB: over a second
@pytest.mark.parametrize(("text", "row"), [
    ("inci_name," + ",".join(f"c{i}" for i in range(1_500)) + "\nLarkspur Wide\n", "row 1"),
    ("inci_name,source\nLarkspur Wide" + "," * 3_000_000 + "\n", "row 2"),
])
def test_a_table_too_wide_is_refused_before_it_is_padded(sqlite_url: str, tmp_path: Path,
                                                        text: str, row: str) -> None:
    """Found by hand: 3,000,000 commas on one line padded every row to 3,000,001 cells (a few
    more rows would exhaust memory), and 300,000 unknown columns took 7 s to list."""
    path = tmp_path / "wide.csv"
    path.write_text(text, encoding="utf-8")
    _refused(run_formdb(["--db", sqlite_url, "ingredient", "import", str(path)]), row,
             "more than 1,000 columns")


def test_a_refusal_of_many_problems_shows_the_first_hundred(sqlite_url: str,
                                                           tmp_path: Path) -> None:
    path = tmp_path / "unknown.csv"
    path.write_text("inci_name," + ",".join(f"c{i}" for i in range(150)) + "\nLarkspur U\n",
                    encoding="utf-8")
    result = run_formdb(["--db", sqlite_url, "ingredient", "import", str(path)])
    lines = result.stderr.splitlines()
    assert result.exit_code == 2 and len(lines) == 101, result.stderr[-300:]
    assert all(line.startswith("Error: ") for line in lines)
    assert lines[-1].startswith("Error: and 50 more problems of the same input")


def test_a_workbook_that_unpacks_too_far_is_not_read(sqlite_url: str, tmp_path: Path) -> None:
    """A ZIP bomb: 600 MB of one repeated byte in a sheet, a few hundred KB packed."""
    from openpyxl import Workbook

    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.append(["inci_name", "source"])
    sheet.append(["Larkspur Bomb", "rule-of-thumb"])
    plain = tmp_path / "plain.xlsx"
    book.save(plain)
    bomb = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(plain) as source, \
            zipfile.ZipFile(bomb, "w", zipfile.ZIP_DEFLATED) as target:
        for item in source.infolist():
            data = source.read(item)
            if item.filename == "xl/worksheets/sheet1.xml":
                with target.open(item.filename, "w") as out:
                    out.write(data.replace(b"<sheetData>", b"<!--", 1))
                    for _ in range(600):
                        out.write(b"A" * 1_000_000)
                    out.write(b"--><sheetData>" + data.split(b"<sheetData>", 1)[1])
                continue
            target.writestr(item, data)
    assert bomb.stat().st_size < 5_000_000
    _refused(run_formdb(["--db", sqlite_url, "ingredient", "import", str(bomb)]),
             "unpacks to")


class _Hung(BaseException):
    """Not an OSError (as TimeoutError is) nor an Exception: no handler in formdb takes it
    for a file it could not read."""


@contextmanager
def _deadline(seconds: int) -> Iterator[None]:
    """Fail instead of hanging (a command that read /dev/zero to its end, or waited on a pipe
    with no writer, would never return)."""
    import signal

    def expired(*_args: object) -> None:
        raise _Hung(f"no answer within {seconds} s")

    previous = signal.signal(signal.SIGALRM, expired)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


@pytest.mark.parametrize("command", [
    ["check", "{input}"], ["formula", "import", "{input}"], ["ingredient", "import", "{input}"],
    ["source", "import", "{input}"], ["lists", "import", "{input}"],
    ["check", "{formula}", "--profile", "{input}"],
    ["source", "identify", "{input}"], ["audit", "verify", "--anchor", "{input}"],
], ids=lambda c: " ".join(c[:2]))
@pytest.mark.parametrize("kind", ["device", "pipe"])
def test_a_device_or_pipe_is_refused_not_read_forever(seeded_sqlite_url: str, tmp_path: Path,
                                                       command: list[str], kind: str) -> None:
    """Found by hand: `check /dev/zero` and `ingredient import /dev/zero` read until the
    machine ran out of memory; a named pipe with no writer hung them."""
    if kind == "device":
        source = Path("/dev/zero")
    else:
        source = tmp_path / "pipe.toml"
        os.mkfifo(source)
    formula = _formula(tmp_path / "f.toml", [("Aqua", 100)])
    args = [a.format(input=source, formula=formula) for a in command]
    with _deadline(30):
        result = run_formdb(["--db", seeded_sqlite_url, *args])
    assert result.exit_code == 2, result
    assert "regular file" in result.stderr or "does not exist" in result.stderr, result.stderr


def test_review_status_does_not_wait_on_a_formula_file_turned_into_a_pipe(
        seeded_sqlite_url: str, tmp_path: Path) -> None:
    """A review run remembers its formula file; `review status` reads it again to tell
    whether it changed. A pipe put in its place hung the command."""
    formula = _formula(tmp_path / "f.toml", [("Aqua", 95), ("Glycerin", 5)])
    ran = run_formdb(["--db", seeded_sqlite_url, "review", "run", str(formula)])
    assert ran.exit_code == 0, ran.stderr
    formula.unlink()
    os.mkfifo(formula)
    with _deadline(30):
        status = run_formdb(["--db", seeded_sqlite_url, "review", "status", "--format", "json"])
    assert status.exit_code == 0, status.stderr
    assert "cannot be read now" in status.stdout


def test_a_formula_of_too_many_lines_is_refused(sqlite_url: str, tmp_path: Path) -> None:
    path = _formula(tmp_path / "long.toml", [("Aqua", 0.05)] * 1001)
    _refused(run_formdb(["--db", sqlite_url, "check", str(path)]), "ingredients")


@pytest.mark.parametrize(("rule", "key", "value", "says"), [
    ("HLB01", "tolerance", "1e12", "at most 10"),
    ("HLB01", "tolerance", "nan", "finite"),
    ("BAL01", "tolerance", "inf", "finite"),
    ("MOS01", "threshold", "1e-300", "at least 1"),
    ("PAK01", "random_close", "5e-324", "at least 0.01"),
])
def test_profile_values_are_finite_and_in_range(sqlite_url: str, tmp_path: Path, rule: str,
                                                key: str, value: str, says: str) -> None:
    profile = tmp_path / "p.toml"
    profile.write_text(f'name = "p"\nversion = "1"\nextends = "default"\n[rules.{rule}]\n'
                       f"{key} = {value}\n", encoding="utf-8")
    formula = _formula(tmp_path / "f.toml", [("Aqua", 100)])
    _refused(run_formdb(["--db", sqlite_url, "check", str(formula), "--profile", str(profile)]),
             f"[rules.{rule}], option {key}", says)


@pytest.mark.parametrize(("key", "value"), [("droplet_diameter_um", "5e-324"),
                                            ("surface_excess_mg_m2", "1e-300"),
                                            ("body_weight_kg", "nan")])
def test_profile_facts_are_in_range(sqlite_url: str, tmp_path: Path, key: str,
                                    value: str) -> None:
    profile = tmp_path / "p.toml"
    profile.write_text(f'name = "p"\nversion = "1"\nextends = "default"\n[facts]\n'
                       f"{key} = {value}\n", encoding="utf-8")
    formula = _formula(tmp_path / "f.toml", [("Aqua", 100)])
    _refused(run_formdb(["--db", sqlite_url, "check", str(formula), "--profile", str(profile)]),
             f"[facts] key {key}")


# --- tables ----------------------------------------------------------------------------------

def test_old_mac_line_endings_import(library_url: str, tmp_path: Path) -> None:
    path = tmp_path / "mac.csv"
    path.write_bytes(b"inci_name,roles,hlb,source\rLarkspur Mac Ester,emulsifier,5,"
                     b"rule-of-thumb\r")
    result = run_formdb(["--db", library_url, "ingredient", "import", str(path)])
    assert result.exit_code == 0, result.stderr
    shown = run_formdb(["--db", library_url, "ingredient", "show", "Larkspur Mac Ester"])
    assert shown.exit_code == 0 and "rule-of-thumb" in shown.stdout


@pytest.mark.parametrize("unit", ["\u00ac\U000c09ad\x8b", "g/(", "**", "g/mL)("])
def test_a_garbled_unit_is_refused_with_its_cell(library_url: str, tmp_path: Path,
                                                 unit: str) -> None:
    """Found by the fuzz suite: pint's parser asserted on some unit text (an internal error)."""
    path = tmp_path / "units.csv"
    path.write_text(f"inci_name,density,source\nLarkspur Unit Oil,0.9 {unit},rule-of-thumb\n",
                    encoding="utf-8")
    before = library_state(library_url)
    result = run_formdb(["--db", library_url, "ingredient", "import", str(path)])
    _refused(result, "row 2", "density")
    assert library_state(library_url) == before


@pytest.mark.parametrize("size", [40_000, 140_000])
def test_a_huge_cell_is_refused_with_its_row(library_url: str, tmp_path: Path, size: int) -> None:
    path = tmp_path / "big.csv"
    path.write_text(f"inci_name,roles,hlb,source\nLarkspur Big {'x' * size},emollient,5,"
                    "rule-of-thumb\n", encoding="utf-8")
    before = library_state(library_url)
    _refused(run_formdb(["--db", library_url, "ingredient", "import", str(path)]),
             str(path), "row 2")
    assert library_state(library_url) == before


@pytest.mark.parametrize("digits", [25, 400])  # 400: found by the fuzz suite (OverflowError)
def test_expect_version_beyond_64_bits_is_refused(seeded_library_url: str, digits: int) -> None:
    before = library_state(seeded_library_url)
    result = run_formdb(["--db", seeded_library_url, "ingredient", "edit", "Cetyl Alcohol",
                         "--set", "hlb=5", "--source", "rule-of-thumb", "--reason", "test",
                         "--expect-version", "9" * digits])
    assert result.exit_code == 2 and "--expect-version" in result.stderr
    assert "internal problem" not in result.stderr
    assert library_state(seeded_library_url) == before


# --- names and numbers -----------------------------------------------------------------------

@pytest.mark.parametrize(("name", "says"), [
    ("Gly\u200bcerin Larkspur", "U+200B"),
    ("Larkspur \u202eretsE", "U+202E"),
    ("Larkspur\x1b[31m Ester", "U+001B"),
    ("Larkspur\x07Ester", "U+0007"),
])
def test_invisible_characters_are_refused(library_url: str, name: str, says: str) -> None:
    before = library_state(library_url)
    _refused(run_formdb(["--db", library_url, "ingredient", "add", name]), says)
    assert library_state(library_url) == before


@pytest.mark.parametrize("lookalike", ["Glуcerin",  # Cyrillic u (U+0443) for y
                                       "glycerin.", "GLY-CERIN", "Ｇｌｙｃｅｒｉｎ",
                                       "Glycérin"])
def test_a_lookalike_of_an_existing_name_is_refused(seeded_library_url: str,
                                                    lookalike: str) -> None:
    before = library_state(seeded_library_url)
    _refused(run_formdb(["--db", seeded_library_url, "ingredient", "add", lookalike]),
             "'Glycerin'")
    assert library_state(seeded_library_url) == before


def test_a_lookalike_in_an_import_is_refused(seeded_library_url: str, tmp_path: Path) -> None:
    path = tmp_path / "alike.csv"
    path.write_text("inci_name,synonyms,roles\nLarkspur Ester,Polysorbate-20,emollient\n",
                    encoding="utf-8")
    before = library_state(seeded_library_url)
    result = run_formdb(["--db", seeded_library_url, "ingredient", "import", str(path)])
    _refused(result, "row 2, column synonyms", "'Polysorbate 20'", "--accept-unusual")
    assert library_state(seeded_library_url) == before


def test_names_are_stored_nfc(library_url: str) -> None:
    decomposed = unicodedata.normalize("NFD", "Larkspur Oléate")
    assert decomposed != "Larkspur Oléate"
    assert run_formdb(["--db", library_url, "ingredient", "add", decomposed]).exit_code == 0
    listed = run_formdb(["--db", library_url, "ingredient", "list", "--format", "json"])
    assert "Larkspur Oléate" in listed.stdout  # the composed form
    found = run_formdb(["--db", library_url, "ingredient", "show", "Larkspur Oléate"])
    assert found.exit_code == 0


@pytest.mark.parametrize(("name", "says"), [
    ("Larkspur\\u001b[2J cream", "U+001B"), ("Larkspur \\u202e cream", "U+202E"),
    ("   ", "name is empty"),
])
def test_a_formula_name_is_clean_like_an_ingredient_name(library_url: str, tmp_path: Path,
                                                         name: str, says: str) -> None:
    """Found by hand: formula import stored names holding ESC sequences, a right-to-left
    override, or nothing but spaces."""
    path = tmp_path / "f.toml"
    path.write_text(f'name = "{name}"\ncategory = "leave-on"\n[[ingredients]]\n'
                    'inci = "Aqua"\npercent = 100\n', encoding="utf-8")
    before = library_state(library_url)
    for command in (["formula", "import"], ["check"]):
        _refused(run_formdb(["--db", library_url, *command, str(path)]), "key name", says)
    assert library_state(library_url) == before


def test_a_formula_line_is_read_in_nfc(library_url: str, tmp_path: Path) -> None:
    assert run_formdb(["--db", library_url, "ingredient", "add", "Larkspur Oléate"]
                      ).exit_code == 0
    path = _formula(tmp_path / "nfd.toml", [(unicodedata.normalize("NFD", "Larkspur Oléate"),
                                              100)])
    checked = run_formdb(["--db", library_url, "check", str(path), "--format", "json"])
    assert checked.exit_code in (0, 1), checked.stderr  # found, not 'unknown ingredient'


@pytest.mark.parametrize("digits", ["١٢", "１２", "۱۲"])  # Arabic-Indic, fullwidth, Persian 12
def test_numbers_take_ascii_digits_only(library_url: str, tmp_path: Path, digits: str) -> None:
    before = library_state(library_url)
    _refused(run_formdb(["--db", library_url, "ingredient", "add", "Larkspur Digits",
                         "--set", f"hlb={digits}", "--source", "rule-of-thumb"]), "not a number")
    path = tmp_path / "digits.csv"
    path.write_text(f"inci_name,hlb,source\nLarkspur Digits,{digits},rule-of-thumb\n",
                    encoding="utf-8")
    _refused(run_formdb(["--db", library_url, "ingredient", "import", str(path)]), "row 2")
    blended = run_formdb(["--db", library_url, "blend", "--target", digits, "--using", "a",
                          "--using", "b"])
    assert blended.exit_code == 2 and "ASCII digits" in blended.stderr
    assert library_state(library_url) == before


def test_every_number_option_takes_ascii_digits_only() -> None:
    """click's FLOAT, INT, IntRange and FloatRange read '١٢' as 12 (found: `price add --per-kg
    ١٢` stored a price); every number option goes through formdb's Number instead."""
    import click

    from formdb.cli.main import Number

    loose = [f"{' '.join(path)} {param.name}" for path, command in cli_commands()
             for param in command.params
             if isinstance(param.type, click.types.IntParamType | click.types.FloatParamType)
             and not isinstance(param.type, Number)]
    assert loose == []
    assert Number(float, 0, 10).convert("5", None, None) == 5.0
    for text in ("١٢", "１２", "nan", "inf", "1e999"):
        with pytest.raises(click.BadParameter):
            Number(float, -1e300, 1e300).convert(text, None, None)


@pytest.mark.parametrize(("args", "says"), [
    (["price", "add", "Glycerin", "--per-kg", "١٢", "--currency", "EUR", "--supplier", "x"],
     "ASCII digits"),
    (["mixture", "set", "Glyceryl Stearate", "--part", "Polysorbate 80=٥٠@rule-of-thumb",
      "--part", "Polysorbate 60=50@rule-of-thumb"], "not a percentage"),
    (["screen", "plan", "s", "--oil", "Paraffinum Liquidum=٧٠", "--low", "Sorbitan Oleate",
      "--high", "Polysorbate 80"], "--oil"),
    (["impact", "Glycerin", "--since", "²"], "--since"),  # int('²') failed: exit 70
    (["impact", "Glycerin", "--since", "١"], "--since"),
])
def test_numbers_in_option_text_take_ascii_digits_only(seeded_sqlite_url: str, args: list[str],
                                                       says: str) -> None:
    before = library_state(seeded_sqlite_url)
    result = run_formdb(["--db", seeded_sqlite_url, *args])
    assert result.exit_code == 2, result
    assert says in result.stderr and "internal problem" not in result.stderr, result.stderr
    assert library_state(seeded_sqlite_url) == before


@pytest.mark.parametrize("balance", ["١:٢٠٠", "1e-300:1e300", "0.01:1e300", "1e-7:200"])
def test_a_balance_is_ascii_and_physical(seeded_sqlite_url: str, tmp_path: Path,
                                         balance: str) -> None:
    """Found by hand: --balance 1e-300:1e300 ended in decimal.InvalidOperation (exit 70)."""
    path = _formula(tmp_path / "f.toml", [("Aqua", 95), ("Glycerin", 5)])
    _refused(run_formdb(["--db", seeded_sqlite_url, "batch", str(path), "--kg", "5",
                         "--balance", balance]), "--balance")


def test_a_mixture_table_takes_ascii_digits_only(seeded_sqlite_url: str, tmp_path: Path) -> None:
    path = tmp_path / "mix.csv"
    path.write_text("mixture_inci,constituent_inci,percent,source\n"
                    "Glyceryl Stearate,Polysorbate 80,٥٠,rule-of-thumb\n"
                    "Glyceryl Stearate,Polysorbate 60,50,rule-of-thumb\n", encoding="utf-8")
    before = library_state(seeded_sqlite_url)
    _refused(run_formdb(["--db", seeded_sqlite_url, "mixture", "import", str(path)]),
             "row 2, column percent")
    assert library_state(seeded_sqlite_url) == before


@pytest.mark.parametrize("cas", ["0000-00-0", "00-00-0", "٧٧٣٢-١٨-٥", "07732-18-5",
                                 "7732-18-4"])
def test_cas_numbers_must_be_real(library_url: str, cas: str) -> None:
    _refused(run_formdb(["--db", library_url, "ingredient", "add", "Larkspur Cas",
                         "--cas", cas]), "cas")


def test_a_real_cas_number_is_accepted(library_url: str) -> None:
    # water, 7732-18-5: 8*1+1*2+2*3+3*4+7*5+7*6 = 105, check digit 5 (CAS Registry's rule)
    assert run_formdb(["--db", library_url, "ingredient", "add", "Larkspur Water",
                       "--cas", "7732-18-5"]).exit_code == 0


# --- output safety ---------------------------------------------------------------------------

def test_list_csv_guards_formulas_and_terminal_output_escapes(library_url: str) -> None:
    added = run_formdb(["--db", library_url, "ingredient", "add", "=HYPERLINK(1)",
                        "--reason", "made\x1b]0;owned\x07 up"])
    assert added.exit_code == 0, added.stderr
    listed = run_formdb(["--db", library_url, "ingredient", "list", "--format", "csv"])
    cells = [c for row in csv.reader(listed.stdout.splitlines()) for c in row]
    assert "'=HYPERLINK(1)" in cells
    assert not [c for c in cells if c.startswith(("=", "+", "-", "@"))]
    history = run_formdb(["--db", library_url, "ingredient", "history", "=HYPERLINK(1)"])
    assert history.exit_code == 0
    assert "\x1b" not in history.stdout and "\x07" not in history.stdout
    assert "\\u001b" in history.stdout or "\\u0007" in history.stdout


def test_a_control_sequence_piped_out_is_escaped_not_dropped(library_url: str) -> None:
    """Found by hand: with the output not a terminal, click.echo stripped an ANSI sequence from
    the data before the terminal filter could show it, so `source list --format csv > file`
    printed the note 'esc\x1b[31mred' as 'escred'. It now comes out as a visible escape."""
    note = "esc\x1b[31mred\x1b[0m end"
    added = run_formdb(["--db", library_url, "source", "add", "larkspur-ansi", "--kind",
                        "estimate", "--citation", "Larkspur notebook", "--set", f"note={note}"])
    assert added.exit_code == 0, added.stderr
    listed = run_formdb(["--db", library_url, "source", "list", "--format", "csv"])
    assert "esc\\u001b[31mred\\u001b[0m end" in listed.stdout, listed.stdout
    assert "\x1b" not in listed.stdout
    changed = run_formdb(["--db", library_url, "source", "edit", "larkspur-ansi", "--set",
                          "note=plain", "--reason", "tidy"])
    assert "esc\\u001b[31mred\\u001b[0m end -> plain" in changed.stdout, changed.stdout


def test_a_control_sequence_in_an_error_line_is_escaped_not_dropped(library_url: str) -> None:
    """Found by an engineer: the error line of a name holding a whole ANSI sequence went
    through click.echo to a stderr that is not a terminal, which stripped it: 'x\x1b[2Jy' was
    reported as 'xy', a name nobody typed. It now shows as a visible escape."""
    refused = run_formdb(["--db", library_url, "ingredient", "show", "x\x1b[2Jy"])
    assert refused.exit_code == 2
    assert "'x\\u001b[2Jy'" in refused.stderr, refused.stderr
    assert "\x1b" not in refused.stderr


def test_tables_show_every_control_character_and_stay_square(seeded_sqlite_url: str,
                                                            tmp_path: Path) -> None:
    """Found by hand: Rich dropped BEL, vertical tab, form feed and carriage return from a
    cell without a trace ('bell\x07' printed as 'bell'), and the escapes the terminal filter
    wrote for other characters came after the layout, pushing the row past its border. Cells
    are now escaped before the layout."""
    url = seeded_sqlite_url
    note = "bell\x07 vt\x0b ff\x0c cr\r rlm\u200f end"
    assert run_formdb(["--db", url, "source", "add", "larkspur-bell", "--kind", "estimate",
                       "--citation", "Larkspur bench notebook 4", "--set", f"note={note}",
                       "--reason", "test"]).exit_code == 0
    shown = run_formdb(["--db", url, "source", "show", "larkspur-bell"])
    assert shown.exit_code == 0, shown.stderr
    assert "bell\\u0007 vt\\u000b ff\\u000c cr\\u000d rlm\\u200f end" in shown.stdout
    table = [line for line in shown.stdout.splitlines() if line[:1] in "┏┃┡│└"]
    assert len({len(line) for line in table}) == 1, table
    formula = tmp_path / "f.toml"
    formula.write_text('name = "Larkspur bell"\ncategory = "leave-on"\n[[ingredients]]\n'
                       'inci = "Aqua"\npercent = 100\nlot = "L\\u0007T"\n', encoding="utf-8")
    sheet = run_formdb(["--db", url, "batch", str(formula), "--kg", "1"])
    assert sheet.exit_code == 0, sheet.stderr
    assert "lot L\\u0007T" in sheet.stdout


def test_html_pages_show_invisible_characters_as_escapes(seeded_sqlite_url: str,
                                                        tmp_path: Path) -> None:
    """Found by hand: the HTML outputs printed a right-to-left override or a zero-width space
    from the library raw, so a printed weigh sheet (or a signer's reason in a review record)
    read other than what is stored; the terminal outputs already showed them as escapes."""
    url = seeded_sqlite_url
    formula = tmp_path / "f.toml"
    formula.write_text('name = "Larkspur bidi"\ncategory = "leave-on"\n[[ingredients]]\n'
                       'inci = "Aqua"\npercent = 100\n'
                       'supplier = "Larkspur \\u202estores\\u200b"\n', encoding="utf-8")
    sheet = tmp_path / "sheet.html"
    made = run_formdb(["--db", url, "batch", str(formula), "--kg", "1", "--out", str(sheet)])
    assert made.exit_code == 0, made.stderr
    page = sheet.read_text(encoding="utf-8")
    assert "Larkspur \\u202estores\\u200b" in page
    assert "\u202e" not in page and "\u200b" not in page


@pytest.mark.parametrize("command", [["ingredient", "show"], ["source", "show"],
                                     ["formula", "show"], ["review", "report"],
                                     ["screen", "show"], ["mixture", "show"]], ids=" ".join)
def test_a_name_not_found_is_quoted_as_typed(seeded_sqlite_url: str,
                                            command: list[str]) -> None:
    """Found by hand: "not found" errors quoted the name through Python's repr, so
    'C:\\x' came back as 'C:\\\\x' and an apostrophe as \\'."""
    for name, shown in (("Larkspur C:\\x oil", "'Larkspur C:\\x oil'"),
                        ("Larkspur O'Hare \\ ester", '"Larkspur O\'Hare \\ ester"')):
        result = run_formdb(["--db", seeded_sqlite_url, *command, name])
        _refused(result, shown)


def test_record_list_csv_guards_formulas(library_url: str) -> None:
    """Found by hand: `source list --format csv` (and the other evidence lists) printed a
    citation starting with '=' as it was."""
    added = run_formdb(["--db", library_url, "source", "add", "larkspur-note", "--kind",
                        "estimate", "--citation", '=HYPERLINK("http://larkspur.invalid")'])
    assert added.exit_code == 0, added.stderr
    listed = run_formdb(["--db", library_url, "source", "list", "--format", "csv"])
    cells = [c for row in csv.reader(listed.stdout.splitlines()) for c in row]
    assert "'=HYPERLINK(\"http://larkspur.invalid\")" in cells
    assert not [c for c in cells if c.startswith(("=", "+", "-", "@"))]


def test_a_control_character_the_library_keeps_is_refused_by_an_xlsx_export(
        seeded_sqlite_url: str, tmp_path: Path) -> None:
    """Found by hand: a note holding BEL (the library keeps it as typed) made `source export
    x.xlsx` and `batch --out x.xlsx` fail inside openpyxl, an internal problem (exit 70). The
    XLSX export now refuses with one line naming the cell; the CSV export keeps the note."""
    url = seeded_sqlite_url
    note = "bell \x07 in the note"
    assert run_formdb(["--db", url, "source", "add", "larkspur-bell", "--kind", "estimate",
                       "--citation", "Larkspur bench notebook 4", "--set", f"note={note}",
                       "--reason", "test"]).exit_code == 0
    out = tmp_path / "out"
    out.mkdir()
    xlsx = out / "sources.xlsx"
    _refused(run_formdb(["--db", url, "source", "export", str(xlsx)]),
             "(key larkspur-bell), column note: holds U+0007, a control character")
    assert not list(out.iterdir())  # nor a temporary file left behind
    csv_file = out / "sources.csv"
    assert run_formdb(["--db", url, "source", "export", str(csv_file)]).exit_code == 0
    with csv_file.open(encoding="utf-8-sig", newline="") as f:
        assert note in [c for row in csv.reader(f) for c in row]
    assert run_formdb(["--db", url, "price", "add", "Aqua", "--per-kg", "1", "--currency",
                       "EUR", "--supplier", "Larkspur \x07 stores"]).exit_code == 0
    formula = tmp_path / "f.toml"
    formula.write_text('name = "Larkspur bell"\ncategory = "leave-on"\n[[ingredients]]\n'
                       'inci = "Aqua"\npercent = 100\n', encoding="utf-8")
    sheet = out / "sheet.xlsx"
    _refused(run_formdb(["--db", url, "batch", str(formula), "--kg", "1", "--out", str(sheet)]),
             "weigh sheet, line 1, column price_supplier: holds U+0007")
    assert not sheet.exists()


# --- output files ----------------------------------------------------------------------------

def _export_commands() -> list[list[str]]:
    """Every table export, `... export FILE`, of the CLI (walked, so a new one is covered;
    `formula export NAME FILE` writes TOML through the same output_file)."""
    import click

    return [list(path) for path, command in cli_commands()
            if path and path[-1] == "export" and not isinstance(command, click.Group)
            and [p.name for p in command.params if isinstance(p, click.Argument)] == ["file"]]


@pytest.mark.parametrize("command", _export_commands(), ids=" ".join)
def test_every_export_is_whole_and_never_clobbers(seeded_sqlite_url: str, tmp_path: Path,
                                                  command: list[str]) -> None:
    """Found by hand: `mixture export` wrote straight over an existing file and through a
    symbolic link."""
    out = tmp_path / "out"
    out.mkdir()
    existing = out / "existing.csv"
    existing.write_text("keep me", encoding="utf-8")
    _refused(run_formdb(["--db", seeded_sqlite_url, *command, str(existing)]), "already exists")
    assert existing.read_text(encoding="utf-8") == "keep me"
    link = out / "link.csv"
    link.symlink_to(out / "elsewhere.csv")
    _refused(run_formdb(["--db", seeded_sqlite_url, *command, str(link), "--force"]),
             "symbolic link")
    assert not (out / "elsewhere.csv").exists()
    library = seeded_sqlite_url.removeprefix("sqlite:///")
    _refused(run_formdb(["--db", seeded_sqlite_url, *command, library, "--force"]),
             "a file the command reads")
    fresh = out / "fresh.xlsx"
    assert run_formdb(["--db", seeded_sqlite_url, *command, str(fresh)]).exit_code == 0
    assert run_formdb(["--db", seeded_sqlite_url, *command, str(fresh), "--force"]
                      ).exit_code == 0
    assert sorted(p.name for p in out.iterdir()) == ["existing.csv", "fresh.xlsx",
                                                          "link.csv"]


def test_out_refuses_an_existing_file_without_force(seeded_sqlite_url: str,
                                                    tmp_path: Path) -> None:
    formula = _formula(tmp_path / "f.toml", [("Aqua", 95), ("Glycerin", 5)])
    out = tmp_path / "report.html"
    out.write_text("keep me", encoding="utf-8")
    args = ["--db", seeded_sqlite_url, "check", str(formula), "--format", "html", "--out",
            str(out)]
    _refused(run_formdb(args), "already exists", "--force")
    assert out.read_text(encoding="utf-8") == "keep me"
    assert run_formdb([*args, "--force"]).exit_code == 0
    assert out.read_text(encoding="utf-8").startswith("<!")
    assert [p.name for p in tmp_path.iterdir() if ".part" in p.name] == []


def test_an_input_is_never_the_output(seeded_sqlite_url: str, tmp_path: Path) -> None:
    formula = _formula(tmp_path / "f.toml", [("Aqua", 95), ("Glycerin", 5)])
    text = formula.read_text(encoding="utf-8")
    for out in (formula, tmp_path / "." / "f.toml"):
        result = run_formdb(["--db", seeded_sqlite_url, "check", str(formula), "--format",
                             "html", "--out", str(out), "--force"])
        _refused(result, "a file the command reads")
    assert formula.read_text(encoding="utf-8") == text
    library = seeded_sqlite_url.removeprefix("sqlite:///")
    before = Path(library).read_bytes()
    for command in (["ingredient", "export", library, "--force"],
                    ["db", "backup", library, "--force"]):
        _refused(run_formdb(["--db", seeded_sqlite_url, *command]), "a file the command reads")
    assert Path(library).read_bytes() == before


def test_a_device_or_pipe_is_never_replaced_by_an_output(seeded_sqlite_url: str,
                                                          tmp_path: Path) -> None:
    """Found by hand: `check f.toml --out /dev/null --force`, run as root, renamed the report
    over the device node (a copy of /dev/null made with mknod became a plain file)."""
    formula = _formula(tmp_path / "f.toml", [("Aqua", 95), ("Glycerin", 5)])
    pipe = tmp_path / "pipe.html"
    os.mkfifo(pipe)
    targets = [pipe]
    if os.geteuid() == 0:  # only root may make a device node
        device = tmp_path / "null.html"
        os.mknod(device, 0o666 | stat.S_IFCHR, os.makedev(1, 3))
        targets.append(device)
    for target in targets:
        for extra in ([], ["--force"]):
            _refused(run_formdb(["--db", seeded_sqlite_url, "check", str(formula), "--format",
                                 "html", "--out", str(target), *extra]), "not a regular file")
        assert not target.is_file() and target.exists()


def test_symlinks_are_not_followed(seeded_sqlite_url: str, tmp_path: Path) -> None:
    target = tmp_path / "elsewhere.csv"
    target.write_text("precious", encoding="utf-8")
    link = tmp_path / "export.csv"
    link.symlink_to(target)
    for extra in ([], ["--force"]):
        result = run_formdb(["--db", seeded_sqlite_url, "ingredient", "export", str(link),
                             *extra])
        _refused(result, "symbolic link")
    assert target.read_text(encoding="utf-8") == "precious" and link.is_symlink()


@pytest.mark.slow  # a downgrade and its backup: seconds
def test_a_downgrade_backup_is_an_output_like_any_other(sqlite_url: str, tmp_path: Path) -> None:
    """Found by hand: `db downgrade --backup` wrote through a dangling symbolic link (its zip
    went to a predictable PATH.partial first) and never met the rules of every other output."""
    from formdb.services.admin.database import history
    from formdb.store.db import head_revision

    previous = next(r.down_revision for r in history(None) if r.revision == head_revision())
    assert previous is not None
    out = tmp_path / "out"
    out.mkdir()
    link = out / "before.zip"
    link.symlink_to(out / "elsewhere.zip")
    existing = out / "existing.zip"
    existing.write_bytes(b"keep me")
    before = library_state(sqlite_url)
    library = sqlite_url.removeprefix("sqlite:///")
    for path, says in ((link, "symbolic link"), (existing, "already exists"),
                       (Path(library), "a file the command reads")):
        for yes in ([], ["--yes"]):
            _refused(run_formdb(["--db", sqlite_url, "db", "downgrade", previous, "--backup",
                                 str(path), *yes]), says)
    assert not (out / "elsewhere.zip").exists() and existing.read_bytes() == b"keep me"
    assert library_state(sqlite_url) == before
    done = run_formdb(["--db", sqlite_url, "db", "downgrade", previous, "--backup",
                       str(out / "fresh.zip"), "--yes"])
    assert done.exit_code == 0, done.stderr
    assert zipfile.is_zipfile(out / "fresh.zip")
    assert sorted(p.name for p in out.iterdir()) == ["before.zip", "existing.zip", "fresh.zip"]


@pytest.mark.slow  # the demo builds a library: seconds
def test_demo_out_is_refused_or_replaced_whole(tmp_path: Path) -> None:
    """Found by hand: `demo --out DIR --force` over an earlier run replaced the reports and
    then stopped at the weigh sheet (never given --force, never checked first), exit 2 with
    half the folder rewritten."""
    out = tmp_path / "demo"
    assert run_formdb(["demo", "--out", str(out)]).exit_code == 0
    names = sorted(p.name for p in out.iterdir())
    assert "weigh-sheet-LB-110-20kg.html" in names
    again = run_formdb(["demo", "--out", str(out), "--force"])
    assert again.exit_code == 0, again.stderr
    first = out / names[0]
    first.unlink()
    _refused(run_formdb(["demo", "--out", str(out)]), "already exists")
    assert not first.exists()  # refused before the first file was written


@pytest.mark.parametrize("umask", [0o022, 0o002, 0o077])
@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_files_follow_the_umask(seeded_sqlite_url: str, tmp_path: Path, umask: int) -> None:
    formula = _formula(tmp_path / "f.toml", [("Aqua", 95), ("Glycerin", 5)])
    old = os.umask(umask)
    try:
        outputs = {
            "report.json": ["check", str(formula), "--format", "json", "--out"],
            "export.csv": ["ingredient", "export"],
            "export.xlsx": ["ingredient", "export"],
            "backup.zip": ["db", "backup"],
        }
        for name, command in outputs.items():
            result = run_formdb(["--db", seeded_sqlite_url, *command, str(tmp_path / name)])
            assert result.exit_code in (0, 1), (name, result.stderr)
            mode = stat.S_IMODE((tmp_path / name).stat().st_mode)
            assert mode == 0o666 & ~umask, (name, oct(mode))
    finally:
        os.umask(old)


def test_a_failed_export_leaves_nothing(seeded_sqlite_url: str, tmp_path: Path,
                                        monkeypatch: pytest.MonkeyPatch) -> None:
    import pandas as pd

    def fail_half_way(self: pd.DataFrame, path: Path, **_kwargs: object) -> None:
        Path(path).write_bytes(b"PK\x03\x04 half a workbook")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(pd.DataFrame, "to_excel", fail_half_way)
    folder = tmp_path / "exports"
    folder.mkdir()
    _refused(run_formdb(["--db", seeded_sqlite_url, "ingredient", "export",
                         str(folder / "library.xlsx")]), "No space left on device")
    assert list(folder.iterdir()) == []  # no workbook, whole or partial, and no temporary file


# --- restores ------------------------------------------------------------------------------

def _parts(archive: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(archive) as z:
        return {name: z.read(name) for name in z.namelist()}


def _rezip(path: Path, parts: dict[str, bytes]) -> Path:
    with zipfile.ZipFile(path, "w") as z:
        for name, data in parts.items():
            z.writestr(name, data)
    return path


def _manifest(parts: dict[str, bytes]) -> dict[str, object]:
    data = json.loads(parts["manifest.json"])
    assert isinstance(data, dict)
    return data


def _empty_like(url: str, tmp_path: Path, name: str) -> Iterator[str]:
    if url.startswith("sqlite"):
        yield f"sqlite:///{tmp_path / name}"
        return
    base = pg_base_url()
    assert base is not None
    with fresh_pg_database(base) as fresh:
        yield fresh


def _broken_archives(parts: dict[str, bytes]) -> dict[str, tuple[dict[str, bytes], str]]:
    """name -> (archive parts, what the refusal says)."""
    manifest = _manifest(parts)
    tables = dict(manifest["tables"])  # type: ignore[call-overload]
    no_revision = {k: v for k, v in manifest.items() if k != "revision"}
    lines = parts["tables/ingredients.jsonl"].decode().splitlines()
    duplicated = "\n".join([*lines, lines[0]]) + "\n"
    wrong_type = json.loads(lines[0])
    wrong_type["id"] = "not a number"
    unknown_table = {**tables, "planted": 0}
    return {
        "no revision": ({**parts, "manifest.json": json.dumps(no_revision).encode()},
                        "names no schema revision"),
        "unknown revision": ({**parts, "manifest.json": json.dumps(
            {**manifest, "revision": "9999"}).encode()}, "not one this formdb knows"),
        "manifest a list": ({**parts, "manifest.json": b"[1, 2]"}, "not a JSON object"),
        "tables a list": ({**parts, "manifest.json": json.dumps(
            {**manifest, "tables": list(tables)}).encode()}, "row count"),
        "missing table file": ({k: v for k, v in parts.items()
                                if k != "tables/ingredients.jsonl"}, "lacks"),
        "unlisted table": ({**parts, "manifest.json": json.dumps(
            {**manifest, "tables": {k: v for k, v in tables.items() if k != "sources"}}
        ).encode()}, "does not list"),
        "planted table": ({**parts, "tables/planted.jsonl": b"", "manifest.json": json.dumps(
            {**manifest, "tables": unknown_table}).encode()}, "not in formdb's schema"),
        "duplicate ids": ({**parts, "tables/ingredients.jsonl": duplicated.encode()},
                          "repeats the id"),
        "wrong count": ({**parts, "manifest.json": json.dumps(
            {**manifest, "tables": {**tables, "ingredients": tables["ingredients"] + 1}}
        ).encode()}, "the manifest says"),
        "a row of a list": ({**parts, "tables/ingredients.jsonl": b"[1, 2]\n"},
                            "not a JSON object"),
        "a foreign column": ({**parts, "tables/ingredients.jsonl": (json.dumps(
            {**json.loads(lines[0]), "is_admin": True}) + "\n").encode()}, "'is_admin'"),
        "a wrong type": ({**parts, "tables/ingredients.jsonl": (
            "\n".join([json.dumps(wrong_type), *lines[1:]]) + "\n").encode()}, "ingredients"),
        "a bad date": ({**parts, "tables/ingredients.jsonl": (json.dumps(
            {**json.loads(lines[0]), "updated_at": "yesterday"}) + "\n").encode()},
                       "not a date"),
        "deep json": ({**parts, "tables/sources.jsonl": b"[" * 100_000 + b"\n"}, "not JSON"),
    }


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_a_damaged_archive_is_refused_before_anything_is_written(seeded_library_url: str,
                                                                 tmp_path: Path) -> None:
    good = tmp_path / "good.zip"
    assert run_formdb(["--db", seeded_library_url, "db", "backup", str(good)]).exit_code == 0
    parts = _parts(good)
    for name, (broken, says) in _broken_archives(parts).items():
        path = _rezip(tmp_path / f"{name.replace(' ', '-')}.zip", broken)
        for target in _empty_like(seeded_library_url, tmp_path, f"{name}.sqlite"):
            result = run_formdb(["--db", target, "db", "restore", str(path), "--yes"])
            if name == "a wrong type" and target.startswith("sqlite"):
                continue  # SQLite stores any value in any column: nothing to refuse there
            _refused(result, says)
            engine = make_engine(target)
            try:
                assert inspect(engine).get_table_names() == [], name  # not even the schema
            finally:
                engine.dispose()


def _jsonl(rows: list[dict[str, object]]) -> bytes:
    return "".join(json.dumps(r) + "\n" for r in rows).encode()


def _forged_users(parts: dict[str, bytes]) -> dict[str, dict[str, bytes]]:
    """Archives whose users or roles were written by hand (the log untouched)."""
    users = [json.loads(line) for line in parts["tables/users.jsonl"].decode().splitlines()]
    roles = [json.loads(line) for line in parts["tables/user_roles.jsonl"].decode().splitlines()]
    manifest = _manifest(parts)
    counts = dict(manifest["tables"])  # type: ignore[call-overload]
    mallory = {**users[0], "id": 99, "name": "mallory"}

    def archive(new_users: list[dict[str, object]], new_roles: list[dict[str, object]]
                ) -> dict[str, bytes]:
        tables = {**counts, "users": len(new_users), "user_roles": len(new_roles)}
        return {**parts, "tables/users.jsonl": _jsonl(new_users),
                "tables/user_roles.jsonl": _jsonl(new_roles),
                "manifest.json": json.dumps({**manifest, "tables": tables}).encode()}

    editor = next(u for u in users if u["name"] == "larkspur-editor")
    return {
        "a forged admin": archive([*users, mallory], [*roles, {"user_id": 99, "role": "admin"}]),
        "a forged migration user": archive(
            [*users, {**mallory, "created_by": "migration 0009_users_roles"}],
            [*roles, *({"user_id": 99, "role": r} for r in ("admin", "editor", "formulator"))]),
        "an editor made admin": archive(users, [*roles, {"user_id": editor["id"],
                                                          "role": "admin"}]),
        "every admin gone (open mode)": archive(
            [u for u in users if u["name"] == "larkspur-editor"],
            [r for r in roles if r["user_id"] == editor["id"]]),
    }


@pytest.mark.slow  # restores: seconds
def test_a_restore_refuses_users_the_change_log_does_not_record(seeded_sqlite_url: str,
                                                                tmp_path: Path) -> None:
    """Found by the issue's fuzzing: an archive whose users table held a forged admin was
    restored, and that admin could then do anything."""
    for args in (["user", "add", "larkspur-admin", "--role", "admin", "--yes"],
                 ["user", "add", "larkspur-editor", "--role", "editor", "--yes"]):
        assert run_as("larkspur-admin", ["--db", seeded_sqlite_url, *args]).exit_code == 0
    good = tmp_path / "good.zip"
    assert run_as("larkspur-admin", ["--db", seeded_sqlite_url, "db", "backup", str(good)]
                  ).exit_code == 0
    for name, parts in _forged_users(_parts(good)).items():
        path = _rezip(tmp_path / f"{name.split()[1]}.zip", parts)
        target = tmp_path / f"{name.split()[1]}.sqlite"
        for extra in ([], ["--accept-broken-chains"]):
            result = run_as("mallory", ["--db", f"sqlite:///{target}", "db", "restore",
                                        str(path), "--yes", *extra])
            _refused(result, "the users in the backup are not those its change log records")
            assert _no_tables(target), name
    target = f"sqlite:///{tmp_path / 'genuine.sqlite'}"
    restored = run_as("larkspur-admin", ["--db", target, "db", "restore", str(good),
                                         "--yes"])
    assert restored.exit_code == 0, restored.stderr


def _sqlite_copy(seeded_sqlite_url: str, tmp_path: Path, sql: str) -> Path:
    copy = tmp_path / "copy.sqlite"
    copy.unlink(missing_ok=True)
    assert run_formdb(["--db", seeded_sqlite_url, "db", "backup", str(copy)]).exit_code == 0
    conn = sqlite3.connect(copy)
    try:
        conn.executescript(sql)
    finally:
        conn.close()
    return copy


@pytest.mark.parametrize(("sql", "says"), [
    ("CREATE TRIGGER planted AFTER INSERT ON ingredients BEGIN "
     "UPDATE ingredients SET retired = 1; END;", "trigger 'planted'"),
    ("CREATE VIEW planted AS SELECT * FROM ingredients;", "view 'planted'"),
    ("CREATE TABLE planted (x);", "table 'planted'"),
    ("CREATE INDEX planted ON ingredients (retired);", "index 'planted'"),
    ("ALTER TABLE ingredients ADD COLUMN planted TEXT;", "table ingredients has the columns"),
    ("DELETE FROM alembic_version;", "no schema revision"),
])
def test_a_sqlite_copy_carries_nothing_foreign(seeded_sqlite_url: str, tmp_path: Path,
                                               sql: str, says: str) -> None:
    copy = _sqlite_copy(seeded_sqlite_url, tmp_path, sql)
    target = tmp_path / "restored.sqlite"
    _refused(run_formdb(["--db", f"sqlite:///{target}", "db", "restore", str(copy), "--yes"]),
             says)
    assert not target.exists() or target.stat().st_size == 0 or _no_tables(target)


def _no_tables(path: Path) -> bool:
    conn = sqlite3.connect(path)
    try:
        return conn.execute("SELECT count(*) FROM sqlite_master").fetchone()[0] == 0
    finally:
        conn.close()


def test_a_clean_sqlite_copy_still_restores(seeded_sqlite_url: str, tmp_path: Path) -> None:
    copy = _sqlite_copy(seeded_sqlite_url, tmp_path, "")
    target = f"sqlite:///{tmp_path / 'restored.sqlite'}"
    assert run_formdb(["--db", target, "db", "restore", str(copy), "--yes"]).exit_code == 0
    assert dump_database(target) == dump_database(seeded_sqlite_url)


# --- blind edits: the same on both backends --------------------------------------------------

def _version_and_hlb(url: str, name: str) -> tuple[int, str]:
    shown = run_formdb(["--db", url, "ingredient", "list", "--format", "json"])
    record = next(r for r in json.loads(shown.stdout) if r["inci_name"] == name)
    return int(record["version"]), str(record["properties"]["hlb"])


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_blind_edits_queue_and_apply_on_both_backends(seeded_library_url: str) -> None:
    """A blind edit (no --expect-version) made while another writer holds the library waits
    for it and then applies to the version that writer left; an edit that names an old
    version is a conflict. Before, PostgreSQL refused most blind edits under contention and
    SQLite none."""
    import threading
    import time

    from formdb.services.library.ingredients import edit_ingredient
    from formdb.store.library import Library

    name = "Cetyl Alcohol"
    start, _ = _version_and_hlb(seeded_library_url, name)
    holding, released = threading.Event(), threading.Event()

    def other_writer() -> None:
        with Library.deferred(seeded_library_url) as library, library.write() as session:
            edit_ingredient(session, name, [("hlb", "5")], user="larkspur-other",
                            source="rule-of-thumb", reason="first writer")
            holding.set()
            time.sleep(1.5)  # the blind edit below starts while this transaction is open
        released.set()

    thread = threading.Thread(target=other_writer)
    thread.start()
    assert holding.wait(30)
    blind = run_formdb(["--db", seeded_library_url, "ingredient", "edit", name, "--set",
                        "hlb=6", "--source", "rule-of-thumb", "--reason", "second, blind"])
    thread.join()
    assert released.is_set()
    assert blind.exit_code == 0, blind.stderr  # waited, then applied: no conflict
    assert _version_and_hlb(seeded_library_url, name) == (start + 2, "6.0")
    stale = run_formdb(["--db", seeded_library_url, "ingredient", "edit", name, "--set",
                        "hlb=7", "--source", "rule-of-thumb", "--reason", "stale",
                        "--expect-version", str(start + 1)])
    _refused(stale, f"version {start + 1}")
    assert _version_and_hlb(seeded_library_url, name) == (start + 2, "6.0")
