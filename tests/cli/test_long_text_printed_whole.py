"""A word longer than its column is folded onto further lines, never cut short.

Rich's default for a column that runs out of room is an ellipsis: an INCI name or a citation
without spaces lost its end in the library tables, the check report's header lines and the
blend table (where a long first name also pushed the other columns off the page).
"""

from __future__ import annotations

import re
from pathlib import Path

from tests.helpers import run_formdb

# one word of 107 characters: longer than any column the reports give a name
LONG = "PEG-100-" + "Larkspurstearate" * 6 + "Ester"
FORMULA = f"""name = "Larkspur long-name trial"
category = "leave-on"
intended_type = "O/W"

[[ingredients]]
inci = "Aqua"
percent = 80.0
phase = "A"

[[ingredients]]
inci = "Paraffinum Liquidum"
percent = 15.0
phase = "B"

[[ingredients]]
inci = "{LONG}"
percent = 3.0
phase = "B"

[[ingredients]]
inci = "Sorbitan Stearate"
percent = 2.0
phase = "B"
"""


def _run(url: str, *args: str):
    result = run_formdb(["--db", url, *args])
    assert result.exit_code in (0, 1), result.stderr
    return result


def _unfolded(text: str) -> str:
    """The text with every line's box drawing and spacing removed and the lines joined, so a
    word folded over several lines of a column reads whole again (for a one-column check)."""
    return "".join("".join(ch for ch in line if ch not in "│┃ ") for line in text.splitlines())


def _add_long(url: str) -> None:
    _run(url, "ingredient", "add", LONG, "--role", "emulsifier", "--set", "hlb=15",
         "--set", "solubility=water", "--source", "from-memory", "--reason", "long-name trial")


def test_library_tables_fold_a_long_name(seeded_library_url: str) -> None:
    _add_long(seeded_library_url)
    listed = _run(seeded_library_url, "ingredient", "list", "--role", "emulsifier").stdout
    assert "…" not in listed
    name_column = "\n".join(line.split("│")[1] for line in listed.splitlines()
                            if line.startswith("│"))
    assert LONG in _unfolded(name_column)
    history = _run(seeded_library_url, "ingredient", "history", LONG).stdout
    assert "…" not in history


def test_check_and_blend_fold_a_long_name(seeded_library_url: str, tmp_path: Path) -> None:
    _add_long(seeded_library_url)
    formula = tmp_path / "long.toml"
    formula.write_text(FORMULA, encoding="utf-8")
    checked = _run(seeded_library_url, "check", str(formula)).stdout
    assert "…" not in checked.replace("SHA-256", "").split("Content hash")[1].split("\n", 1)[1]
    # the header's "Density estimated" line names it, folded over lines of the value column
    start = checked.index("Density estimated")
    block = checked[start:checked.index("\n\n", start)]
    assert LONG in _unfolded(block)
    blended = _run(seeded_library_url, "blend", str(formula)).stdout
    assert "…" not in blended
    # every column of the blend table is still there beside the long name
    header = next(line for line in blended.splitlines() if line.startswith("Emulsifier"))
    assert "HLB source" in header
    lines = blended.splitlines()
    rule = next(i for i, line in enumerate(lines) if line.startswith("─"))
    rows = lines[rule + 1:next(i for i, line in enumerate(lines) if line.startswith("Blend HLB"))]
    first_column = "\n".join(re.split(r"\s{2,}", line)[0] for line in rows
                             if line and not line.startswith(" "))
    assert LONG in _unfolded(first_column)
