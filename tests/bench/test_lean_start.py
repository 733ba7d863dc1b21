"""``formdb check FILE`` starts lean: opening a library answers "is it at head?" without alembic
(the answers are checked against alembic's own), and the check command loads none of the heavy
libraries it does not need. No time is asserted."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import text

from formdb.resources import seed_data_dir
from formdb.store.db import (
    current_revision,
    head_from_files,
    head_revision,
    make_engine,
    stored_revision_plain,
)

HEAVY = ("alembic", "pandas", "openpyxl", "jinja2", "pint", "matplotlib", "numpy")


def test_head_from_files_is_alembics_head() -> None:
    assert head_from_files() == head_revision()


def _revision_file(folder: Path, revision: str, parent: str | None, extra: str = "") -> None:
    parent_text = "None" if parent is None else repr(parent)
    (folder / f"{revision}.py").write_text(
        f'"""test revision"""\nrevision: str = {revision!r}\n'
        f"down_revision: str | None = {parent_text}\n{extra}", encoding="utf-8")


@pytest.mark.parametrize("layout, expected", [
    ([("a1", None, ""), ("b2", "a1", ""), ("c3", "b2", "")], "c3"),
    ([("a1", None, ""), ("b2", "a1", ""), ("c3", "a1", "")], None),  # two heads: alembic's call
    ([("a1", None, ""), ("b2", ("a1",), "")], None),  # a merge tuple
    ([("a1", None, ""), ("b2", "a1", "branch_labels = ('x',)\n")], None),
    ([("a1", None, ""), ("b2", "zz", "")], None),  # a parent that is not there
])
def test_head_from_files_leaves_unusual_chains_to_alembic(
        tmp_path: Path, layout: list[tuple[str, object, str]], expected: str | None) -> None:
    versions = tmp_path / "versions"
    versions.mkdir()
    for revision, parent, extra in layout:
        if isinstance(parent, tuple):
            (versions / f"{revision}.py").write_text(
                f"revision = {revision!r}\ndown_revision = {parent!r}\n", encoding="utf-8")
        else:
            _revision_file(versions, revision, parent, extra)  # type: ignore[arg-type]
    assert head_from_files(tmp_path) == expected


def test_plain_revision_read_matches_alembic(library_url: str) -> None:
    engine = make_engine(library_url)
    try:
        assert stored_revision_plain(engine) == (True, current_revision(engine))
        assert current_revision(engine) == head_revision()
    finally:
        engine.dispose()


def test_plain_revision_read_of_an_empty_database(empty_library_url: str) -> None:
    engine = make_engine(empty_library_url)
    try:
        assert stored_revision_plain(engine) == (True, None)
        assert current_revision(engine) is None
        with engine.begin() as conn:  # two version rows: branches, which alembic must judge
            conn.execute(text("CREATE TABLE alembic_version (version_num VARCHAR(32))"))
            conn.execute(text("INSERT INTO alembic_version VALUES ('a'), ('b')"))
        assert stored_revision_plain(engine) == (False, None)
    finally:
        engine.dispose()


def test_check_command_loads_no_heavy_library(seeded_sqlite_url: str) -> None:
    formula = seed_data_dir() / "demo" / "01-hand-cream.toml"
    done = subprocess.run(
        [sys.executable, "-X", "importtime", "-m", "formdb", "--db", seeded_sqlite_url,
         "check", str(formula)], capture_output=True, text=True, check=False, timeout=120)
    assert done.returncode in (0, 1), done.stderr[-2000:]
    loaded = {line.rsplit("|", 1)[-1].strip() for line in done.stderr.splitlines()
              if line.startswith("import time:")}
    top_level = {name.split(".")[0] for name in loaded}
    assert not top_level & set(HEAVY), sorted(top_level & set(HEAVY))
