"""Clean names: what an ingredient name or synonym may hold, and when two names are one.

A name is stored in Unicode NFC, so the same letters typed on two keyboards are the same name.
Characters that a reader cannot see or that reorder what is shown are refused outright:
control characters (category Cc), format characters (Cf: zero-width spaces and joiners, the
bidirectional overrides and isolates, soft hyphens), line and paragraph separators, private-use
and unassigned code points (Unicode Standard, chapter 23 and UAX #9).

Names that only look alike (case, spacing, punctuation, look-alike characters of other scripts)
are caught by ``formdb.schemas.lookalike`` in the plausibility checks.
"""

from __future__ import annotations

import unicodedata

_REFUSED_CATEGORIES = {
    "Cc": "a control character",
    "Cf": "an invisible formatting character (zero-width or bidirectional)",
    "Cs": "a lone surrogate",
    "Co": "a private-use character",
    "Cn": "an unassigned code point",
    "Zl": "a line separator",
    "Zp": "a paragraph separator",
}


def refused_character(text: str) -> str | None:
    """Why ``text`` cannot be a name ('U+202E, an invisible formatting character ...'), or None."""
    if text.isprintable():  # no character of the categories "Other" or "Separator" but space:
        return None  # none of the refused ones (str.isprintable), checked in C
    for char in text:
        what = _REFUSED_CATEGORIES.get(unicodedata.category(char))
        if what is not None:
            return f"U+{ord(char):04X}, {what}"
    return None


def clean_name(text: str, field: str | None) -> str:
    """The stored form of a name: NFC, trimmed, inner whitespace collapsed; ValueError naming
    ``field`` (None: where the caller already names it) and the character when it holds one a
    reader cannot see."""
    bad = refused_character(text)
    if bad is not None:
        where = f"{field}: " if field else ""
        raise ValueError(f"{where}holds {bad}; names may hold only visible characters")
    return " ".join(unicodedata.normalize("NFC", text).split())
