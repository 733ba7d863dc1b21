"""A property value as the text of a table cell: what the importer reads back as the same value.

Shared by the exporter (services) and the listings (report), so both print a value one way.
"""

from __future__ import annotations

import re
from enum import StrEnum
from typing import Any

# A cell that starts with one of these runs as a formula when a spreadsheet opens the file
# (OWASP, "CSV Injection"); every CSV or XLSX formdb writes prefixes such a text cell with an
# apostrophe, and import strips it. A text that itself starts with apostrophes before such a
# character gets one more, so that every text reads back exactly as it was.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def _marked(text: str) -> bool:
    """Whether ``text`` is apostrophes, at least none, before a formula character."""
    return text.lstrip("'").startswith(FORMULA_STARTS)


def guard_cell(text: str) -> str:
    """Make a cell safe to open in a spreadsheet: a leading formula character (after any
    apostrophes the text has of its own) gets an apostrophe."""
    return "'" + text if _marked(text) else text


def unguard_cell(text: str) -> str:
    """Undo ``guard_cell``: ``unguard_cell(guard_cell(t)) == t`` for every text."""
    if text.startswith("'") and _marked(text):
        return text[1:]
    return text


# The characters an XLSX cell cannot hold (XML 1.0 allows no other C0 control; openpyxl refuses
# them with IllegalCharacterError): a library text holding one is refused on the way out.
_NOT_IN_XLSX = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f]")


def xlsx_refusal(text: str) -> str | None:
    """Why ``text`` cannot be an XLSX cell ('U+0007, a control character'), or None."""
    found = _NOT_IN_XLSX.search(text)
    return None if found is None else f"U+{ord(found.group()):04X}, a control character"


def format_number(value: float) -> str:
    """The shortest text that reads back as exactly ``value`` (12.0 -> '12')."""
    if float(value).is_integer() and abs(value) < 1e15:
        return str(int(value))
    return repr(float(value))


def render_property(prop: str, value: Any) -> str:
    """The cell text for a value: what ``parse_property`` reads back as the same value."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, StrEnum):
        return value.value
    if isinstance(value, int | float):
        return format_number(value)
    return str(value)
