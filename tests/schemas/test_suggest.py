"""The one 'did you mean' scorer: optimal string alignment, case folded, cut-off above one half.

The scores are worked by hand (edits / length of the longer word); the words are the slips the
CLI tests make.
"""

from __future__ import annotations

import pytest

from formdb.schemas.suggest import CUTOFF, close_matches, closest, did_you_mean


@pytest.mark.parametrize(("word", "choices", "expected"), [
    ("HBL01", ["BAL01", "HLB01"], "HLB01"),  # a swapped pair is one edit: 1 - 1/5 = 0.8
    ("hbl", ["hlb", "hlb_source"], "hlb"),  # 1 - 1/3 = 0.67
    ("warn", ["info", "warning", "error"], "warning"),  # 3 insertions: 1 - 3/7 = 0.57
    ("Glycerine", ["Glycerin", "Glyceryl Stearate"], "Glycerin"),  # case ignored: 1 - 1/9
    ("zwitterionic", ["anionic", "cationic", "nonionic"], None),  # 6 edits of 12: 0.5
    ("qqqqzzzz", ["Stearic Acid"], None),
])
def test_the_closest_choice(word: str, choices: list[str], expected: str | None) -> None:
    assert closest(word, choices) == expected


def test_the_cut_off_lies_between_the_worst_kept_and_the_best_refused_slip() -> None:
    assert 0.5 < CUTOFF <= 4 / 7


def test_several_closest_first_and_the_phrase() -> None:
    assert close_matches("Polysorbate 8", ["Polysorbate 20", "Polysorbate 80", "Aqua"]) == [
        "Polysorbate 80", "Polysorbate 20"]
    assert close_matches("x", []) == []
    assert did_you_mean("strikt", ["default", "strict"]) == " (did you mean 'strict'?)"
    assert did_you_mean("strikt", []) == ""
