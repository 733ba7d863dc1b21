"""``formdb check`` exit codes 0 and 1, ``--out``, ``--all`` and several files at once.

The formulas are Larkspur Bench Laboratories test formulas (an invented lab) checked against the
bundled seed library.
"""

from __future__ import annotations

import json
from pathlib import Path

from tests.helpers import library_state, run_formdb
from tests.report.factory import formula_toml

CLEAN = [("Aqua", 70.0), ("Glycerin", 3.0), ("Isopropyl Myristate", 12.0),
         ("Cetyl Alcohol", 3.0), ("Sorbitan Stearate", 2.0), ("Polysorbate 60", 3.0),
         ("Caprylic/Capric Triglyceride", 6.0), ("Phenoxyethanol", 0.8),
         ("Xanthan Gum", 0.2)]
# Phenoxyethanol 1.5 %: over the 1 % maximum of Regulation (EC) No 1223/2009 Annex V entry 29
# (the limit confirmed by SCCS/1575/16), an error finding.
OVER_LIMIT = [(inci, 1.5 if inci == "Phenoxyethanol" else pct - (0.7 if inci == "Aqua" else 0))
              for inci, pct in CLEAN]


def _file(folder: Path, name: str, title: str, lines: list[tuple[str, float]]) -> Path:
    path = folder / name
    path.write_text(formula_toml(title, lines, intended_type="O/W", ph=5.5,
                                 product="hand cream"), encoding="utf-8")
    return path


def _check(url: str, *args: str):
    return run_formdb(["--db", url, "check", *args])


def test_clean_formula_exits_0(seeded_library_url: str, tmp_path: Path) -> None:
    path = _file(tmp_path, "clean.toml", "Larkspur LB-901 hand cream", CLEAN)
    result = _check(seeded_library_url, str(path))
    assert result.exit_code == 0, result.stdout + result.stderr
    assert "Larkspur LB-901 hand cream" in result.stdout
    assert "0 errors" in result.stdout
    assert result.stderr == ""


def test_error_finding_exits_1(seeded_library_url: str, tmp_path: Path) -> None:
    path = _file(tmp_path, "over.toml", "Larkspur LB-902 hand cream", OVER_LIMIT)
    result = _check(seeded_library_url, str(path), "--format", "json")
    assert result.exit_code == 1, result.stdout + result.stderr
    data = json.loads(result.stdout)
    errors = [f for f in data["findings"] if f["severity"] == "error"]
    assert any("Phenoxyethanol" in f["ingredients"] for f in errors), errors


def test_check_writes_nothing_to_the_library(seeded_library_url: str, tmp_path: Path) -> None:
    before = library_state(seeded_library_url)
    _check(seeded_library_url, str(_file(tmp_path, "a.toml", "Larkspur LB-903", CLEAN)))
    assert library_state(seeded_library_url) == before


def test_out_writes_the_report_and_prints_one_line(seeded_library_url: str,
                                                   tmp_path: Path) -> None:
    clean = _file(tmp_path, "clean.toml", "Larkspur LB-904", CLEAN)
    over = _file(tmp_path, "over.toml", "Larkspur LB-905", OVER_LIMIT)
    for fmt in ("text", "json", "html"):
        out = tmp_path / f"report.{fmt}"
        result = _check(seeded_library_url, str(clean), str(over), "--format", fmt,
                        "--out", str(out))
        assert result.exit_code == 1  # one of the two has an error finding
        assert len(result.stdout.strip().splitlines()) == 1
        assert "2 formula(s) checked, 1 with errors" in result.stdout and str(out) in result.stdout
        text = out.read_text(encoding="utf-8")
        assert "Larkspur LB-904" in text and "Larkspur LB-905" in text
    assert isinstance(json.loads((tmp_path / "report.json").read_text()), list)
    assert (tmp_path / "report.html").read_text().startswith("<!DOCTYPE html>")
    assert not list(tmp_path.glob("*.part"))


def test_several_files_give_a_json_array_in_order(seeded_library_url: str,
                                                  tmp_path: Path) -> None:
    paths = [_file(tmp_path, f"f{i}.toml", f"Larkspur LB-91{i}", CLEAN) for i in range(3)]
    result = _check(seeded_library_url, *map(str, paths), "--format", "json")
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert [d["formula"] for d in data] == ["Larkspur LB-910", "Larkspur LB-911",
                                            "Larkspur LB-912"]


def test_all_checks_the_stored_formulas(seeded_library_url: str, tmp_path: Path) -> None:
    stored = _file(tmp_path, "stored.toml", "Larkspur LB-920 stored cream", OVER_LIMIT)
    imported = run_formdb(["--db", seeded_library_url, "formula", "import", str(stored)])
    assert imported.exit_code == 0, imported.stderr
    loose = _file(tmp_path, "loose.toml", "Larkspur LB-921 loose cream", CLEAN)
    result = _check(seeded_library_url, "--all", "--format", "json")
    assert result.exit_code == 1
    data = json.loads(result.stdout)
    data = data if isinstance(data, list) else [data]
    assert [d["formula"] for d in data] == ["Larkspur LB-920 stored cream"]
    assert data[0]["source"] == "stored:Larkspur LB-920 stored cream"
    both = _check(seeded_library_url, str(loose), "--all", "--format", "json")
    assert [d["formula"] for d in json.loads(both.stdout)] == [
        "Larkspur LB-921 loose cream", "Larkspur LB-920 stored cream"]


def test_all_on_an_empty_library_says_so(seeded_library_url: str) -> None:
    result = _check(seeded_library_url, "--all")
    assert result.exit_code == 0
    assert "No stored formulas" in result.stdout


def test_strict_profile_is_named_in_the_report(seeded_library_url: str, tmp_path: Path) -> None:
    path = _file(tmp_path, "clean.toml", "Larkspur LB-930", CLEAN)
    result = _check(seeded_library_url, str(path), "--profile", "strict", "--format", "json")
    assert result.exit_code in (0, 1), result.stderr
    assert json.loads(result.stdout)["profile"]["name"] == "strict"


def test_text_report_names_the_limit_lists_and_their_dates(seeded_library_url: str,
                                                           tmp_path: Path) -> None:
    path = _file(tmp_path, "clean.toml", "Larkspur LB-940", CLEAN)
    result = _check(seeded_library_url, str(path))
    flat = " ".join(result.stdout.split()).replace("| ", "")
    # the seed's EU lists carry their dates (seed_data/limits.csv, column list_date), and are
    # named as what they are: a few hand-written rows, not the Commission's annex (issue 11)
    assert "Regulation (EC) No 1223/2009 Annex V (hand-written seed rows) as of 20" in flat
    assert "not the annex: import the Commission's exports" in flat
    assert "not a safety assessment" in flat
