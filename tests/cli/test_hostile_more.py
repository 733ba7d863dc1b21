"""Hostile input to the commands around the fuzz suites (mixtures, prices, screening, records,
stored formulas, batches, blends, outputs, the library location): each input once ended in an
internal problem, a misleading refusal or a wrong record, and is kept as a regression test, on
both backends where the library is involved. Names and values are made up for the test
(Larkspur Bench Laboratories)."""

from __future__ import annotations

from pathlib import Path

from tests.helpers import CliResult, run_formdb


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
