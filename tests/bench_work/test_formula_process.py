"""The formula file's ``[[process.steps]]`` and the lines' note, supplier and lot: validated with
one line naming file, row and key, and kept through ``formula import`` / ``export``."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from formdb.schemas.formula import FormulaFile
from formdb.services.library.formula_files import parse_formula_text
from tests.helpers import library_state, run_formdb

CREAM = Path(__file__).parents[1] / "fixtures" / "bench_cream.toml"


def test_the_process_and_line_details_are_read() -> None:
    formula = parse_formula_text(CREAM.read_text(encoding="utf-8"), "cream.toml")
    steps = formula.process.steps
    assert [s.phases for s in steps] == [["A"], ["B"], ["A", "B"], ["C"], ["D"]]
    assert steps[2].mixing is not None and steps[2].mixing.value == "homogeniser"
    assert steps[2].speed_rpm == 3000 and steps[2].minutes == 5
    assert formula.process.emulsifying_temperature_c() == 75  # the step joining A and B
    line = formula.ingredients[2]
    assert (line.supplier, line.lot) == ("Northfield Oils", "NF-2291")


def test_a_single_phase_may_be_written_as_a_string() -> None:
    text = CREAM.read_text(encoding="utf-8").replace('phases = ["C"]', 'phases = "c"')
    assert parse_formula_text(text, "x.toml").process.steps[3].phases == ["C"]


@pytest.mark.parametrize(("old", "new", "message"), [
    ('mixing = "paddle"', 'mixing = "blender"',
     "process.steps row 1, key mixing: Input should be 'none'"),
    ("minutes = 5", "minutes = -5", "process.steps row 3, key minutes"),
    ("temperature_c = 60", "temperature_c = 400", "process.steps row 4, key temperature_c"),
    ('phases = ["D"]', 'phases = ["E"]',
     "process.steps row 5, key phases: phase 'E' has no ingredient line"),
    ('phases = ["D"]', 'phases = []', "process.steps row 5, key phases"),
    ('phases = ["D"]', 'phases = ["D", "d"]',
     "process.steps row 5, key phases: a phase is named twice"),
    ("speed_rpm = 60", 'speed_rpm = "fast"', "process.steps row 4, key speed_rpm: must be a"),
    ('note = "deionised"', 'note = "  "', "ingredients row 1, key note: is empty"),
    ('lot = "NF-2291"', "lot = 2291", "ingredients row 3, key lot"),
    ('note = "heat water phase"', 'colour = "blue"',
     "process.steps row 1, key colour: unknown key"),
])
def test_bad_process_values_are_one_line_naming_row_and_key(
        seeded_library_url: str, tmp_path: Path, old: str, new: str, message: str) -> None:
    text = CREAM.read_text(encoding="utf-8")
    assert old in text
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace(old, new, 1), encoding="utf-8")
    before = library_state(seeded_library_url)
    for command in (["check", str(bad)], ["batch", str(bad), "--kg", "20"],
                    ["formula", "import", str(bad)]):
        result = run_formdb(["--db", seeded_library_url, *command])
        assert result.exit_code == 2, (command, result.stdout)
        assert result.stderr.count("Error:") == 1, result.stderr
        assert f"{bad}, {message}" in result.stderr
        assert "Traceback" not in result.stderr
    assert library_state(seeded_library_url) == before


def test_import_and_export_keep_the_process(seeded_library_url: str, tmp_path: Path) -> None:
    url = seeded_library_url
    assert run_formdb(["--db", url, "formula", "import", str(CREAM)]).exit_code == 0
    out = tmp_path / "back.toml"
    result = run_formdb(["--db", url, "formula", "export", "Larkspur bench cream, draft 4",
                         str(out)])
    assert result.exit_code == 0, result.stderr
    assert out.read_bytes() == CREAM.read_bytes()
    again = FormulaFile.model_validate(tomllib.loads(out.read_text(encoding="utf-8")))
    assert again == FormulaFile.model_validate(tomllib.loads(CREAM.read_text(encoding="utf-8")))
    assert again.process.steps[2].note == "add B to A"
