"""Reading an import table's text takes shortcuts that must give what the plain reading gives:
the first non-blank line (which sets the delimiter) found in a growing head of the text, the
cell bound checked per row before per cell, and no apostrophe looked for cell by cell in a CSV
that holds none."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from formdb.schemas.bounds import MAX_CELL_CHARS
from formdb.services.library import tables
from formdb.services.library.tables import TableProblems, read_table


def _whole_text(text: str) -> str:
    """The first non-blank line as read_table found it before (every line of the text)."""
    return next((line for line in text.splitlines() if line.strip()), "")


_lines = st.lists(st.sampled_from(["", " ", "\t", "inci_name;hlb", "a,b", "é\u2028x", "\x0c"])
                  | st.text(max_size=8), max_size=8)
_ends = st.sampled_from(["\n", "\r\n", "\r", "\x1c", "\u2029"])


@settings(max_examples=300)
@given(head=st.integers(0, 3), lines=_lines, ends=st.lists(_ends, min_size=8, max_size=8),
       blank=st.integers(0, 20_000))
def test_the_first_line_is_the_first_non_blank_line_of_the_whole_text(
        head: int, lines: list[str], ends: list[str], blank: int) -> None:
    # blank lines or spaces long enough to reach past one or more heads of the text
    text = (" " * blank + "\n") * head + "".join(
        line + end for line, end in zip(lines, ends, strict=False))
    assert tables._first_line(text) == _whole_text(text)
    assert tables._first_line(text.rstrip("\n")) == _whole_text(text.rstrip("\n"))


def test_a_cell_beyond_the_bound_is_refused_and_a_row_of_many_long_cells_is_read(
        tmp_path: Path) -> None:
    near = "x" * (MAX_CELL_CHARS - 10)
    wide = tmp_path / "wide.csv"
    wide.write_text(f"inci_name,synonyms,cas\nLarkspur Ester,{near},{near}\n", encoding="utf-8")
    assert read_table(wide).rows[0][1][1:] == [near, near]  # in all beyond the bound: read
    long = tmp_path / "long.csv"
    long.write_text(f"inci_name,synonyms\nLarkspur Ester,a\nLarkspur Ether,{near}{'y' * 11}\n",
                    encoding="utf-8")
    with pytest.raises(TableProblems) as refused:
        read_table(long)
    assert str(refused.value) == (f"{long}, row 3, column 2: the cell holds "
                                  f"{MAX_CELL_CHARS + 1:,} characters, more than "
                                  f"{MAX_CELL_CHARS:,}.")


@pytest.mark.parametrize("rows", [
    ["Larkspur Ester,'=1+1", "Larkspur Ether,plain"],  # a guarded cell: taken off again
    ["Larkspur Ester,plain", "Larkspur Ether,it's"],  # an apostrophe inside a cell only
    ["Larkspur Ester,plain", "Larkspur Ether,more"],  # none in the file
])
def test_cells_are_cleaned_alike_whether_or_not_the_file_holds_an_apostrophe(
        tmp_path: Path, rows: list[str]) -> None:
    path = tmp_path / "t.csv"
    path.write_text("inci_name,synonyms\n" + "\n".join(f" {row} " for row in rows) + "\n",
                    encoding="utf-8")
    table = read_table(path)
    assert [row for _number, row in table.rows] == [
        tables._clean_cells(cells.split(","), apostrophes=True) for cells in rows]
