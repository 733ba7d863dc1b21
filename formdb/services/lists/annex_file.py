"""Read one of the Commission's annex exports (CosIng "COSING_Annex_*.txt") into rows.

The export is comma-separated UTF-8 text with title lines above the header: the file's creation
date, the annex and its last update, the annex title. Cells hold line breaks. Every problem is one
line naming the file, the row and the field, and nothing is imported.
"""

from __future__ import annotations

import csv
import hashlib
import io
import re
from dataclasses import dataclass, field
from datetime import date, datetime
from pathlib import Path

from formdb.errors import InvalidData
from formdb.schemas.bounds import MAX_TABLE_BYTES, UnreadableInput, read_input
from formdb.schemas.lists import ANNEXES

REF = "Reference Number"
# columns every export of the annex must have (the name column differs between annexes)
REQUIRED = {
    "II": (REF, "Chemical name / INN", "CAS Number", "EC Number", "Regulation"),
    "III": (REF, "Chemical name / INN", "Name of Common Ingredients Glossary", "CAS Number",
            "EC Number", "Product Type, body parts",
            "Maximum concentration in ready for use preparation", "Other",
            "Wording of conditions of use and warnings", "Regulation"),
    "IV": (REF, "Chemical name", "Colour index Number / Name of Common Ingredients Glossary",
           "CAS Number", "EC Number", "Product Type, body parts",
           "Maximum concentration in ready for use preparation", "Other",
           "Wording of conditions of use and warnings", "Regulation"),
}
REQUIRED["V"] = REQUIRED["VI"] = REQUIRED["III"]
HINT = ("give the annex export exactly as downloaded from the Commission's CosIng site "
        "(COSING_Annex_II_v2.txt ... COSING_Annex_VI_v2.txt)")

_CREATED = re.compile(r"File creation date:\s*(\d{1,2})/(\d{1,2})/(\d{4})")
_UPDATED = re.compile(r"Last update:\s*(\d{1,2})/(\d{1,2})/(\d{4})")
_ANNEX = re.compile(r"^ANNEX\s+(II|III|IV|V|VI)$")


@dataclass
class AnnexFile:
    """The export's annex, its two dates, its hash, its header and its rows (line numbers kept)."""

    path: Path
    annex: str
    file_created: date
    last_update: date
    file_hash: str
    header: list[str]
    rows: list[tuple[int, dict[str, str]]] = field(default_factory=list)

    @property
    def name(self) -> str:
        return self.path.name


def _date(match: re.Match[str], where: str) -> date:
    day, month, year = (int(g) for g in match.groups())
    try:
        return date(year, month, day)
    except ValueError:
        raise InvalidData(f"{where}: {match.group(0)!r} is not a date", hint=HINT) from None


def read_annex_file(path: Path) -> AnnexFile:
    """Parse ``path``; raise InvalidData (file, row, field) when it is not a whole annex export."""
    try:
        data = read_input(path, MAX_TABLE_BYTES)
    except UnreadableInput as exc:
        raise InvalidData(f"{path}: {exc}", hint=HINT) from None
    except OSError as exc:
        raise InvalidData(f"{path}: cannot be read ({exc.strerror or exc})", hint=HINT) from None
    if data and not data.endswith((b"\n", b"\r")):
        raise InvalidData(f"{path}: the last line has no line break (a truncated file?)",
                          hint=HINT)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InvalidData(f"{path}: not UTF-8 text (byte {exc.start})", hint=HINT) from None
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    records: list[tuple[int, list[str]]] = []
    try:
        records.extend((reader.line_num, cells) for cells in reader)
    except csv.Error as exc:
        raise InvalidData(f"{path}, line {reader.line_num}: {exc} (a truncated file?)",
                          hint=HINT) from None
    titles = [" ".join(c.strip() for c in cells if c.strip()) for _, cells in records[:4]]
    created = next((m for t in titles if (m := _CREATED.search(t))), None)
    updated = next((m for t in titles if (m := _UPDATED.search(t))), None)
    annex = next((m.group(1) for _, cells in records[:4] if cells
                  and (m := _ANNEX.match(cells[0].strip().upper()))), None)
    if annex is None or created is None or updated is None:
        missing = [what for what, found in (("'ANNEX ...' line", annex),
                                             ("'File creation date'", created),
                                             ("'Last update'", updated)) if found is None]
        raise InvalidData(f"{path}, line 1: not an annex export (no {', no '.join(missing)} "
                          "in the title lines)", hint=HINT)
    header_at = next((i for i, (_, cells) in enumerate(records)
                      if cells and cells[0].strip() == REF), None)
    if header_at is None:
        raise InvalidData(f"{path}: not an annex export (no header row starting with "
                          f"{REF!r})", hint=HINT)
    line, header = records[header_at]
    header = [h.strip() for h in header]
    missing_cols = [c for c in REQUIRED[annex] if c not in header]
    if missing_cols:
        raise InvalidData(f"{path}, line {line}: the Annex {annex} header has no column "
                          f"{missing_cols[0]!r}", hint=HINT)
    out = AnnexFile(path=path, annex=annex, file_created=_date(created, f"{path}, line 1"),
                    last_update=_date(updated, f"{path}, line 2"),
                    file_hash=hashlib.sha256(data).hexdigest(), header=header)
    if out.last_update > out.file_created:
        # the Commission writes the file after the last update it contains: a later "Last
        # update" is an edited file, and would put the snapshot ahead of every real export
        raise InvalidData(f"{path}, line 2: 'Last update' {out.last_update:%d/%m/%Y} is after the "
                          f"'File creation date' {out.file_created:%d/%m/%Y} (an edited file?)",
                          hint=HINT)
    for line, cells in records[header_at + 1:]:
        if not any(c.strip() for c in cells):
            continue
        if len(cells) != len(header):
            raise InvalidData(
                f"{path}, line {line}: {len(cells)} cells where the header has {len(header)} "
                "(a truncated or edited file?)", hint=HINT)
        row = dict(zip(header, cells, strict=True))
        if not row[REF].strip():
            raise InvalidData(f"{path}, line {line}, field {REF!r}: empty", hint=HINT)
        out.rows.append((line, row))
    if not out.rows:
        raise InvalidData(f"{path}: the export has a header but no entries", hint=HINT)
    last_line, last = out.rows[-1]
    stamp = last.get("Update Date", "").strip()
    if "Update Date" in header and stamp and not _is_date(stamp):
        raise InvalidData(f"{path}, line {last_line}, field 'Update Date': {stamp!r} is not a "
                          "date (a truncated file?)", hint=HINT)
    if annex not in ANNEXES:  # pragma: no cover - the pattern admits only these
        raise InvalidData(f"{path}: unknown annex {annex!r}", hint=HINT)
    return out


def _is_date(text: str) -> bool:
    try:
        datetime.strptime(text, "%d/%m/%Y")
    except ValueError:
        return False
    return True


def parse_day(text: str) -> date | None:
    """An export date (dd/mm/yyyy), or None."""
    try:
        return datetime.strptime(text.strip(), "%d/%m/%Y").date()
    except ValueError:
        return None
