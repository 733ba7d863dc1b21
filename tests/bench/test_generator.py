"""The benchmark's synthetic library: the same seed gives the same library, formulas are sound
drafts that check without input errors, and stored rows are what ``formula import`` stores.

The formula structure checked here is the trade's usual emulsion layout (rule of thumb): a water
phase, an oil phase with a low/high HLB emulsifier pair, a preservative, water to 100 %.
"""

from __future__ import annotations

import math
import shutil
from pathlib import Path

import pytest
from sqlalchemy import select

from formdb.bench import library, synthetic
from formdb.services.checking.flow import iter_check_stored
from formdb.services.library.formula_files import content_hash, parse_formula_text
from formdb.services.library.formulas import import_formulas
from formdb.store.db import open_library, unit_of_work
from formdb.store.models import ChangeLogEntry, Source, StoredFormula
from tests.helpers import dump_database
from tests.libraries import opened

pytestmark = pytest.mark.slow  # left out of the fast lane

PLAN = library.LibraryPlan(ingredients=180, formulas=60, seed=7)
TIMESTAMPS = ("at", "created_at", "updated_at")


@pytest.fixture(scope="module")
def generated(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """One synthetic SQLite library for the module (tests copy it before writing)."""
    folder = tmp_path_factory.mktemp("bench")
    url = str(folder / "bench.sqlite")
    library.generate(url, PLAN)
    library.checkpoint(url)
    return Path(url)


def test_same_seed_same_rows() -> None:
    first = list(synthetic.synthetic_ingredient_rows(40, seed=3))
    again = list(synthetic.synthetic_ingredient_rows(40, seed=3))
    other = list(synthetic.synthetic_ingredient_rows(40, seed=4))
    assert first == again
    assert first != other
    pools = library.pools_for(PLAN)
    texts = [synthetic.formula_text(i, PLAN.seed, pools) for i in range(1, 30)]
    assert texts == [synthetic.formula_text(i, PLAN.seed, library.pools_for(PLAN))
                     for i in range(1, 30)]
    assert texts != [synthetic.formula_text(i, PLAN.seed + 1, pools) for i in range(1, 30)]


def test_same_seed_same_library(generated: Path, tmp_path: Path) -> None:
    again = str(tmp_path / "again.sqlite")
    library.generate(again, PLAN)
    assert dump_database(again, TIMESTAMPS) == dump_database(str(generated), TIMESTAMPS)


def test_synthetic_ingredients_are_marked(generated: Path) -> None:
    rows = list(synthetic.synthetic_ingredient_rows(200, seed=1))
    assert all(r["inci_name"].startswith("Synthetic ") for r in rows)
    assert all(r["cas"] == "" for r in rows)  # no invented CAS numbers
    for row in rows:
        sources = {row[c] for c in row if c.endswith("_source") and row[c]}
        assert sources <= {synthetic.SOURCE_KEY}
    engine = open_library(str(generated))
    try:
        with unit_of_work(engine) as session:
            source = session.get(Source, synthetic.SOURCE_KEY)
            assert source is not None
            assert source.evidence == "estimated"
            assert source.note == "invented data for benchmarks only"
    finally:
        engine.dispose()


def test_formulas_are_plausible_drafts() -> None:
    pools = library.pools_for(PLAN)
    low = {m.name for m in pools.low_emulsifiers}
    high = {m.name for m in pools.high_emulsifiers}
    preservatives = {m.name for m in pools.preservatives}
    for index in range(1, 200):
        text = synthetic.formula_text(index, PLAN.seed, pools)
        formula = parse_formula_text(text, f"synthetic {index}")
        names = [line.inci for line in formula.ingredients]
        assert 8 <= len(names) <= 25
        assert len(set(names)) == len(names)
        assert math.isclose(sum(line.percent for line in formula.ingredients), 100.0,
                            abs_tol=1e-6)
        assert formula.ingredients[0].inci in ("Aqua", "Water")
        assert formula.ingredients[0].percent >= 30
        assert {line.phase for line in formula.ingredients} == {"A", "B", "C"}
        shown = set(names)
        pool_names = {n for m in pools.low_emulsifiers for n in (m.name, *m.synonyms)}
        assert shown & pool_names or shown & low
        assert shown & {n for m in pools.high_emulsifiers for n in (m.name, *m.synonyms)} \
            or shown & high
        assert shown & {n for m in pools.preservatives for n in (m.name, *m.synonyms)} \
            or shown & preservatives
        assert "Synthetic benchmark formula" in text.splitlines()[0]


def test_every_formula_checks_without_input_errors(generated: Path) -> None:
    results = list(iter_check_stored(opened(str(generated)), batch_size=25))
    assert len(results) == PLAN.formulas
    for result in results:
        assert not [f for f in result.findings if f.rule == "BAL01"], result.formula
        assert result.facts.blend_hlb is not None, result.formula
        assert result.facts.required_hlb is not None, result.formula
        assert len(result.facts.emulsifiers) >= 2, result.formula
        assert result.facts.dispersed_fraction is not None, result.formula
    assert any("Synthetic" in line.inci for r in results for line in r.facts.lines)
    # mostly oil-in-water drafts whose type the emulsifier system agrees with (rule of thumb:
    # a generator of implausible drafts would fail most of them)
    agreeing = sum(r.facts.predicted_type == r.intended_type for r in results)
    assert agreeing >= 0.6 * len(results)


def test_stored_rows_are_what_formula_import_stores(generated: Path, tmp_path: Path,
                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    """Import the same formulas as files into a copy without formulas; the rows must match."""
    copy = tmp_path / "imported.sqlite"
    shutil.copyfile(generated, copy)
    engine = open_library(str(copy))
    try:
        with unit_of_work(engine, write=True) as session:
            session.query(StoredFormula).delete()
            # history rewound with plain SQL: formdb's sessions refuse to delete log rows
            log = ChangeLogEntry.__table__
            session.connection().execute(log.delete().where(log.c.entity == "formula"))
    finally:
        engine.dispose()
    folder = tmp_path / library.FORMULA_FOLDER
    folder.mkdir()
    pools = library.pools_for(PLAN)
    for index, text in library.formula_texts(PLAN, 1, PLAN.formulas + 1, pools):
        (folder / synthetic.formula_file_name(index)).write_text(text, encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    paths = sorted(Path(library.FORMULA_FOLDER).glob("*.toml"))
    report = import_formulas(opened(str(copy)), paths, user=library.BENCH_USER)
    assert len(report.added) == PLAN.formulas
    assert _formula_rows(str(copy)) == _formula_rows(str(generated))
    first = _formula_rows(str(generated))[0]
    text = (folder / synthetic.formula_file_name(1)).read_text(encoding="utf-8")
    assert content_hash(text) in {row[3] for row in _formula_rows(str(generated))}
    assert first[0].startswith("Synthetic bench formula")


def _formula_rows(url: str) -> list[tuple[object, ...]]:
    engine = open_library(url)
    try:
        with unit_of_work(engine) as session:
            formulas = [(f.name, f.name_key, f.content, f.content_hash, f.version, f.updated_by)
                         for f in session.scalars(select(StoredFormula)
                                                  .order_by(StoredFormula.name_key))]
            logs = [(e.user, e.entity, e.entity_key, e.entity_version, e.action, e.form,
                     e.payload, e.reason)
                    for e in session.scalars(select(ChangeLogEntry)
                                             .where(ChangeLogEntry.entity == "formula")
                                             .order_by(ChangeLogEntry.entity_key))]
            return [*formulas, *logs]
    finally:
        engine.dispose()
