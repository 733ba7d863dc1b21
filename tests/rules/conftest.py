"""Fixtures of the rule tests that read the Commission's annex exports (never copied into the
repository; the tests that use these skip where the exports are absent)."""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest

from formdb.services.lists.importing import import_lists
from formdb.store.library import Library
from tests.conftest import TEST_USER
from tests.helpers import ANNEX_EXPORTS


@pytest.fixture(scope="module")
def _exports_imported(_seeded_sqlite_template: Path, tmp_path_factory: pytest.TempPathFactory
                      ) -> Path:
    """The seed library with every export of 31/10/2025 imported, made once per module."""
    target = tmp_path_factory.mktemp("lists") / "lists.sqlite"
    shutil.copyfile(_seeded_sqlite_template, target)
    with Library.open(f"sqlite:///{target}") as library:
        import_lists(library, [ANNEX_EXPORTS / f"COSING_Annex_{annex}_v2.txt"
                               for annex in ("II", "III", "IV", "V", "VI")], user=TEST_USER)
    return target


@pytest.fixture
def lists_library(_exports_imported: Path, tmp_path: Path) -> Iterator[Library]:
    """A copy of that library for one test, opened."""
    copy = tmp_path / "lists.sqlite"
    shutil.copyfile(_exports_imported, copy)
    with Library.open(f"sqlite:///{copy}") as opened:
        yield opened
