"""The building blocks of a report section: labelled lines, tables and notes (all strings)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

Flag = Literal["", "ok", "warn", "bad"]


@dataclass(frozen=True)
class Line:
    """A labelled statement; ``flag`` marks it as fine, worth a look, or a problem."""

    label: str
    value: str
    flag: Flag = ""


@dataclass(frozen=True)
class Lines:
    items: tuple[Line, ...]
    kind: Literal["lines"] = "lines"


@dataclass(frozen=True)
class Table:
    headers: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    numeric: tuple[bool, ...]  # per column: right-aligned numbers
    title: str = ""
    kind: Literal["table"] = "table"


@dataclass(frozen=True)
class Notes:
    items: tuple[str, ...]
    title: str = ""
    kind: Literal["notes"] = "notes"


Block = Lines | Table | Notes


@dataclass(frozen=True)
class Section:
    title: str
    blocks: tuple[Block, ...]


def lines(*items: Line | None) -> Lines:
    return Lines(tuple(i for i in items if i is not None))


def table(headers: tuple[str, ...], rows: Sequence[tuple[str, ...]], numeric: str,
          title: str = "") -> Table:
    """A table; ``numeric`` has one character per column: 'n' right-aligned, anything else left."""
    if len(numeric) != len(headers):
        raise ValueError(f"{len(headers)} headers but {len(numeric)} alignment marks")
    return Table(headers, tuple(rows), tuple(c == "n" for c in numeric), title)
