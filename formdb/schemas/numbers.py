"""Numbers typed by people: ASCII digits only.

Python's ``float()`` and ``int()`` (and ``str.isdigit()``) also take Arabic-Indic, Persian,
fullwidth and other Unicode digits, so '١٢' would be read as 12 and '²'.isdigit() is true though
``int('²')`` fails. A reviewer reading the file, the command line or the change log would not
see such text as the number stored, so every number a person gives is read here (or by the
ASCII patterns of the table reader) and anything else is refused as not a number.
"""

from __future__ import annotations


def ascii_float(text: str) -> float:
    """``float(text)`` for ASCII text only; ValueError otherwise (callers word the refusal)."""
    if not text.isascii():
        raise ValueError(f"{text!r} is not a number written in ASCII digits")
    return float(text)


def ascii_int(text: str) -> int:
    """``int(text)`` for ASCII text only; ValueError otherwise."""
    if not text.isascii():
        raise ValueError(f"{text!r} is not a number written in ASCII digits")
    return int(text)


def ascii_digits(text: str) -> bool:
    """Whether ``text`` is one or more of the digits 0-9 (``str.isdigit`` takes far more)."""
    return text.isascii() and text.isdigit()
