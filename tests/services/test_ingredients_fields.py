"""Reading one cell: units converted with pint, wrong dimensions refused, vocabularies, CAS check
digits, and the table reader's row numbering. Conversion factors are checked against NIST SP 811
(2008), Appendix B.8, and values against the CRC Handbook where named."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from formdb.services.library.ingredient_fields import (
    FieldProblem,
    format_number,
    parse_list_item,
    parse_property,
)
from formdb.services.library.tables import Problem, guard_cell, read_table, unguard_cell


@pytest.mark.parametrize(("prop", "text", "expected"), [
    ("density", "0.99705", 0.99705),            # water at 25 °C, CRC Handbook
    ("density", "997.05 kg/m3", 0.99705),       # the same in SI units
    ("density", "0.99705 g/cm³", 0.99705),
    ("density", "850 kg/m^3", 0.85),            # light mineral oil (science.md, Stokes example)
    ("density", "62.428 lb/ft3", 1.0),          # NIST SP 811 B.8: 1 lb/ft3 = 16.01846 kg/m3
    ("viscosity_mpas", "0.890 cP", 0.89),       # water at 25 °C, CRC Handbook
    ("viscosity_mpas", "0.00089 Pa·s", 0.89),
    ("viscosity_mpas", "0.0089 poise", 0.89),   # NIST SP 811 B.8: 1 P = 0.1 Pa·s
    ("molar_mass", "0.039997 kg/mol", 39.997),  # sodium hydroxide (from memory)
    ("use_max_percent", "5 % w/w", 5.0),
    ("use_max_percent", "5%", 5.0),
    ("use_max_percent", "5", 5.0),
    ("hlb", "15.0", 15.0),
    ("hlb", "1e1", 10.0),
    ("cation_valence", "2", 2),
    ("electrolyte_sensitive", "Yes", True),
    ("electrolyte_sensitive", "false", False),
    ("solubility", "Oil", "oil"),
    ("ionic_character", "non-ionic", "nonionic"),
    ("base_equivalents", "2 mol OH-/mol", 2.0),  # magnesium oxide: two equivalents per mole
])
def test_cells_that_read(prop: str, text: str, expected: object) -> None:
    value = parse_property(prop, text)
    assert value == (pytest.approx(expected, rel=1e-6) if isinstance(expected, float)
                     else expected)
    assert type(value) is type(expected) or isinstance(value, str)


@pytest.mark.parametrize(("prop", "text", "words"), [
    ("density", "0.85 kg", "'kg' cannot be converted to g/mL"),
    ("density", "0.85 furlongs", "cannot be converted to g/mL"),
    ("viscosity_mpas", "12 mL", "cannot be converted to mPa·s"),
    ("molar_mass", "282 g", "cannot be converted to g/mol"),
    ("use_max_percent", "5 kg", "cannot be converted to % w/w"),
    ("hlb", "12 %", "hlb takes a plain number without a unit"),
    ("ph_min", "5 mol", "ph_min takes a plain number without a unit"),
    ("density", "0.9 blorbs", "a unit formdb does not know ('blorbs')"),
    ("hlb", "nan", "'nan' is not a number"),
    ("hlb", "inf", "'inf' is not a number"),
    ("hlb", "1,5", "write a decimal point, not a comma"),
    ("hlb", "-1", "hlb -1 is out of range: it must be at least 0 and at most 50"),
    ("required_hlb_ow", "21", "at least 0 and at most 20"),
    ("density", "0.4", "density 0.4 is out of range: it must be at least 0.5 and at most 3 g/mL"),
    ("density", "4000 kg/m3", "density 4 is out of range"),
    ("molar_mass", "0", "it must be above 0"),
    ("use_min_percent", "101", "at most 100 % w/w"),
    ("cation_valence", "1.5", "not a whole number"),
    ("electrolyte_sensitive", "sometimes", "not yes or no"),
    ("solubility", "oily", "not a known solubility"),
])
def test_cells_that_do_not_read(prop: str, text: str, words: str) -> None:
    with pytest.raises(FieldProblem) as caught:
        parse_property(prop, text)
    assert words in str(caught.value)


def test_cas_check_digit() -> None:
    # CAS Registry check digit: water 7732-18-5, 8*1+1*2+2*3+3*4+7*5+7*6 = 105 -> 5
    assert parse_list_item("cas", "7732-18-5") == "7732-18-5"
    with pytest.raises(FieldProblem, match=r"the digits before it give 5, not 4"):
        parse_list_item("cas", "7732-18-4")
    with pytest.raises(FieldProblem, match="is not a CAS number"):
        parse_list_item("cas", "7732185")


@pytest.mark.parametrize("value", [0.1, 12.0, 1.8471825356845126, 5e-324, 1e7, 39.997])
def test_numbers_render_to_text_that_reads_back_exactly(value: float) -> None:
    assert float(format_number(value)) == value
    assert format_number(12.0) == "12"


@pytest.mark.parametrize("text", ["=SUM(A1)", "+1", "-2", "@x", "'=a", "''--", "'plain",
                                  "plain", "", "'", "\t1"])
def test_formula_guard_round_trips(text: str) -> None:
    guarded = guard_cell(text)
    assert not guarded.startswith(("=", "+", "-", "@", "\t", "\r"))
    assert unguard_cell(guarded) == text  # "'--" once read back as "--" (found by the fuzz suite)


@settings(max_examples=500, derandomize=True, database=None)
@given(st.text(alphabet=st.sampled_from("'=+-@\t\rab "), max_size=6) | st.text(max_size=6))
def test_every_text_survives_the_formula_guard(text: str) -> None:
    guarded = guard_cell(text)
    assert not guarded.startswith(("=", "+", "-", "@", "\t", "\r"))
    assert unguard_cell(guarded) == text


def test_problem_line_names_file_row_and_column() -> None:
    assert Problem("a.csv", "bad", 3, "hlb").line() == "a.csv, row 3, column hlb: bad."
    assert Problem("a.csv", "empty").line() == "a.csv: empty."


def test_rows_are_numbered_as_a_spreadsheet_shows_them(tmp_path: Path) -> None:
    path = tmp_path / "supplier.csv"
    # semicolon-separated (as a European spreadsheet saves CSV), a BOM, a blank line, and a
    # quoted cell over two lines: the data rows are spreadsheet rows 3 and 4
    path.write_bytes("\ufeffinci_name;hlb_note\n\nWater;\"two\nlines\"\nGlycerin;x\n"
                     .encode("utf-8"))
    table = read_table(path)
    assert table.kind == "csv" and table.header == ["inci_name", "hlb_note"]
    assert table.rows == [(3, ["Water", "two\nlines"]), (4, ["Glycerin", "x"])]
