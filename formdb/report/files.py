"""Report files: written whole or not at all, and the line that says where one went."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from formdb.errors import InvalidData

if TYPE_CHECKING:
    from formdb.report.stream import Tally
    from formdb.schemas.result import CheckResult


def write_report(path: Path, text: str | bytes) -> None:
    """Write the report (text, or bytes such as an XLSX workbook) whole or not at all (a
    temporary file renamed into place), so a reader never finds half a report."""
    folder = path.parent if str(path.parent) else Path(".")
    data = text.encode("utf-8") if isinstance(text, str) else text
    try:
        with tempfile.NamedTemporaryFile("wb", dir=folder, delete=False,
                                         prefix=f".{path.name}.", suffix=".part") as handle:
            handle.write(data)
        os.replace(handle.name, path)
    except OSError as exc:
        raise InvalidData(f"{path}: the report cannot be written ({exc.strerror or exc})",
                          hint="choose a folder you can write to") from None


def summary_line(results: Sequence[CheckResult], out: Path) -> str:
    """``check --out``: the count of findings and where the report was written."""
    from formdb.report.stream import Tally

    tally = Tally()
    for result in results:
        tally.add(result)
    return written_line(tally, out)


def written_line(tally: Tally, out: Path) -> str:
    """The same line from a streamed check's tally."""
    return f"{tally.line()}; report written to {out}"
