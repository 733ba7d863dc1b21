"""``python -m formdb.bench run`` at tiny sizes: every figure is printed with its floor, ratio
and target, and the JSON file holds the same figures. No time is asserted."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from formdb.bench.floors import STARTUP_FLOOR_CODE
from formdb.bench.run import Figure, fitted_exponent
from formdb.bench.startup import group_of, import_profile

pytestmark = pytest.mark.slow  # left out of the fast lane

EXPECTED = ("check --all, 20 formulas", "check --all, 40 formulas",
            "peak memory (ru_maxrss), check --all 20 formulas",
            "peak memory (ru_maxrss), check --all 40 formulas", "memory growth 20 -> 40",
            "scaling exponent", "import of a 60-row CSV", "one check FILE process",
            "one ingredient show NAME process",
            "import time of one check FILE process beyond the floor's",
            "import time of one ingredient show process beyond the floor's",
            "formdb's own modules, import time in one check FILE process")


def test_quick_run_prints_every_figure(tmp_path: Path) -> None:
    out = tmp_path / "figures.json"
    done = subprocess.run(
        [sys.executable, "-m", "formdb.bench", "run", "--quick", "--work", str(tmp_path / "w"),
         "--ingredients", "130", "--sizes", "40,20", "--import-rows", "60",
         "--startup-runs", "1", "--json", str(out)],
        capture_output=True, text=True, check=False, timeout=300)
    assert done.returncode == 0, done.stderr
    text = done.stdout
    for name in EXPECTED:
        assert name in text, name
    assert text.count("ratio ") >= 8  # two checks, the import, two start-ups, three imports
    assert "<= 1.5x" in text and "<= 1.3x" in text  # the start-up targets beside the figures
    assert "plain driver read + tomllib" in text
    assert "pandas.read_csv + plain executemany" in text
    assert 'python -c "import sqlalchemy, pydantic, click"' in text
    data = json.loads(out.read_text(encoding="utf-8"))
    assert data["machine"]["cpus"]
    figures = data["results"][0]["figures"]
    assert [f["name"].split(" (")[0] for f in figures][:2] == ["check --all, 20 formulas",
                                                               "check --all, 40 formulas"]
    for figure in figures:
        if figure["floor"] is not None:
            assert figure["ratio"] == figure["measured"] / figure["floor"]
    assert sum(f["met"] is not None for f in figures) >= 6


def test_fitted_exponent_of_known_series() -> None:
    # t = 2 n^1.0 and t = 3 n^0.5: the log-log slope is the exponent (arithmetic)
    assert math.isclose(fitted_exponent([(1e3, 2e3), (1e4, 2e4), (1e5, 2e5)]), 1.0)
    assert math.isclose(fitted_exponent([(100, 30), (10_000, 300)]), 0.5)


def test_figure_ratios() -> None:
    figure = Figure("x", 10.0, "s", 2.0, cpu=6.0, floor_cpu=1.5)
    assert figure.ratio == 5.0
    assert figure.cpu_ratio == 4.0
    assert Figure("y", 1.0, "MB").ratio is None


def test_import_profile_names_what_the_floor_does_not_import() -> None:
    """A process importing the floor plus ``sqlalchemy.orm``: only the ORM (and what it pulls
    in) is beyond the floor, and none of it is formdb's."""
    profile = import_profile([sys.executable, "-c", f"{STARTUP_FLOOR_CODE}, sqlalchemy.orm"], 1)
    assert profile.by_group.get("sqlalchemy.orm", 0) > 0
    assert "formdb" not in profile.by_group
    assert 0 < profile.beyond_floor < profile.total
    assert math.isclose(sum(profile.by_group.values()), profile.beyond_floor)


def test_import_groups() -> None:
    assert group_of("formdb.store.models") == "formdb"
    assert group_of("sqlalchemy.orm.session") == "sqlalchemy.orm"
    assert group_of("sqlalchemy.sql.compiler") == "sqlalchemy"
    assert group_of("pydantic_core.core_schema") == "pydantic_core"
    assert group_of("formdbx") == "other"
