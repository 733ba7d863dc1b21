"""Reading and writing the spreadsheet tables people bring: CSV or XLSX, every cell as text.

The file's kind is decided by its content (a workbook is a ZIP archive, a CSV is text), not only by
its suffix. Row numbers are the ones a spreadsheet shows: the first line is row 1. Problems are
collected, never raised one at a time, so a user sees every bad cell of a file in one run.
"""

from __future__ import annotations

import csv
import io
import zipfile
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from formdb.errors import InvalidData
from formdb.schemas.bounds import (
    MAX_CELL_CHARS,
    MAX_TABLE_BYTES,
    MAX_TABLE_COLUMNS,
    MAX_TABLE_ROWS,
    MAX_XLSX_UNPACKED_BYTES,
    UnreadableInput,
    read_input,
)
from formdb.schemas.cells import guard_cell, unguard_cell, xlsx_refusal

TABLE_SUFFIXES = {".csv": "csv", ".xlsx": "xlsx"}

_MAGIC = {
    b"PK\x03\x04": "a ZIP archive",
    b"\xd0\xcf\x11\xe0": "an old binary Excel (.xls) workbook",
    b"%PDF": "a PDF document",
    b"\x89PNG": "a PNG image",
    b"\xff\xd8\xff": "a JPEG image",
    b"GIF8": "a GIF image",
    b"\x1f\x8b": "a gzip archive",
    b"SQLite format 3": "a SQLite database",
}


@dataclass(frozen=True)
class Problem:
    """One thing wrong with a file, placed as a spreadsheet user would look for it."""

    file: str
    text: str
    row: int | None = None
    column: str | None = None

    def line(self) -> str:
        where = self.file
        if self.row is not None:
            where += f", row {self.row}"
        if self.column is not None:
            where += f", column {self.column}"
        text = self.text if self.text.endswith((".", "?")) else self.text + "."
        return f"{where}: {text}"


class TableProblems(InvalidData):
    """Every problem found in a file; the message is the first, ``problems`` holds them all."""

    def __init__(self, problems: Sequence[str], hint: str | None = None) -> None:
        if not problems:
            raise ValueError("TableProblems needs at least one problem")
        super().__init__(problems[0], hint, problems=problems)


def raise_problems(problems: Sequence[Problem], hint: str | None = None) -> None:
    if problems:
        raise TableProblems([p.line() for p in problems], hint)


@dataclass
class RawTable:
    """A table as read: header cells, and each data row with its spreadsheet row number."""

    file: str
    kind: str  # csv | xlsx
    header_row: int
    header: list[str]
    rows: list[tuple[int, list[str]]] = field(default_factory=list)


def _sniff(path: Path, head: bytes) -> str:
    """'csv' or 'xlsx' from the content; raise TableProblems when it is neither."""
    name = str(path)
    suffix = path.suffix.lower()
    what = next((label for magic, label in _MAGIC.items() if head.startswith(magic)), None)
    if suffix not in TABLE_SUFFIXES:
        raise_problems([Problem(name, f"not a CSV or XLSX file (suffix {suffix or 'none'!r}); "
                                "save the table as .csv or .xlsx")])
    if head.startswith(b"PK\x03\x04"):
        if suffix == ".csv":
            raise_problems([Problem(name, "the file is named .csv but holds a ZIP archive "
                                    "(perhaps a workbook); rename it .xlsx or save it as CSV")])
        return "xlsx"
    if what is not None or b"\x00" in head:
        raise_problems([Problem(name, f"not a CSV or XLSX file: it holds {what or 'binary data'}")])
    if suffix == ".xlsx":
        raise_problems([Problem(name, "the file is named .xlsx but holds text, not a workbook; "
                                "rename it .csv if it is comma-separated")])
    return "csv"


def _decode(path: Path, raw: bytes) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise_problems([Problem(str(path), "the text is not UTF-8 (a byte that no UTF-8 text "
                                "holds); save the file as CSV UTF-8", row=line)])
        raise  # pragma: no cover - raise_problems always raises here


def _read_csv(path: Path, raw: bytes) -> list[list[str]]:
    """Every record of a CSV text. Lines may end in LF, CRLF or a lone CR (old Mac files): the
    csv module splits them itself (``newline=""``), inside quotes too."""
    text = _decode(path, raw)
    first = _first_line(text)
    try:
        delimiter = csv.Sniffer().sniff(first, delimiters=",;\t").delimiter
    except csv.Error:
        delimiter = ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    records: list[list[str]] = []
    try:
        for record in reader:
            if len(record) > MAX_TABLE_COLUMNS:  # before the rows are padded to the widest
                _too_wide(str(path), len(record), len(records) + 1)
            records.append(record)
            if len(records) > MAX_TABLE_ROWS + 1:
                raise_problems([Problem(str(path), f"more than {MAX_TABLE_ROWS:,} rows; split "
                                        "the table into smaller files")])
    except csv.Error as exc:  # a quote that never closes, a cell beyond the csv module's limit
        what = ("a cell is longer than formdb reads" if "field larger" in str(exc)
                else f"not a readable CSV table ({exc}); check for a quote that is opened and "
                     "never closed")
        raise_problems([Problem(str(path), what, row=reader.line_num or None)])
    # The widest record sets the column count, so ragged rows are read (and reported), not fatal.
    width = max(map(len, records), default=1)
    if min(map(len, records), default=width) == width:  # none ragged: nothing to pad
        return records
    return [r + [""] * (width - len(r)) for r in records]


def _first_line(text: str) -> str:
    """``next((line for line in text.splitlines() if line.strip()), "")`` without splitting the
    whole text: the lines of a growing head, but its last one (which may go on beyond it)."""
    size = 4096
    while size < len(text):
        *lines, _rest = text[:size].splitlines()
        found = next((line for line in lines if line.strip()), None)
        if found is not None:
            return found
        size *= 4
    return next((line for line in text.splitlines() if line.strip()), "")


def _read_xlsx(path: Path) -> list[list[str]]:
    """The first sheet's cells. The archive is looked at first (entries, unpacked size), so a
    ZIP that unpacks to gigabytes is refused before openpyxl inflates it."""
    import pandas as pd

    name = str(path)
    try:
        with zipfile.ZipFile(path) as archive:
            entries = archive.infolist()
            unpacked = sum(info.file_size for info in entries)
            names = {info.filename for info in entries}
    except (zipfile.BadZipFile, OSError, ValueError) as exc:
        raise_problems([Problem(name, f"not a readable XLSX workbook ({exc})")])
        raise  # pragma: no cover
    if "xl/workbook.xml" not in names:
        raise_problems([Problem(name, "not a readable XLSX workbook: the archive holds no "
                                "xl/workbook.xml; save the table from a spreadsheet as .xlsx")])
    if unpacked > MAX_XLSX_UNPACKED_BYTES or len(entries) > 10_000:
        raise_problems([Problem(name, f"the workbook unpacks to {unpacked:,} bytes in "
                                f"{len(entries):,} parts, more than formdb reads "
                                f"({MAX_XLSX_UNPACKED_BYTES:,} bytes)")])
    try:
        frame = pd.read_excel(path, sheet_name=0, header=None, dtype=str, keep_default_na=False,
                              engine="openpyxl")
    except Exception as exc:  # any failure of the parser means an unreadable workbook
        raise_problems([Problem(name, f"not a readable XLSX workbook ({type(exc).__name__}: "
                                f"{str(exc)[:200]})")])
        raise  # pragma: no cover
    return [["" if c is None else str(c) for c in row] for row in frame.fillna("").values]


def _too_wide(name: str, cells: int, row: int | None) -> None:
    raise_problems([Problem(name, f"a row holds {cells:,} cells, more than "
                            f"{MAX_TABLE_COLUMNS:,} columns", row=row)])


def _bounded(name: str, cells: list[list[str]]) -> None:
    """Refuse a table beyond the bounds (rows, columns, characters in a cell), naming the first
    row or cell beyond."""
    if len(cells) > MAX_TABLE_ROWS + 1:
        raise_problems([Problem(name, f"more than {MAX_TABLE_ROWS:,} rows; split the table "
                                "into smaller files")])
    widest = max(map(len, cells), default=0)
    if widest > MAX_TABLE_COLUMNS:  # a workbook (a CSV's rows are counted as they are read)
        _too_wide(name, widest, None)
    if max(map(len, map("".join, cells)), default=0) <= MAX_CELL_CHARS:
        return  # the common case: no row holds as many characters in all, checked in C
    for number, row in enumerate(cells, start=1):
        if max(map(len, row), default=0) <= MAX_CELL_CHARS:
            continue  # the first long cell is found below
        for column, cell in enumerate(row, start=1):
            if len(cell) > MAX_CELL_CHARS:
                raise_problems([Problem(name, f"the cell holds {len(cell):,} characters, more "
                                        f"than {MAX_CELL_CHARS:,}", row=number,
                                        column=str(column))])


def _clean_cells(row: list[str], apostrophes: bool = True) -> list[str]:
    """The row's cells stripped, with ``guard_cell``'s apostrophe taken off again
    (``apostrophes`` False: the table holds none, so there is none to take off)."""
    stripped = list(map(str.strip, row))
    if not apostrophes or "\x00'" not in "\x00" + "\x00".join(stripped):
        return stripped  # no cell starts with an apostrophe
    return [unguard_cell(cell) for cell in stripped]


def read_table(path: Path) -> RawTable:
    """Read a CSV or XLSX table: the first non-blank row is the header; cells are stripped text."""
    name = str(path)
    try:
        if path.stat().st_size > MAX_TABLE_BYTES:
            raise_problems([Problem(name, f"{path.stat().st_size:,} bytes is more than an "
                                    f"import table formdb reads ({MAX_TABLE_BYTES:,})")])
        raw = read_input(path, MAX_TABLE_BYTES)
    except UnreadableInput as exc:
        raise_problems([Problem(name, str(exc))])
    except FileNotFoundError:
        raise_problems([Problem(name, "no such file")])
    except OSError as exc:
        raise_problems([Problem(name, f"cannot be read ({exc.strerror or exc})")])
    if not raw.strip():
        raise_problems([Problem(name, "the file is empty; it needs a header row and one row "
                                "per record")])
    kind = _sniff(path, raw[:4096])
    cells = _read_csv(path, raw) if kind == "csv" else _read_xlsx(path)
    _bounded(name, cells)
    # a CSV without an apostrophe anywhere (one look at its text) has none to take off a cell
    apostrophes = kind != "csv" or b"'" in raw
    numbered = [(n, row) for n, row in
                ((i + 1, _clean_cells(row, apostrophes)) for i, row in enumerate(cells))
                if any(row)]
    if not numbered:
        raise_problems([Problem(name, "the file holds no cells; it needs a header row and one "
                                "row per record")])
    (header_row, header), *rows = numbered
    return RawTable(name, kind, header_row, header, rows)


def _fits_xlsx(header: Sequence[str], rows: Sequence[Sequence[str | float | None]]) -> None:
    """Refuse, naming the cell, a text an XLSX cell cannot hold (a control character the
    library keeps as typed): the CSV export keeps it."""
    for number, row in enumerate(rows, start=2):
        for column, cell in zip(header, row, strict=False):
            why = xlsx_refusal(cell) if isinstance(cell, str) else None
            if why is not None:
                raise InvalidData(f"row {number} ({header[0]} {unguard_cell(str(row[0]))}), "
                                  f"column {column}: holds {why}, which an XLSX cell cannot "
                                  "hold; nothing was written.",
                                  "export to .csv, which keeps it, or correct the value.")


def write_table(path: Path, header: Sequence[str], rows: Iterable[Sequence[str | float | None]],
                sheet: str = "table") -> str:
    """Write rows under ``header`` as CSV or XLSX (by suffix); text cells are formula-guarded."""
    kind = TABLE_SUFFIXES.get(path.suffix.lower())
    if kind is None:
        raise InvalidData(f"{path}: cannot export to {path.suffix or 'a file without suffix'}; "
                          "only .csv and .xlsx are written.",
                          "give the export file a .csv or .xlsx name.")
    import pandas as pd

    safe = [[guard_cell(c) if isinstance(c, str) else c for c in row] for row in rows]
    if kind == "xlsx":
        _fits_xlsx(header, safe)
    frame = pd.DataFrame(safe, columns=list(header), dtype=object)
    try:
        if kind == "csv":
            frame.to_csv(path, index=False, encoding="utf-8-sig", lineterminator="\n")
        else:
            frame.to_excel(path, index=False, engine="openpyxl", sheet_name=sheet)
    except OSError as exc:
        raise InvalidData(f"{path}: cannot be written ({exc.strerror or exc}).",
                          "check the folder exists and is writable.") from exc
    return kind
