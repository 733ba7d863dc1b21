"""``init_library``: create or upgrade to head, seed by upsert, all-or-nothing, idempotent."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from sqlalchemy import func, select

from formdb.errors import InvalidData, SchemaOutdated
from formdb.services.seed.setup import init_library
from formdb.store.db import head_revision, make_engine, sqlite_path, unit_of_work
from formdb.store.models import ChangeLogEntry, LimitEntry, Source
from tests.helpers import dump_database, library_state

FIXTURE_SEED = Path(__file__).parent / "fixtures" / "seed"
USER = "larkspur-test"


@pytest.fixture
def seed_copy(tmp_path: Path) -> Path:
    """A private copy of the fixture seed folder that a test may break."""
    return Path(shutil.copytree(FIXTURE_SEED, tmp_path / "seed"))


def _seed(url: str, seed_dir: Path = FIXTURE_SEED):  # type: ignore[no-untyped-def]
    return init_library(url, seed=True, user=USER, seed_dir=seed_dir)


def _count(url: str, model: type) -> int:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return session.scalar(select(func.count()).select_from(model)) or 0
    finally:
        engine.dispose()


def test_init_creates_the_library_at_head(empty_library_url: str) -> None:
    report = init_library(empty_library_url, seed=False, user=USER)
    assert report.created and report.revision == head_revision()
    assert report.seeded == {}
    assert report.builtin_sources_added == 2  # rule-of-thumb and from-memory
    again = init_library(empty_library_url, seed=False, user=USER)
    assert not again.created and not again.upgraded and not again.changed_anything


def test_seeding_fills_every_table(empty_library_url: str) -> None:
    report = _seed(empty_library_url)
    assert {t: c.added for t, c in report.seeded.items()} == {
        "sources": 4, "ingredients": 8, "limits": 2, "incompatibilities": 2, "soap_pairs": 1}
    assert _count(empty_library_url, LimitEntry) == 2


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_seeding_twice_changes_nothing(empty_library_url: str) -> None:
    _seed(empty_library_url)
    before = library_state(empty_library_url)
    report = _seed(empty_library_url)
    assert library_state(empty_library_url) == before  # no new rows, no change-log rows
    assert not report.changed_anything
    assert all(c.added == c.changed == 0 for c in report.seeded.values())
    assert report.seeded["ingredients"].unchanged == 8


def test_seeding_an_existing_library_never_overwrites_a_value(empty_library_url: str,
                                                             seed_copy: Path) -> None:
    """Issue 13: `init --seed` put an editor's changes back to the seed values. On a library
    that exists the seed adds what is missing and reports every value it left alone."""
    _seed(empty_library_url, seed_copy)
    logged = _count(empty_library_url, ChangeLogEntry)
    limits = seed_copy / "limits.csv"
    limits.write_text(limits.read_text().replace(",34,Benzyl Alcohol,any,,1,", ",34,Benzyl Alcohol,"
                                                 "any,,0.9,"))
    unconfirmed = init_library(empty_library_url, seed=True, user=USER, seed_dir=seed_copy,
                               confirm=False)
    assert unconfirmed.done  # nothing would be added, so nothing needs confirming
    report = _seed(empty_library_url, seed_copy)
    assert (report.seeded["limits"].changed, report.seeded["limits"].unchanged) == (0, 2)
    assert report.left_alone == (
        "limit eu-v-34-benzyl-alcohol: max_percent kept '1.0' (seed '0.9')",)
    assert not report.changed_anything
    engine = make_engine(empty_library_url)
    try:
        with unit_of_work(engine) as session:
            entry = session.get(LimitEntry, "eu-v-34-benzyl-alcohol")
            assert entry is not None and entry.max_percent == 1.0
            assert _count(empty_library_url, ChangeLogEntry) == logged
            # an ingredient value the team edited stays; a new seed row is added (confirmed)
            entry.max_percent = 0.8  # the team's own value, as an edit would leave it
    finally:
        engine.dispose()
    ingredients = seed_copy / "ingredients.csv"
    lines = ingredients.read_text().splitlines()
    header = lines[0].split(",")
    extra = ["" for _ in header]
    extra[header.index("inci_name")] = "Larkspur Test Ester"
    lines.append(",".join(extra))
    ingredients.write_text("\n".join(lines) + "\n")
    shown = init_library(empty_library_url, seed=True, user=USER, seed_dir=seed_copy,
                         confirm=False)
    assert not shown.done and shown.seeded["ingredients"].added == 1
    assert _count(empty_library_url, ChangeLogEntry) == logged  # rolled back
    done = _seed(empty_library_url, seed_copy)
    assert done.done and done.seeded["ingredients"].added == 1
    assert done.left_alone == (
        "limit eu-v-34-benzyl-alcohol: max_percent kept '0.8' (seed '0.9')",)


def test_seeding_leaves_the_teams_own_rows_alone(empty_library_url: str) -> None:
    _seed(empty_library_url)
    engine = make_engine(empty_library_url)
    try:
        with unit_of_work(engine) as session:
            session.add(Source(key="larkspur-supplier-sheet", citation="Supplier sheet, 2025",
                               evidence="supplier"))
    finally:
        engine.dispose()
    before = library_state(empty_library_url)
    _seed(empty_library_url)
    assert library_state(empty_library_url) == before


BAD_SEEDS = [
    # (file, text to replace, replacement, expected words in the error)
    ("limits.csv", ",1,each,as-is,", ",abc,each,as-is,",
     "seed/limits.csv, row 2, column max_percent: is not a number"),
    ("limits.csv", ",1,each,as-is,", ",150,each,as-is,",
     "seed/limits.csv, row 2, column max_percent: Input should be less than or equal to 100"),
    ("limits.csv", ",eu-1223-annex-v,2024-01-01\neu-v-1",
     ",eu-1223-annex-x,2024-01-01\neu-v-1",
     "seed/limits.csv, row 2, column source: unknown source 'eu-1223-annex-x'"),
    ("limits.csv", "as-acid,Benzoic Acid,", "as-acid,,",
     "seed/limits.csv, row 3: basis as-acid needs acid_inci"),
    ("limits.csv", "2024-01-01\neu-v-1", "01/01/2024\neu-v-1",
     "seed/limits.csv, row 2, column list_date:"),
    ("limits.csv", "key,jurisdiction", "key,jurisdictoin", "seed/limits.csv, row 1, column "
     "jurisdictoin: unknown column (did you mean 'jurisdiction'?)"),
    ("limits.csv", "eu-v-1-benzoic", "eu-v-34-benzyl-alcohol",
     "seed/limits.csv, row 3, column key: 'eu-v-34-benzyl-alcohol' repeats row 2"),
    ("sources.csv", ",measured,", ",guessed,",
     "seed/sources.csv, row 2, column evidence: evidence: 'guessed' is not one of"),
    ("sources.csv", "larkspur-notebook,", "larkspur notebook,",
     "seed/sources.csv, row 2, column key: String should match pattern"),
    ("incompatibilities.csv", "sulfate anionic,quaternary", "sulphate anionic,quaternary",
     "seed/incompatibilities.csv, row 2, column class_a: 'sulphate anionic' is neither a "
     "compatibility class (did you mean 'sulfate anionic'?) nor an ingredient"),
    ("incompatibilities.csv", ",error,", ",fatal,",
     "seed/incompatibilities.csv, row 2, column severity:"),
    ("incompatibilities.csv", ",Do not combine in one phase,", ",,",
     "seed/incompatibilities.csv, row 2, column advice: is empty"),
    ("soap_pairs.csv", "Sodium Hydroxide,Sodium Stearate", "Potassium Hydroxide,Sodium Stearate",
     "seed/soap_pairs.csv, row 2, column base_inci: 'Potassium Hydroxide' is not an ingredient"),
]


@pytest.mark.parametrize(("file", "old", "new", "expected"), BAD_SEEDS,
                         ids=[f"{b[0]}:{b[2][:20]}" for b in BAD_SEEDS])
def test_a_bad_seed_row_is_named_and_nothing_is_written(
        sqlite_url: str, seed_copy: Path, file: str, old: str, new: str, expected: str) -> None:
    path = seed_copy / file
    text = path.read_text()
    assert old in text, "the test's replacement must apply"
    path.write_text(text.replace(old, new, 1))
    init_library(sqlite_url, seed=False, user=USER)
    before = library_state(sqlite_url)
    with pytest.raises(InvalidData) as caught:
        _seed(sqlite_url, seed_copy)
    assert expected in caught.value.message
    assert "\n" not in caught.value.message
    assert library_state(sqlite_url) == before


def test_an_empty_seed_file_is_refused(sqlite_url: str, seed_copy: Path) -> None:
    (seed_copy / "incompatibilities.csv").write_text("")
    with pytest.raises(InvalidData, match=r"seed/incompatibilities\.csv: the file is empty"):
        _seed(sqlite_url, seed_copy)


def test_a_failed_first_init_leaves_no_file_behind(empty_sqlite_url: str,
                                                  seed_copy: Path) -> None:
    (seed_copy / "soap_pairs.csv").write_text(
        "acid_inci,base_inci,soap_inci,source\nOleic Acid,Magnesium Oxide,Magnesium Oleate,"
        "rule-of-thumb\n")
    with pytest.raises(InvalidData, match="Oleic Acid"):
        _seed(empty_sqlite_url, seed_copy)
    path = sqlite_path(empty_sqlite_url)
    assert path is not None and not path.exists()


def test_a_failed_seed_on_postgresql_rolls_back_the_migration_too(empty_pg_url: str,
                                                                  seed_copy: Path) -> None:
    (seed_copy / "limits.csv").write_text(
        (seed_copy / "limits.csv").read_text().replace(",any,,1,", ",any,,-1,"))
    with pytest.raises(InvalidData, match="max_percent"):
        _seed(empty_pg_url, seed_copy)
    assert set(dump_database(empty_pg_url).split()) == set()  # not even alembic_version


def test_init_refuses_a_library_from_a_newer_formdb(sqlite_url: str) -> None:
    engine = make_engine(sqlite_url)
    try:
        with engine.begin() as conn:
            conn.exec_driver_sql("UPDATE alembic_version SET version_num = '7777_future'")
    finally:
        engine.dispose()
    before = library_state(sqlite_url)
    with pytest.raises(SchemaOutdated, match="7777_future, which this formdb does not know"):
        init_library(sqlite_url, seed=True, user=USER)
    assert library_state(sqlite_url) == before


def test_bundled_seed_library_loads_and_reloads_unchanged(seeded_sqlite_url: str) -> None:
    """The real seed_data/ (every file present) seeds, and a second init --seed is a no-op."""
    before = library_state(seeded_sqlite_url)
    report = init_library(seeded_sqlite_url, seed=True, user=USER)
    assert not report.changed_anything, report
    assert library_state(seeded_sqlite_url) == before
    assert report.seeded["ingredients"].unchanged >= 90  # DESIGN.md section 4 lists ~95 names


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_two_inits_at_once_queue_up_and_agree(empty_library_url: str, tmp_path: Path) -> None:
    """Two team members run ``init --seed`` on one library at the same moment: both succeed
    (the second waits for the first's lock) and the library equals one run's result."""
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(2) as pool:
        reports = list(pool.map(lambda _: _seed(empty_library_url), range(2)))
    assert sorted(r.seeded["ingredients"].added for r in reports) == [0, 8]
    moments = {"at", "created_at", "updated_at"}
    alone = f"sqlite:///{tmp_path / 'alone.sqlite'}"
    _seed(alone)
    # the same rows (row order aside: the backends may sort text differently)
    assert sorted(dump_database(empty_library_url, moments).splitlines()) == sorted(
        dump_database(alone, moments).splitlines())
