"""``python -m formdb.bench run`` at tiny sizes: every figure is printed with its floor, ratio
and target, and the JSON file holds the same figures. No time is asserted."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

from formdb.bench.run import Figure, fitted_exponent

EXPECTED = ("check --all, 20 formulas", "check --all, 40 formulas",
            "peak memory (ru_maxrss), check --all 20 formulas",
            "peak memory (ru_maxrss), check --all 40 formulas", "memory growth 20 -> 40",
            "scaling exponent", "import of a 60-row CSV", "one check FILE process")


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
    assert text.count("ratio ") >= 4  # the two checks, the import and the start-up
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
