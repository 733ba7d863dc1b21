"""Hostile input to the commands around the fuzz suites (mixtures, prices, screening, records,
stored formulas, batches, blends, outputs, the library location): each input once ended in an
internal problem, a misleading refusal or a wrong record, and is kept as a regression test, on
both backends where the library is involved. Names and values are made up for the test
(Larkspur Bench Laboratories)."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.helpers import CliResult, dump_database, run_formdb


def _refused(result: CliResult, *fragments: str) -> None:
    """Exit 2 with one ``Error:`` line (naming what went wrong), never an internal problem."""
    assert result.exit_code == 2, result
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.stderr
    assert "internal problem" not in result.stderr
    for fragment in fragments:
        assert fragment in result.stderr, result.stderr


def _formula(path: Path) -> Path:
    path.write_text('name = "Larkspur hostile lotion"\ncategory = "leave-on"\n'
                    '[[ingredients]]\ninci = "Aqua"\npercent = 90\n'
                    '[[ingredients]]\ninci = "Glycerin"\npercent = 10\n', encoding="utf-8")
    return path


# --- output files ----------------------------------------------------------------------------

def test_an_output_onto_a_symlink_loop_is_refused(seeded_sqlite_url: str, tmp_path: Path) -> None:
    """Found by hand: `check --out` (or `batch --out`, `formula export`) onto a symbolic link
    that points at itself through another ended in RuntimeError 'Symlink loop' (exit 70)."""
    out = tmp_path / "out"
    out.mkdir()
    formula = _formula(tmp_path / "f.toml")
    (out / "loop1.html").symlink_to(out / "loop2.html")
    (out / "loop2.html").symlink_to(out / "loop1.html")
    loop = str(out / "loop1.html")
    for extra in ([], ["--force"]):
        _refused(run_formdb(["--db", seeded_sqlite_url, "check", str(formula), "--format",
                             "html", "--out", loop, *extra]), "symbolic link")
        _refused(run_formdb(["--db", seeded_sqlite_url, "batch", str(formula), "--kg", "1",
                             "--out", loop, *extra]), "symbolic link")
    assert sorted(p.name for p in out.iterdir() if p.is_symlink()) == ["loop1.html",
                                                                       "loop2.html"]
    assert len(list(out.iterdir())) == 2  # nor a temporary file left behind


# --- toxicology and exposure records ---------------------------------------------------------

_TOX = ["--set", "inci=Glycerin", "--set", "pod_kind=NOAEL", "--set", "pod_unit=mg/kg bw/day",
        "--set", "route=oral", "--set", "species=rat", "--set", "study=Larkspur study 7",
        "--set", "source=from-memory"]


@pytest.mark.parametrize(("value", "says"), [
    ("inf", "not a finite number"), ("1e309", "not a finite number"),
    ("١٢", "ASCII digits"), ("１２", "ASCII digits")])  # Arabic-Indic and fullwidth 12
def test_record_numbers_are_ascii_and_finite(seeded_library_url: str, tmp_path: Path,
                                             value: str, says: str) -> None:
    """Found by hand: `toxicology add --set pod_value=inf` stored a NOAEL of infinity, and
    every margin of safety of the substance then 'passes' (MoS = inf / SED); '١٢' was stored
    as 12; `exposure add` and `exposure import` took the same."""
    url = seeded_library_url
    before = dump_database(url)
    _refused(run_formdb(["--db", url, "toxicology", "add", "larkspur-glycerin-noael", *_TOX,
                         "--set", f"pod_value={value}"]), "column pod_value", says)
    _refused(run_formdb(["--db", url, "toxicology", "edit", "phenoxyethanol-noael-rat-oral",
                         "--set", f"pod_value={value}"]), "column pod_value", says)
    _refused(run_formdb(["--db", url, "exposure", "add", "larkspur balm", "--set",
                         "category=leave-on", "--set", "source=from-memory", "--set",
                         "retention_factor=1", "--set", f"exposure_g_day={value}"]),
             "column exposure_g_day", says)
    table = tmp_path / "exposure.csv"
    table.write_text("product,category,retention_factor,exposure_g_day,source\n"
                     f"larkspur balm,leave-on,1,{value},from-memory\n", encoding="utf-8")
    _refused(run_formdb(["--db", url, "exposure", "import", str(table)]),
             "row 2, column exposure_g_day", says)
    assert dump_database(url) == before
    added = run_formdb(["--db", url, "toxicology", "add", "larkspur-glycerin-noael", *_TOX,
                        "--set", "pod_value=1e3"])
    assert added.exit_code == 0, added.stderr  # a finite ASCII number is still taken
