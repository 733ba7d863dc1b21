"""Every kind of bad import file: exit 2, one ``Error:`` line per problem naming file, row and
column, and the library byte-for-byte as it was (a dump before and after).

The tables are small supplier tables in tests/fixtures/tables; HLB values in them are the
handbook values (Griffin 1954; Handbook of Pharmaceutical Excipients, 6th ed., Table IX), the
bad cells are what the test is about.
"""

from __future__ import annotations

import shutil
import zipfile
from pathlib import Path

import pytest

from tests.fixtures.tables.library_setup import TABLES, build_library
from tests.helpers import library_state, run_formdb


@pytest.fixture
def library(library_url: str) -> str:
    return build_library(library_url)


def _import(url: str, path: Path, *extra: str) -> tuple[int, list[str], str]:
    before = library_state(url)
    result = run_formdb(["--db", url, "ingredient", "import", str(path),
                         *extra])
    assert library_state(url) == before, "a rejected import changed the library"
    assert "Traceback" not in result.stderr
    errors = [line for line in result.stderr.splitlines() if line.startswith("Error: ")]
    return result.exit_code, errors, result.stderr


def _copy(name: str, tmp_path: Path) -> Path:
    target = tmp_path / name
    shutil.copyfile(TABLES / name, target)
    return target


def _expect(errors: list[str], path: Path, expected: list[tuple[int | None, str | None, str]]):
    """Each expected (row, column, words) is exactly one error line, in that order."""
    assert len(errors) == len(expected), "\n".join(errors)
    for line, (row, column, words) in zip(errors, expected, strict=True):
        where = str(path)
        if row is not None:
            where += f", row {row}"
        if column is not None:
            where += f", column {column}"
        assert line.startswith(f"Error: {where}: "), line
        assert words in line, line
        assert line.endswith((".", "?")), line


CASES = [
    ("bad_unknown_column.csv", [(1, "hbl", "unknown column 'hbl'; did you mean 'hlb'?"),
                                (1, "solubilty", "did you mean 'solubility'?")]),
    ("bad_missing_name.csv", [(3, "inci_name", "the INCI name is missing")]),
    ("bad_duplicate_in_file.csv", [
        (4, "inci_name", "'polysorbate 20' is already used on row 2"),
        (5, "synonyms", "'Sorbitan Monolaurate' is already used on row 3")]),
    ("bad_duplicate_library_synonym.csv", [
        (2, "synonyms", "'Aqua' already belongs to another library ingredient, 'Water'")]),
    # 9005-64-5 is polysorbate 20; its check digit is 5, so ...-4 is wrong (CAS Registry rule)
    ("bad_cas.csv", [(3, "cas", "CAS number '9005-64-4' fails its check digit")]),
    ("bad_hlb_text.csv", [(2, "hlb", "'high' is not a number")]),
    ("bad_hlb_range.csv", [
        (2, "hlb", "hlb 55 is out of range: it must be at least 0 and at most 50")]),
    ("bad_density_range.csv", [
        (2, "density", "density 5.2 is out of range: it must be at least 0.5 and at most 3 g/mL")]),
    ("bad_ph_range.csv", [
        (2, "ph_min", "ph_min 15 is out of range: it must be at least 0 and at most 14")]),
    ("bad_role.csv", [
        (2, "roles", "'emulsifer' is not a known role; did you mean 'emulsifier'?")]),
    ("bad_solubility.csv", [
        (2, "solubility", "'watery' is not a known solubility; did you mean 'water'?")]),
    ("bad_ionic_character.csv", [
        (2, "ionic_character", "'zwitterionic' is not a known ionic character (choose from "
                               "anionic, cationic, nonionic, amphoteric, none)")]),
    ("bad_no_name_column.csv", [(1, None, "there is no inci_name column")]),
    ("bad_units.csv", [
        (3, "density", "'kg' cannot be converted to g/mL"),
        (4, "viscosity_mpas", "'cm' cannot be converted to mPa·s"),
        (4, "hlb", "carries the unit '%', but hlb takes a plain number without a unit")]),
    ("bad_sources.csv", [
        (2, "hlb_source", "hlb has a value but no source"),
        (2, "density_source", "unknown source key 'hpe-6' for density; did you mean 'hpe6'?")]),
    ("empty.csv", [(None, None, "the file is empty")]),
    ("blank.csv", [(None, None, "the file is empty")]),
]


@pytest.mark.parametrize(("name", "expected"), CASES, ids=[c[0] for c in CASES])
def test_bad_table_is_refused_with_every_problem_located(library: str, tmp_path: Path,
                                                         name: str, expected: list) -> None:
    path = _copy(name, tmp_path)
    code, errors, stderr = _import(library, path)
    assert code == 2, stderr
    _expect(errors, path, expected)


def test_dry_run_reports_the_same_problems(library: str, tmp_path: Path) -> None:
    path = _copy("bad_units.csv", tmp_path)
    code, errors, _ = _import(library, path, "--dry-run")
    assert code == 2
    assert len(errors) == 3


def test_every_row_of_a_file_with_many_problems_is_reported(library: str, tmp_path: Path) -> None:
    path = tmp_path / "supplier.csv"
    path.write_text("inci_name,hlb,cas,roles,source\n"
                    "Polysorbate 20,16.7,9005-64-5,emulsifier,hpe6\n"  # good
                    "Sorbitan Laurate,eight,1338-39-1,emulsifier,griffin-1954\n"
                    ",8.6,,,griffin-1954\n"
                    "Sorbitan Palmitate,6.7,,surfactant,nowhere\n", encoding="utf-8")
    code, errors, _ = _import(library, path)
    assert code == 2
    _expect(errors, path, [
        (3, "hlb", "'eight' is not a number"),
        (3, "cas", "fails its check digit"),
        (4, "inci_name", "the INCI name is missing"),
        (5, "roles", "'surfactant' is not a known role"),
        (5, "source", "unknown source key 'nowhere'"),
    ])


@pytest.mark.parametrize(("name", "content", "words"), [
    ("supplier.csv", b"\x89PNG\r\n\x1a\n" + bytes(range(256)),
     "not a CSV or XLSX file: it holds a PNG image"),
    ("supplier.csv", b"\x00\x01\x02inci_name\x00", "not a CSV or XLSX file: it holds binary data"),
    ("supplier.xlsx", b"inci_name,hlb\nPolysorbate 20,16.7\n", "is named .xlsx but holds text"),
    ("supplier.xlsx", b"PK\x03\x04 not really a zip", "not a readable XLSX workbook"),
    ("supplier.pdf", b"%PDF-1.7\n", "not a CSV or XLSX file (suffix '.pdf')"),
    ("supplier.json", b'{"inci_name": "Water"}', "not a CSV or XLSX file (suffix '.json')"),
    ("supplier.csv", "inci_name\nCaf\u00e9 Extract\n".encode("cp1252"), "not UTF-8"),
])
def test_a_file_that_is_not_a_table_is_refused(library: str, tmp_path: Path, name: str,
                                               content: bytes, words: str) -> None:
    path = tmp_path / name
    path.write_bytes(content)
    code, errors, stderr = _import(library, path)
    assert code == 2, stderr
    assert len(errors) == 1, errors
    assert errors[0].startswith(f"Error: {path}"), errors[0]
    assert words in errors[0], errors[0]


def test_a_zip_that_is_not_a_workbook_is_refused(library: str, tmp_path: Path) -> None:
    path = tmp_path / "supplier.xlsx"
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr("readme.txt", "not a workbook")
    code, errors, _ = _import(library, path)
    assert code == 2
    assert len(errors) == 1 and "not a readable XLSX workbook" in errors[0], errors


def test_bad_cells_in_an_xlsx_are_located_by_spreadsheet_row(library: str,
                                                             tmp_path: Path) -> None:
    from openpyxl import Workbook

    path = tmp_path / "supplier.xlsx"
    book = Workbook()
    sheet = book.active
    sheet.append(["INCI Name", "HLB", "Density", "source"])  # headers in a supplier's spelling
    sheet.append(["Polysorbate 20", 16.7, 1.1, "hpe6"])
    sheet.append([])  # a blank row still counts in the spreadsheet's numbering
    sheet.append(["Sorbitan Laurate", 88, "0.85 kg", "griffin-1954"])
    book.save(path)
    code, errors, _ = _import(library, path)
    assert code == 2
    _expect(errors, path, [(4, "HLB", "hlb 88 is out of range"),
                           (4, "Density", "'kg' cannot be converted to g/mL")])


def test_ragged_rows_and_headerless_cells_are_reported(library: str, tmp_path: Path) -> None:
    path = tmp_path / "supplier.csv"
    path.write_text("inci_name,hlb,source\nPolysorbate 20,16.7,hpe6,stray\n", encoding="utf-8")
    code, errors, _ = _import(library, path)
    assert code == 2
    _expect(errors, path, [(2, "D", "'stray' is in a column without a header")])


def test_a_missing_file_is_one_clear_line(library: str, tmp_path: Path) -> None:
    path = tmp_path / "nowhere.csv"
    code, errors, _ = _import(library, path)
    assert code == 2
    assert errors == [f"Error: {path}: no such file."]
