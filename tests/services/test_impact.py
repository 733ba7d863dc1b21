"""``formdb impact INGREDIENT``: the stored formulas a library change touches, and how.

The check that flips: Regulation (EC) No 1223/2009 Annex V entry 1 allows benzoic acid and its
sodium salt up to 0.5 % (as acid) in leave-on products. 0.62 % sodium benzoate (C7H5NaO2,
M = 144.10 g/mol) is 0.62 x 122.12 / 144.10 = 0.525 % as benzoic acid (C7H6O2, 122.12 g/mol;
IUPAC atomic weights): over the limit. A (wrong) molar mass of 160 for the salt makes it
0.473 %: under. The edit is made up for the test; the formulas belong to the invented lab.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from sqlalchemy import select

from formdb.services.library.formulas import import_formulas
from formdb.services.library.ingredients import edit_ingredient
from formdb.services.review.impact import impact_of
from formdb.store.db import open_library, unit_of_work
from formdb.store.models import Ingredient, MixtureConstituent
from tests.helpers import run_formdb
from tests.libraries import opened

TONER = """name = "{name}"
category = "leave-on"
ph = 4.5

[[ingredients]]
inci = "Aqua"
percent = {water}

[[ingredients]]
inci = "Glycerin"
percent = 5.0

[[ingredients]]
inci = "{preservative}"
percent = {amount}
"""


def _formulas(url: str, folder: Path) -> None:
    files = []
    for name, preservative, amount, water in (
            ("Larkspur toner A", "Sodium Benzoate", 0.62, 94.38),
            ("Larkspur toner B", "sodium benzoate", 0.62, 94.38),  # any case resolves
            ("Larkspur toner C", "Phenoxyethanol", 1.0, 94.0)):
        path = folder / f"{name.split()[-1]}.toml"
        path.write_text(TONER.format(name=name, preservative=preservative, amount=amount,
                                     water=water), encoding="utf-8")
        files.append(path)
    import_formulas(opened(url), files, user="larkspur-lab")


def _edit(url: str, **values: str) -> None:
    engine = open_library(url)
    try:
        with unit_of_work(engine, write=True) as session:
            edit_ingredient(session, "Sodium Benzoate", list(values.items()),
                            user="larkspur-lab", source="from-memory",
                            reason="test: a wrong molar mass")
    finally:
        engine.dispose()


def test_impact_lists_exactly_the_formulas_whose_verdict_changed(
        seeded_library_url: str, tmp_path: Path) -> None:
    _formulas(seeded_library_url, tmp_path)
    _edit(seeded_library_url, molar_mass="160")
    report = impact_of(opened(seeded_library_url), "Sodium Benzoate")
    assert report.version == 2 and report.baseline_version == 1
    assert sorted(f.formula for f in report.formulas) == ["Larkspur toner A", "Larkspur toner B"]
    assert sorted(f.formula for f in report.changed) == ["Larkspur toner A", "Larkspur toner B"]
    for item in report.formulas:
        assert item.verdict_before == "errors" and item.verdict_now == "warnings"
        assert [k.rule for k in item.gone] == ["LIM01"] and item.added == ()
        assert "0.525 % as Benzoic Acid" in item.gone[0].message
    assert report.change is not None and \
        report.change.fields[0].startswith("molar_mass: 144.1 -> 160 (source calc-molar-mass ")

    result = run_formdb(["--db", seeded_library_url, "impact", "sodium benzoate",
                         "--format", "json"])
    assert result.exit_code == 1, result.stderr
    data = json.loads(result.stdout)
    assert [f["formula"] for f in data["formulas"] if f["verdict_changed"]] == [
        "Larkspur toner A", "Larkspur toner B"]
    text_run = run_formdb(["--db", seeded_library_url, "impact", "Sodium Benzoate"])
    assert "VERDICT CHANGED errors -> warnings" in text_run.stdout
    assert "Larkspur toner C" not in text_run.stdout


def test_an_edit_that_changes_nothing_lists_the_users_unchanged(
        seeded_library_url: str, tmp_path: Path) -> None:
    _formulas(seeded_library_url, tmp_path)
    _edit(seeded_library_url, viscosity_mpas="1")  # no rule reads it for this formula
    report = impact_of(opened(seeded_library_url), "Sodium Benzoate")
    assert len(report.formulas) == 2 and report.changed == []
    result = run_formdb(["--db", seeded_library_url, "impact", "Sodium Benzoate"])
    assert result.exit_code == 0 and "changed: 0" in result.stdout


def test_since_a_version_and_bad_input(seeded_library_url: str, tmp_path: Path) -> None:
    _formulas(seeded_library_url, tmp_path)
    _edit(seeded_library_url, molar_mass="160")
    _edit(seeded_library_url, viscosity_mpas="1")
    # against version 2 (after the molar mass change) nothing changed; against 1 the verdict did
    assert impact_of(opened(seeded_library_url), "Sodium Benzoate").changed == []
    assert len(impact_of(opened(seeded_library_url), "Sodium Benzoate", since="1").changed) == 2
    for args, words in ((["Sodium Benzoat"], "no ingredient"),
                        (["Sodium Benzoate", "--since", "9"], "versions 1 to 3"),
                        (["Sodium Benzoate", "--since", "no-such-run"], "no review run")):
        result = run_formdb(["--db", seeded_library_url, "impact", *args])
        assert result.exit_code == 2 and words in result.stderr, result.stderr
        assert "Traceback" not in result.stderr


@pytest.mark.parametrize("share", [50.0])
def test_a_mixture_containing_it_counts_as_a_use(seeded_library_url: str, tmp_path: Path,
                                                 share: float) -> None:
    # a made-up declaration for the test: Parfum carrying 50 % sodium benzoate
    engine = open_library(seeded_library_url)
    try:
        with unit_of_work(engine, write=True) as session:
            ids = dict(session.execute(select(Ingredient.inci_name, Ingredient.id).where(
                Ingredient.inci_name.in_(["Parfum", "Sodium Benzoate"]))).all())
            session.add(MixtureConstituent(mixture_id=ids["Parfum"],
                                           constituent_id=ids["Sodium Benzoate"],
                                           percent=share, source_key="from-memory"))
    finally:
        engine.dispose()
    path = tmp_path / "scented.toml"
    path.write_text(TONER.format(name="Larkspur scented toner", preservative="Parfum",
                                 amount=1.24, water=93.76), encoding="utf-8")
    import_formulas(opened(seeded_library_url), [path], user="larkspur-lab")
    _edit(seeded_library_url, molar_mass="160")
    report = impact_of(opened(seeded_library_url), "Sodium Benzoate")
    (item,) = report.formulas
    assert "a mixture containing Sodium Benzoate" in item.via[0]
    # 1.24 % Parfum x 50 % = 0.62 % sodium benzoate: the same flip as the plain formulas
    assert item.verdict_before == "errors" and [k.rule for k in item.gone] == ["LIM01"]


def test_import_with_impact_and_several_names(seeded_sqlite_url: str, tmp_path: Path) -> None:
    # After a supplier table changes an ingredient, `import --impact` re-checks what it touches.
    _formulas(seeded_sqlite_url, tmp_path)
    table = tmp_path / "supplier.csv"
    table.write_text("inci_name,molar_mass,molar_mass_source\n"
                     "Sodium Benzoate,160,from-memory\n", encoding="utf-8")
    imported = run_formdb(["--db", seeded_sqlite_url, "ingredient", "import", str(table),
                           "--reason", "test: a wrong molar mass", "--impact"])
    assert imported.exit_code == 0, imported.stderr
    assert "Impact of Sodium Benzoate (now version 2)" in imported.stdout
    assert "Larkspur toner A: VERDICT CHANGED errors -> warnings" in imported.stdout
    both = run_formdb(["--db", seeded_sqlite_url, "impact", "Sodium Benzoate", "Phenoxyethanol",
                       "--format", "json"])
    assert both.exit_code == 1
    data = json.loads(both.stdout)
    assert [d["ingredient"] for d in data] == ["Sodium Benzoate", "Phenoxyethanol"]
    assert [f["formula"] for f in data[1]["formulas"]] == ["Larkspur toner C"]
