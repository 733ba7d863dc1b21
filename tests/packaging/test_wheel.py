"""The wheel carries migrations/ and seed_data/, so `formdb init --seed` works from any folder."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # left out of the fast lane

REPO = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def wheel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    if not (REPO / "pyproject.toml").is_file():
        pytest.skip("not a source checkout")
    pytest.importorskip("hatchling")
    out = tmp_path_factory.mktemp("wheel")
    subprocess.run([sys.executable, "-m", "pip", "wheel", str(REPO), "--no-deps",
                    "--no-build-isolation", "-q", "-w", str(out)], check=True)
    return next(out.glob("formdb-*.whl"))


def test_wheel_carries_migrations_seed_data_and_profiles(wheel: Path) -> None:
    names = set(zipfile.ZipFile(wheel).namelist())
    for required in ("formdb/_bundled/migrations/env.py",
                     "formdb/_bundled/migrations/versions/0001_library_tables.py",
                     "formdb/_bundled/seed_data/ingredients.csv",
                     "formdb/_bundled/seed_data/sources.csv",
                     "formdb/_bundled/seed_data/profiles/default.toml",
                     "formdb/_bundled/seed_data/profiles/strict.toml",
                     "formdb/_bundled/seed_data/demo/01-hand-cream.toml",
                     "formdb/cli/main.py"):
        assert required in names, required
    versions = {n.rsplit("/", 1)[1] for n in names
                if n.startswith("formdb/_bundled/migrations/versions/") and n.endswith(".py")}
    assert versions == {p.name for p in (REPO / "migrations" / "versions").glob("*.py")}


def test_wheel_declares_the_console_script(wheel: Path) -> None:
    archive = zipfile.ZipFile(wheel)
    entry_points = next(n for n in archive.namelist() if n.endswith("entry_points.txt"))
    assert "formdb = formdb.cli.main:main" in archive.read(entry_points).decode()
