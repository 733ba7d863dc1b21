"""Library fixtures for every layer's tests.

- ``empty_sqlite_url`` / ``empty_pg_url``: a database that exists but holds nothing yet.
- ``sqlite_url`` / ``pg_url``: the same after ``formdb init`` (schema at head, the built-in
  sources rule-of-thumb and from-memory), no ingredients; made once per session (per xdist
  worker) and copied per test.
- ``library_url``: parametrised over both backends (the PostgreSQL case skips without a server).
- ``seeded_sqlite_url`` / ``seeded_pg_url`` / ``seeded_library_url``: the bundled seed library,
  built once per session and copied per test.

PostgreSQL tests use the server named by FORMDB_TEST_PG_URL and skip with a reason when it is
unset. Each test gets its own database (``pg_url`` and the seeded ones copied from a template
database; ``empty_pg_url`` is an empty schema of its own, its URL's ``search_path``), dropped
afterwards.

Hypothesis profiles (how many examples a property or fuzz test draws), chosen with the
environment variable FORMDB_HYPOTHESIS_PROFILE:

- ``ci`` (the default): a tenth of the examples of the expensive property tests (those that
  run the real command or touch a database per example), so the whole suite fits CI's minutes;
  the fuzz suite (tests/cli/test_hostile_input.py) is the exception: its 3,550 examples run in
  full, each kept cheap (``tests.helpers.fuzz_examples``);
- ``deep``: every count in full, and three times the fuzz suite's. Run it before a release or
  after touching input parsing or import:
  ``FORMDB_HYPOTHESIS_PROFILE=deep pytest tests/cli/test_hostile_input.py``.

An expensive test asks for ``tests.helpers.examples(n)``: ``n`` under ``deep``, a tenth (at least
one) under ``ci``. Cheap property tests of pure functions pin their counts and run them in full
in both profiles.
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import settings
from sqlalchemy import text

from formdb.store.db import make_engine, sqlite_path
from tests.helpers import (
    HYPOTHESIS_PROFILE_ENV,
    PG_ENV,
    commands_share_engines,
    dispose_kept_engines,
    fresh_pg_database,
    fresh_pg_schema,
    pg_base_url,
)

TEST_USER = "larkspur-test"

settings.register_profile("deep", max_examples=100)
settings.register_profile("ci", max_examples=10)
settings.load_profile(os.environ.get(HYPOTHESIS_PROFILE_ENV, "ci"))


def _migrate(url: str) -> str:
    """What `formdb init` makes: the schema at head and the built-in sources."""
    from formdb.services.seed.setup import init_library

    init_library(url, seed=False, user=TEST_USER)
    return url


def _sqlite_url(path: Path) -> str:
    return f"sqlite:///{path}"


@pytest.fixture
def empty_sqlite_url(tmp_path: Path) -> str:
    """A SQLite file path in a fresh folder; the file does not exist yet."""
    return _sqlite_url(tmp_path / "library.sqlite")


@pytest.fixture(scope="session")
def _migrated_sqlite_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    url = _migrate(_sqlite_url(tmp_path_factory.mktemp("migrated") / "template.sqlite"))
    return _one_file(url)


@pytest.fixture
def sqlite_url(_migrated_sqlite_template: Path, empty_sqlite_url: str) -> str:
    """A copy of what `formdb init` makes, at the path of ``empty_sqlite_url``."""
    path = sqlite_path(empty_sqlite_url)
    assert path is not None
    shutil.copyfile(_migrated_sqlite_template, path)
    return empty_sqlite_url


@pytest.fixture(scope="session")
def pg_server() -> str:
    base = pg_base_url()
    if base is None:
        pytest.skip(f"PostgreSQL tests need {PG_ENV} (e.g. "
                    "postgresql+psycopg://postgres@127.0.0.1:5432/test)")
    try:
        make_engine(base).dispose()
    except Exception as exc:  # set but unreachable: a broken CI, not a reason to skip
        pytest.fail(f"{PG_ENV} is set but the server cannot be used: {exc}")
    return base


@pytest.fixture
def empty_pg_url(pg_server: str) -> Iterator[str]:
    """An empty schema of its own on the test server (the URL sets ``search_path`` to it)."""
    with fresh_pg_schema(pg_server) as url:
        yield url


@pytest.fixture(scope="session")
def _migrated_pg_template(pg_server: str) -> Iterator[str]:
    with fresh_pg_database(pg_server) as url:
        _migrate(url)
        yield _database_name(url)


@pytest.fixture
def pg_url(pg_server: str, _migrated_pg_template: str) -> Iterator[str]:
    """A database of its own copied from one that `formdb init` made (CREATE DATABASE ...
    TEMPLATE copies files: far quicker than running the migrations per test)."""
    with fresh_pg_database(pg_server, template=_migrated_pg_template) as url:
        yield url


def _database_name(url: str) -> str:
    from sqlalchemy.engine import make_url

    return str(make_url(url).database)


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def library_url(request: pytest.FixtureRequest) -> str:
    """A library migrated to head, once on SQLite and once on PostgreSQL."""
    return request.getfixturevalue("sqlite_url" if request.param == "sqlite" else "pg_url")


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def empty_library_url(request: pytest.FixtureRequest) -> str:
    """An empty database on each backend (for ``init`` and migration tests)."""
    name = "empty_sqlite_url" if request.param == "sqlite" else "empty_pg_url"
    return request.getfixturevalue(name)


# --- seeded libraries ----------------------------------------------------------------------

def _seed(url: str) -> None:
    from formdb.services.seed.setup import init_library

    init_library(url, seed=True, user=TEST_USER)


@pytest.fixture(scope="session")
def _seeded_sqlite_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    url = _sqlite_url(tmp_path_factory.mktemp("seeded") / "template.sqlite")
    _seed(url)
    return _one_file(url)


def _one_file(url: str) -> Path:
    """The SQLite file of ``url`` with its WAL folded in, so copying the one file copies it."""
    engine = make_engine(url)
    try:
        with engine.connect() as conn:  # fold the WAL into the file so one file is the copy
            conn.execute(text("PRAGMA wal_checkpoint(TRUNCATE)"))
    finally:
        engine.dispose()
    path = sqlite_path(url)
    assert path is not None
    return path


@pytest.fixture
def seeded_sqlite_url(_seeded_sqlite_template: Path, tmp_path: Path) -> str:
    """A copy of the bundled seed library in SQLite, private to the test."""
    target = tmp_path / "seeded.sqlite"
    shutil.copyfile(_seeded_sqlite_template, target)
    return _sqlite_url(target)


@pytest.fixture(scope="session")
def _seeded_pg_template(pg_server: str) -> Iterator[str]:
    with fresh_pg_database(pg_server) as url:
        _seed(url)
        yield _database_name(url)


@pytest.fixture
def seeded_pg_url(pg_server: str, _seeded_pg_template: str) -> Iterator[str]:
    with fresh_pg_database(pg_server, template=_seeded_pg_template) as url:
        yield url


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def seeded_library_url(request: pytest.FixtureRequest) -> str:
    name = "seeded_sqlite_url" if request.param == "sqlite" else "seeded_pg_url"
    return request.getfixturevalue(name)


@pytest.fixture(autouse=True)
def _close_opened_libraries() -> Iterator[None]:
    """Dispose of the Libraries a test opened with tests.libraries.opened, and of the engines
    its in-process commands shared (tests.helpers.command_engine)."""
    from tests.libraries import close_all

    yield
    close_all()
    dispose_kept_engines()


@pytest.fixture(autouse=True, scope="session")
def _commands_share_engines() -> Iterator[None]:
    """Commands run by tests.helpers.run_formdb reuse their test's engines (see there)."""
    with commands_share_engines():
        yield
