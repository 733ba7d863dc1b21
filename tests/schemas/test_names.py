"""Refused characters in names: the quick answer for printable text is the answer the
character-by-character check gives (Unicode categories, UAX #44; str.isprintable as documented
in the Python Library Reference: false for the categories "Other" and "Separator" but space)."""

from __future__ import annotations

import re
import sys
import unicodedata

import pytest

from formdb.schemas.names import _REFUSED_CATEGORIES, clean_name, refused_character


def test_no_printable_character_is_of_a_refused_category() -> None:
    printable_refused = [hex(code) for code in range(sys.maxunicode + 1)
                         if chr(code).isprintable()
                         and unicodedata.category(chr(code)) in _REFUSED_CATEGORIES]
    assert printable_refused == []


@pytest.mark.parametrize(("text", "code"), [
    ("Cetearyl\u200bAlcohol", "U+200B"),   # zero-width space, Cf
    ("Glyceryl \u202eStearate", "U+202E"),  # right-to-left override, Cf
    ("Aqua\x07", "U+0007"),                 # bell, Cc
    ("Aqua\u2028", "U+2028"),               # line separator, Zl
    ("Aqua\ue000", "U+E000"),               # private use, Co
])
def test_refused_characters_are_named(text: str, code: str) -> None:
    found = refused_character(text)
    assert found is not None and found.startswith(code)
    with pytest.raises(ValueError, match=re.escape(code)):
        clean_name(text, "inci_name")


@pytest.mark.parametrize("text", ["Aqua", "Cetearyl Alcohol", "Glycérine", "PEG-100 Stéarate",
                                  "Aqua\u00a0Purificata"])
def test_visible_names_pass(text: str) -> None:
    assert refused_character(text) is None
