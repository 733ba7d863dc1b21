"""'Did you mean' suggestions: one scorer and one cut-off for every layer (no database here).

Closeness is the optimal-string-alignment similarity of the case-folded words: 1 - (edits /
length of the longer word), an edit being one inserted, deleted or replaced character or one
swapped neighbouring pair (HBL01 for HLB01 is one slip). A choice is suggested when more than
half of the longer word survives (``CUTOFF``): 'hbl' -> 'hlb' (0.67) and 'warn' -> 'warning'
(0.57) are, 'zwitterionic' -> 'cationic' (0.50) is not. rapidfuzz loads only when a word was
not found, never at start-up.
"""

from __future__ import annotations

from collections.abc import Iterable

CUTOFF = 0.55  # just above one half: 'zwitterionic' vs 'cationic' scores exactly 0.5


def close_matches(word: str, choices: Iterable[str], limit: int = 3) -> list[str]:
    """Up to ``limit`` choices at or above ``CUTOFF``, closest first (ties in the given order)."""
    from rapidfuzz import process
    from rapidfuzz.distance import OSA

    options = list(choices)
    if not options or limit < 1:
        return []
    found = process.extract(word, options, scorer=OSA.normalized_similarity,
                            processor=str.casefold, score_cutoff=CUTOFF, limit=limit)
    return [choice for choice, _score, _index in found]


def closest(word: str, choices: Iterable[str]) -> str | None:
    """The closest choice, or None when nothing is close."""
    found = close_matches(word, choices, limit=1)
    return found[0] if found else None


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """' (did you mean 'X'?)' for the closest choice, or '' when nothing is close."""
    best = closest(word, choices)
    return f" (did you mean {best!r}?)" if best is not None else ""
