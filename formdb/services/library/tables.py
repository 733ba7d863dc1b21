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

# A cell that starts with one of these runs as a formula when a spreadsheet opens the file
# (OWASP, "CSV Injection"); export prefixes such cells with an apostrophe and import strips it.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
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


def guard_cell(text: str) -> str:
    """Make a cell safe to open in a spreadsheet: a leading formula character gets an apostrophe."""
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def unguard_cell(text: str) -> str:
    """Undo ``guard_cell`` so that an exported table reads back exactly as it was."""
    if text.startswith("'") and text[1:].startswith(FORMULA_STARTS):
        return text[1:]
    return text


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
    import pandas as pd  # here, not at import: read-only commands never load it

    text = _decode(path, raw)
    first = next((line for line in text.splitlines() if line.strip()), "")
    try:
        delimiter = csv.Sniffer().sniff(first, delimiters=",;\t").delimiter
    except csv.Error:
        delimiter = ","
    # The widest record sets the column count, so ragged rows are read (and reported), not fatal.
    width = max((len(r) for r in csv.reader(io.StringIO(text), delimiter=delimiter)), default=1)
    try:
        frame = pd.read_csv(
            path, header=None, names=range(width), dtype=str, keep_default_na=False,
            skip_blank_lines=False, sep=delimiter, encoding="utf-8-sig", engine="python")
    except (pd.errors.ParserError, csv.Error) as exc:  # e.g. a quote that never closes
        raise_problems([Problem(str(path), f"not a readable CSV table ({exc}); check for a "
                                "quote that is opened and never closed")])
        raise  # pragma: no cover - raise_problems always raises here
    return frame.fillna("").values.tolist()


def _read_xlsx(path: Path) -> list[list[str]]:
    import pandas as pd

    try:
        frame = pd.read_excel(path, sheet_name=0, header=None, dtype=str, keep_default_na=False,
                              engine="openpyxl")
    except (zipfile.BadZipFile, KeyError, ValueError, OSError) as exc:
        raise_problems([Problem(str(path), f"not a readable XLSX workbook ({exc})")])
        raise  # pragma: no cover
    return frame.fillna("").values.tolist()


def read_table(path: Path) -> RawTable:
    """Read a CSV or XLSX table: the first non-blank row is the header; cells are stripped text."""
    name = str(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise_problems([Problem(name, "no such file")])
    except OSError as exc:
        raise_problems([Problem(name, f"cannot be read ({exc.strerror or exc})")])
    if not raw.strip():
        raise_problems([Problem(name, "the file is empty; it needs a header row and one row "
                                "per record")])
    kind = _sniff(path, raw[:4096])
    cells = _read_csv(path, raw) if kind == "csv" else _read_xlsx(path)
    numbered = [(i + 1, [unguard_cell(str(c).strip()) for c in row]) for i, row in enumerate(cells)]
    numbered = [(n, row) for n, row in numbered if any(row)]
    if not numbered:
        raise_problems([Problem(name, "the file holds no cells; it needs a header row and one "
                                "row per record")])
    (header_row, header), *rows = numbered
    return RawTable(name, kind, header_row, header, rows)


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
