"""Plausibility warnings on ingredient input: refused with one line per unusual value (exit 2,
nothing written) until ``--accept-unusual`` confirms them, which the change log records.

Outside checks: sorbitan oleate is oil-soluble with HLB 4.3 (Griffin 1954; PMC4137601 Table 2),
so HLB 15.5 on it is the typo the check exists for; phenoxyethanol is limited to 1 % by
Regulation (EC) No 1223/2009 Annex V entry 29 (seed limits) and its CAS is 122-99-6 in the
Commission's Annex V export of 31/10/2025 (../shared/regulatory). The HLB 10/6 cut-offs and the
density ranges are rules of thumb (formdb.services.library.plausibility).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from formdb.schemas.lookalike import look_alike_key
from tests.helpers import dump_database, library_state, run_formdb

SHARED = Path("/work/shared/regulatory/eu-cosing-annexes-2025-10-31")


def _formdb(url: str, *args: str):
    return run_formdb(["--db", url, *args])


def _warned(url: str, *args: str, words: str) -> None:
    """Refused without --accept-unusual (one line, exit 2, no change); accepted with it."""
    before = library_state(url)
    refused = _formdb(url, *args)
    assert refused.exit_code == 2, refused.stdout + refused.stderr
    lines = refused.stderr.strip().splitlines()
    assert len(lines) == 1 and "unusual value" in lines[0] and words in lines[0], lines
    assert "--accept-unusual" in lines[0]
    assert library_state(url) == before
    accepted = _formdb(url, *args, "--accept-unusual")
    assert accepted.exit_code == 0, accepted.stderr
    assert "accepted:" in accepted.stdout and words in accepted.stdout


def test_hlb_against_solubility(seeded_library_url: str) -> None:
    _warned(seeded_library_url, "ingredient", "edit", "Sorbitan Oleate", "--set",
            "hlb=15.5@from-memory", "--reason", "typo test", words="above 10 but the "
                                                                    "solubility is oil")
    log = dump_database(seeded_library_url, tables=["change_log"])
    assert "unusual value(s) confirmed: HLB 15.5 is above 10" in log
    _warned(seeded_library_url, "ingredient", "add", "Larkspur Test Ester", "--role",
            "emulsifier", "--set", "hlb=3@from-memory", "--set", "solubility=water@from-memory",
            words="below 6 but the solubility is water")


def test_required_hlb_density_and_use_range(seeded_sqlite_url: str) -> None:
    url = seeded_sqlite_url
    _warned(url, "ingredient", "add", "Larkspur Test Oil", "--role", "oil",
            "--set", "required_hlb_ow=0.5@from-memory", words="outside 1-20")
    _warned(url, "ingredient", "edit", "Larkspur Test Oil", "--set", "density=1.4@from-memory",
            words="outside the usual range for its role (oil")
    _warned(url, "ingredient", "edit", "Phenoxyethanol", "--set",
            "use_max_percent=2@rule-of-thumb", words="above the highest legal maximum")


def test_cas_of_another_library_substance_and_look_alike_names(seeded_sqlite_url: str) -> None:
    url = seeded_sqlite_url
    _warned(url, "ingredient", "add", "Larkspur Test Solvent", "--cas", "7732-18-5",
            words="already belongs to the library's Aqua")
    _warned(url, "ingredient", "add", "Polysorbate 8O", "--role", "emulsifier",
            words="differs from the library's 'Polysorbate 80'")
    cyrillic_o = "\u043e"
    _warned(url, "ingredient", "add", f"P{cyrillic_o}lysorbate-60", "--role", "emulsifier",
            words="look-alike")


def test_a_table_import_is_held_up_the_same_way(seeded_sqlite_url: str, tmp_path: Path) -> None:
    table = tmp_path / "supplier.csv"
    table.write_text("inci_name,hlb,hlb_source\nSorbitan Oleate,15.5,from-memory\n",
                     encoding="utf-8")
    before = library_state(seeded_sqlite_url)
    refused = _formdb(seeded_sqlite_url, "ingredient", "import", str(table))
    assert refused.exit_code == 2 and "row 2" in refused.stderr and "unusual" in refused.stderr
    assert library_state(seeded_sqlite_url) == before
    accepted = _formdb(seeded_sqlite_url, "ingredient", "import", str(table), "--accept-unusual")
    assert accepted.exit_code == 0 and "accepted:" in accepted.stdout


def test_an_unrelated_edit_is_not_held_up_by_an_old_oddity(seeded_sqlite_url: str) -> None:
    url = seeded_sqlite_url
    assert _formdb(url, "ingredient", "edit", "Sorbitan Oleate", "--set", "hlb=15.5@from-memory",
                   "--reason", "r", "--accept-unusual").exit_code == 0
    result = _formdb(url, "ingredient", "edit", "Sorbitan Oleate", "--set",
                     "ph_max=8@rule-of-thumb")
    assert result.exit_code == 0, result.stderr


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_the_seed_library_passes_its_own_checks(seeded_sqlite_url: str) -> None:
    """Every seed row re-imported as a change would raise no warning (the ranges fit the seed)."""
    from formdb.services.library.ingredients import _as_input, list_ingredients
    from formdb.services.library.plausibility import NameIndex, warnings_for
    from formdb.store.library import Library

    with Library.deferred(seeded_sqlite_url) as library, library.read() as session:
        names = NameIndex(session)
        found = {}
        for rec in list_ingredients(session):
            item = _as_input(rec)
            warned = warnings_for(session, item, own_id=rec.id, names=names)
            if warned:
                found[rec.inci_name] = [w.text for w in warned]
    assert found == {}


@pytest.mark.skipif(not SHARED.is_dir(), reason="the Commission's annex exports are not here")
def test_cas_that_the_lists_give_to_another_substance(sqlite_url: str, tmp_path: Path) -> None:
    url = sqlite_url
    assert _formdb(url, "init").exit_code == 0
    imported = _formdb(url, "lists", "import", str(SHARED / "COSING_Annex_V_v2.txt"))
    assert imported.exit_code == 0, imported.stderr
    _warned(url, "ingredient", "add", "Larkspur Test Glycol Ether", "--cas", "122-99-6",
            words="belongs to PHENOXYETHANOL")


def test_look_alike_key() -> None:
    assert look_alike_key("Polysorbate 80") == look_alike_key("polysorbate-8O")
    assert look_alike_key("Cetyl Alcohol") == look_alike_key("CETYL  ALCOHO1")
    assert look_alike_key("Steareth-2") != look_alike_key("Steareth-20")
    # a look-alike letter from another script reads as the Latin one (Cyrillic у, о; Greek Α)
    assert look_alike_key("Glуcerin") == look_alike_key("Glycerin")
    assert look_alike_key("Аqua") == look_alike_key("aqua")
    assert look_alike_key("Phenоxyethanol 1") == look_alike_key("Phenoxyethanol l")


def test_look_alike_key_reads_a_long_foreign_name_character_by_character(
        monkeypatch: pytest.MonkeyPatch) -> None:
    """The annexes hold long names with Greek letters, primes and dashes; reading a whole name
    through confusables.normalize builds every combination of every character's readings
    (minutes and gigabytes for one name). Each non-ASCII character is read once, alone."""
    import confusables

    from formdb.schemas import lookalike

    seen: list[str] = []
    real = confusables.normalize

    def counting(text: str, prioritize_alpha: bool = False) -> list[str]:
        if prioritize_alpha:  # formdb's calls (the package's own recursion passes False)
            seen.append(text)
        return real(text, prioritize_alpha=prioritize_alpha)  # type: ignore[no-any-return]

    monkeypatch.setattr(confusables, "normalize", counting)
    lookalike._ascii_form.cache_clear()
    lookalike.look_alike_key.cache_clear()
    name = ("α,α′-[(1,2-dioxoethyl)bis(imino)]bis[β–hydroxy-γ-methyl] 4,4′-(1-methylethylidene)"
            "bisphenol – ω-chloro-α-ω′-(2,3-dihydroxypropyl) ester")
    key = look_alike_key(name)
    assert key.startswith("a") and key == look_alike_key(name.replace("α", "a"))  # α reads as a
    assert all(len(text) == 1 and not text.isascii() for text in seen)
    assert len(seen) == len({ch for ch in name if not ch.isascii()})
