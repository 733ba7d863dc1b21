"""Names that only look different: the same letters once case, spacing, punctuation and
look-alike characters (Cyrillic 'о' for Latin 'o', the digit 0 for the letter O) are set aside.

``look_alike_key`` is that comparison key. Two names with the same key but a different
``name_key`` are a typing accident waiting to happen (two records for one substance), so input
checks warn about them. Non-ASCII letters are mapped with the Unicode confusables table (the
``confusables`` package, loaded only for such names).
"""

from __future__ import annotations

import unicodedata
from functools import lru_cache

# ASCII characters that read as letters in a name: 0/O and 1/l/I are the usual typing swaps
_ASCII_LOOK_ALIKES = str.maketrans({"0": "o", "1": "l", "|": "l", "i": "l"})


@lru_cache(maxsize=1 << 14)
def look_alike_key(name: str) -> str:
    """Letters and digits only, case folded, look-alikes mapped to one representative."""
    text = unicodedata.normalize("NFKC", name)
    if not text.isascii():
        text = "".join(ch if ch.isascii() else _ascii_form(ch) for ch in text)
    kept = "".join(ch for ch in text.casefold() if ch.isalnum())
    return kept.translate(_ASCII_LOOK_ALIKES)


@lru_cache(maxsize=4096)
def _ascii_form(char: str) -> str:
    """One non-ASCII character as the ASCII it reads as (itself where none). Character by
    character: ``confusables.normalize`` of a whole name builds every combination of every
    character's readings, which grows exponentially with the name (an imported annex name
    such as "2,2'-[(1,2-dioxoethyl)bis(imino)]bis[...]" took minutes and gigabytes)."""
    from confusables import normalize

    return str(normalize(char, prioritize_alpha=True)[0])
