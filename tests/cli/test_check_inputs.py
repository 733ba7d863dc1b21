"""``formdb check`` exit code 2: input that cannot be checked (DESIGN.md section 3).

Every case: one clear ``Error:`` line per problem on stderr naming the file and the row or key,
no traceback, nothing on stdout, no report file, and the library exactly as it was.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.helpers import library_state, run_formdb
from tests.report.factory import formula_toml

GOOD_LINES = [("Aqua", 75.0), ("Glycerin", 3.0), ("Paraffinum Liquidum", 15.0),
              ("Sorbitan Oleate", 2.1), ("Polysorbate 80", 4.9)]


def _write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def _good(folder: Path, name: str = "good.toml") -> Path:
    return _write(folder, name, formula_toml("Larkspur LB-900 test lotion", GOOD_LINES,
                                             intended_type="O/W"))


def _bad_files(folder: Path) -> dict[str, tuple[Path, str]]:
    """case -> (file, a fragment its error line must contain)."""
    def lines_with(index: int, value: object) -> list[tuple[str, object]]:
        out: list[tuple[str, object]] = list(GOOD_LINES)
        out[index] = (out[index][0], value)
        return out

    return {
        "missing file": (folder / "nowhere.toml", "no such file"),
        "not TOML": (_write(folder, "broken.toml", "name = 'x\ncategory = \n"),
                     "not a valid TOML"),
        "unknown ingredient": (_write(folder, "typo.toml", formula_toml(
            "Larkspur typo", [("Aqua", 80.0), ("Polysorbate 8O", 5.0),
                              ("Paraffinum Liquidum", 15.0)])), "did you mean"),
        "negative percent": (_write(folder, "negative.toml", formula_toml(
            "Larkspur negative", lines_with(1, -3.0))), "ingredients row 2, key percent"),
        "non-numeric percent": (_write(folder, "words.toml", formula_toml(
            "Larkspur words", lines_with(2, "fifteen"))), "ingredients row 3, key percent"),
        "unknown key": (_write(folder, "extra.toml", formula_toml(
            "Larkspur extra", GOOD_LINES, colour="blue")), "key colour"),
        "unknown product type": (_write(folder, "product.toml", formula_toml(
            "Larkspur product", GOOD_LINES, product="bath bomb")), "key product"),
        # a shower gel is rinse-off in the seed's exposure table (SCCS Notes of Guidance, 12th
        # revision, Table 3A); checked as leave-on it would meet limits and exposure that are
        # not its own
        "category against product type": (_write(folder, "category.toml", formula_toml(
            "Larkspur category", GOOD_LINES, category="leave-on", product="shower gel")),
            "key category: 'leave-on' contradicts product 'shower gel', a rinse-off product"),
    }


CASES = ["missing file", "not TOML", "unknown ingredient", "negative percent",
         "non-numeric percent", "unknown key", "unknown product type",
         "category against product type"]


@pytest.mark.parametrize("fmt", ["text", "json"])
@pytest.mark.parametrize("case", CASES)
def test_bad_input_exits_2_with_one_line(case: str, fmt: str, seeded_library_url: str,
                                         tmp_path: Path) -> None:
    path, fragment = _bad_files(tmp_path)[case]
    out = tmp_path / "report.out"
    before = library_state(seeded_library_url)
    result = run_formdb(["--db", seeded_library_url, "check", str(path), "--format", fmt,
                         "--out", str(out)])
    assert result.exit_code == 2, result
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("Error: ") and str(path) in lines[0]
    assert fragment in lines[0], lines[0]
    assert "Traceback" not in result.stderr + result.stdout
    assert result.stdout == ""
    assert not out.exists()
    assert library_state(seeded_library_url) == before


def test_unknown_ingredient_names_the_row_and_suggests(seeded_library_url: str,
                                                       tmp_path: Path) -> None:
    path, _ = _bad_files(tmp_path)["unknown ingredient"]
    result = run_formdb(["--db", seeded_library_url, "check", str(path)])
    assert result.exit_code == 2
    assert "ingredients row 2" in result.stderr and "'Polysorbate 8O'" in result.stderr
    assert "Polysorbate 80" in result.stderr.split("did you mean", 1)[1]


@pytest.mark.parametrize(("case", "step", "not_step"), [
    ("unknown ingredient", "`formdb ingredient add`", "exposure add"),
    ("unknown product type", "`formdb exposure add`", "ingredient add"),
    ("category against product type", "correct the category or the product type",
     "ingredient add"),
])
def test_the_next_step_fits_the_problem(case: str, step: str, not_step: str,
                                        seeded_library_url: str, tmp_path: Path) -> None:
    """A category that contradicts the product type is not fixed by adding an ingredient."""
    path, _ = _bad_files(tmp_path)[case]
    result = run_formdb(["--db", seeded_library_url, "check", str(path)])
    assert result.exit_code == 2
    next_step = result.stderr.split("Next: ", 1)[1]
    assert step in next_step and not_step not in next_step, result.stderr


def test_every_bad_file_is_reported_and_no_good_file_is_checked(seeded_library_url: str,
                                                                tmp_path: Path) -> None:
    files = _bad_files(tmp_path)
    good = _good(tmp_path)
    paths = [good, files["negative percent"][0], files["unknown key"][0]]
    result = run_formdb(["--db", seeded_library_url, "check", *map(str, paths)])
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 2, result.stderr
    assert str(paths[1]) in lines[0] and str(paths[2]) in lines[1]
    assert result.stdout == ""  # the good file was read but nothing was checked or printed


def test_two_unknown_names_give_two_lines(seeded_library_url: str, tmp_path: Path) -> None:
    path = _write(tmp_path, "two.toml", formula_toml(
        "Larkspur two typos", [("Aqua", 80.0), ("Glycerine oil", 5.0), ("Paraffinium", 15.0)]))
    result = run_formdb(["--db", seeded_library_url, "check", str(path)])
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 2 and "row 2" in lines[0] and "row 3" in lines[1]


def test_unknown_profile_exits_2(seeded_library_url: str, tmp_path: Path) -> None:
    result = run_formdb(["--db", seeded_library_url, "check", str(_good(tmp_path)),
                         "--profile", "no-such-profile"])
    assert result.exit_code == 2
    assert result.stderr.startswith("Error: ") and "Traceback" not in result.stderr
    assert result.stdout == ""


def test_no_file_and_no_all_is_a_usage_error(seeded_library_url: str) -> None:
    result = run_formdb(["--db", seeded_library_url, "check"])
    assert result.exit_code == 2
    assert "--all" in result.stderr


def test_missing_library_exits_2(tmp_path: Path) -> None:
    result = run_formdb(["--db", str(tmp_path / "absent.sqlite"), "check",
                         str(_good(tmp_path))])
    assert result.exit_code == 2
    assert "formdb init" in result.stderr
    assert not (tmp_path / "absent.sqlite").exists()
