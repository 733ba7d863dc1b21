"""A checked value that comes to rest on an unchecked source is said so, on edit and import.

Not refused (a team may mean it, and the change lists the new source), but named, so that a
supplier table that repeats a value "from memory" does not weaken unremarked what verdicts rest
on. Seed values used: Glyceryl Stearate's HLB 3.8 cites wangpradit-2022-ocl (OCL 29:29 (2022),
Table 4: published); Cetyl Alcohol's required HLB (O/W) 15 cites a Spanish-language teaching
document graded a secondary copy, so the README's edit of it "from memory" weakens nothing.
"""

from __future__ import annotations

from pathlib import Path

from tests.helpers import run_formdb

WEAKER = "weaker evidence: "


def _formdb(url: str, *args: str):  # type: ignore[no-untyped-def]
    result = run_formdb(["--db", url, *args])
    assert result.exit_code == 0, result.stderr
    return result


def test_an_edit_that_repeats_a_published_value_from_memory_says_so(
        seeded_library_url: str) -> None:
    out = _formdb(seeded_library_url, "ingredient", "edit", "Glyceryl Stearate", "--set",
                  "hlb=3.8", "--source", "from-memory", "--reason", "supplier sheet").stdout
    notes = [line for line in out.splitlines() if line.startswith(WEAKER)]
    assert len(notes) == 1, out
    assert "hlb 3.8 of Glyceryl Stearate" in notes[0]
    assert "wangpradit-2022-ocl (published) to from-memory (from memory)" in notes[0]
    assert "cite wangpradit-2022-ocl again to keep it" in notes[0]


def test_a_new_value_from_a_rule_of_thumb_is_named_without_the_old_citation_offered(
        seeded_library_url: str) -> None:
    out = _formdb(seeded_library_url, "ingredient", "edit", "Glyceryl Stearate", "--set",
                  "hlb=4.2@rule-of-thumb", "--reason", "our lot").stdout
    notes = [line for line in out.splitlines() if line.startswith(WEAKER)]
    assert len(notes) == 1 and "(rule of thumb)" in notes[0], out
    assert "again to keep it" not in notes[0]  # the old source cited another value


def test_unchecked_to_unchecked_or_to_a_checked_source_says_nothing(
        seeded_library_url: str) -> None:
    # the README's example: a secondary copy replaced by a value from memory
    out = _formdb(seeded_library_url, "ingredient", "edit", "Cetyl Alcohol", "--set",
                  "required_hlb_ow=15.5", "--source", "from-memory", "--reason", "our lot").stdout
    assert WEAKER not in out
    # and back from memory to the published source
    out = _formdb(seeded_library_url, "ingredient", "edit", "Glyceryl Stearate", "--set",
                  "hlb=3.8@from-memory", "--reason", "x").stdout
    assert WEAKER in out
    out = _formdb(seeded_library_url, "ingredient", "edit", "Glyceryl Stearate", "--set",
                  "hlb=3.8@wangpradit-2022-ocl", "--reason", "read again").stdout
    assert WEAKER not in out


def test_an_import_names_the_row_in_a_dry_run_and_when_written(seeded_library_url: str,
                                                                tmp_path: Path) -> None:
    table = tmp_path / "supplier.csv"
    table.write_text("inci_name,hlb,hlb_source\nGlyceryl Stearate,3.8,from-memory\n"
                     "Cetyl Alcohol,,\n", encoding="utf-8")
    for dry in (["--dry-run"], []):
        out = _formdb(seeded_library_url, "ingredient", "import", str(table), *dry).stdout
        notes = [line for line in out.splitlines() if WEAKER in line]
        assert notes == [f"note: row 2: {WEAKER}hlb 3.8 of Glyceryl Stearate: its source goes "
                         "from wangpradit-2022-ocl (published) to from-memory (from memory), a "
                         "checked value giving way to an unchecked one (cite "
                         "wangpradit-2022-ocl again to keep it)"], out
