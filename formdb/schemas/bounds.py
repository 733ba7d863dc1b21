"""How much formdb reads: the bounds on every input, in one place, and a TOML reader that keeps
to them.

Each bound sits far above anything a real file holds and well below what would make a command
hang or exhaust memory; an input beyond one is refused with one line naming the bound.
"""

from __future__ import annotations

import codecs
import stat
import tomllib
from pathlib import Path
from typing import Any

MAX_TOML_BYTES = 5_000_000  # a formula or profile file; the longest real ones are a few KB
MAX_TOML_NESTING = 16  # tables and arrays inside each other; formulas and profiles use 3
MAX_FORMULA_LINES = 1_000  # [[ingredients]] entries; a real formula has tens
MAX_TABLE_BYTES = 200_000_000  # an import table (CSV or XLSX)
MAX_XLSX_UNPACKED_BYTES = 500_000_000  # a workbook's parts, unpacked (a ZIP bomb is not read)
MAX_TABLE_ROWS = 200_000  # data rows of an import table (the benchmark imports 50,000)
MAX_TABLE_COLUMNS = 1_000  # cells in one row of an import table (an export has under 100)
MAX_CELL_CHARS = 32_767  # one cell: the most a spreadsheet cell holds (Excel's limit)
MAX_NAME_CHARS = 200  # an INCI name or synonym (the column holds 200)


class TomlTooLarge(ValueError):
    """A TOML text beyond the bounds (size or nesting); the message says which."""


class UnreadableInput(ValueError):
    """An input path that is no regular file, or holds more than its bound; the message is a
    phrase to follow the file's name."""


def read_input(path: Path, limit: int) -> bytes:
    """The bytes of an input file, read no further than its bound: only a regular file is
    opened (a device such as /dev/zero never ends, a named pipe may never open), and a file
    that grows while it is read is still cut off past ``limit``. FileNotFoundError and other
    OSErrors pass through for the caller to word."""
    if path.is_dir():
        raise UnreadableInput("is a folder, not a file")
    if not stat.S_ISREG(path.stat().st_mode):
        raise UnreadableInput("is not a regular file (a device, pipe or socket); give a file")
    with path.open("rb") as handle:
        data = handle.read(limit + 1)
    if len(data) > limit:
        raise UnreadableInput(f"holds more than {limit:,} bytes, more than formdb reads here")
    return data


def toml_text(raw: bytes) -> str:
    """The text of a TOML file's bytes: UTF-8 (TOML's only encoding), no byte-order mark.
    UnicodeError with a phrase to follow the file's name otherwise: some editors start a file
    with a byte-order mark, which tomllib reports as 'Invalid statement (at line 1, column
    1)', and save UTF-16, which is 'not UTF-8 at byte 0' to a reader who cannot see why."""
    if raw.startswith(codecs.BOM_UTF8):
        raise UnicodeError("starts with a byte-order mark (U+FEFF), which a TOML file may not "
                           "hold")
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        raise UnicodeError("is UTF-16 text (it starts with a UTF-16 byte-order mark), not "
                           "UTF-8")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise UnicodeError(f"not UTF-8 text (byte {exc.start})") from None


def _depth(value: Any, level: int = 0) -> int:
    """The nesting of tables and arrays, iteratively (a recursive walk would itself overflow)."""
    deepest = level
    stack: list[tuple[Any, int]] = [(value, level)]
    while stack:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        if deepest > MAX_TOML_NESTING:
            return deepest
        if isinstance(item, dict):
            stack.extend((v, depth + 1) for v in item.values())
        elif isinstance(item, list):
            stack.extend((v, depth + 1) for v in item)
    return deepest


def load_toml(text: str) -> dict[str, Any]:
    """``tomllib.loads`` within the bounds: TomlTooLarge for a text too long or nested too deep
    (tomllib recurses once per level, so a deep enough nesting exhausts the stack);
    TOMLDecodeError as usual for bad syntax."""
    if len(text) > MAX_TOML_BYTES:
        raise TomlTooLarge(f"{len(text):,} characters is more than a TOML file formdb reads "
                           f"({MAX_TOML_BYTES:,})")
    try:
        data = tomllib.loads(text)
    except RecursionError:
        data = None
    if data is None or _depth(data) > MAX_TOML_NESTING:
        raise TomlTooLarge(f"arrays or tables are nested deeper than {MAX_TOML_NESTING} levels")
    return data
