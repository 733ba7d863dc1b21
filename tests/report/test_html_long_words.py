"""A word longer than its column breaks inside the page of every HTML output.

Found by hand: an INCI name of 110 letters without a space widened its table past an A4
page's width (the check report to 1,252 px, the weigh sheet to 1,323 px, the review record to
1,675 px in a 794 px window), so the printed page lost the columns to its right, the grams to
weigh among them. Laid out by the system Chromium (headless), which prints these pages.
"""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest

from tests.cli.test_long_text_printed_whole import FORMULA, LONG
from tests.helpers import chromium, run_formdb

pytestmark = pytest.mark.slow

A4_WINDOW = 794  # px: an A4 page's width at 96 px per inch (210 mm)
MEASURE = ('<script>document.body.setAttribute("data-width", '
           'document.documentElement.scrollWidth + "/" + document.documentElement.clientWidth)'
           "</script></body>")


def _widths(page: Path, tmp_path: Path) -> tuple[int, int]:
    """The page's laid-out width and the window's, in a window as wide as an A4 page."""
    measured = tmp_path / f"measured-{page.name}"
    measured.write_text(page.read_text(encoding="utf-8").replace("</body>", MEASURE),
                        encoding="utf-8")
    dom = subprocess.run(
        [str(chromium()), "--headless", "--no-sandbox", "--disable-gpu",
         "--disable-background-networking", "--no-first-run", f"--user-data-dir={tmp_path}/p",
         f"--window-size={A4_WINDOW},1000", "--dump-dom", measured.as_uri()],
        check=True, capture_output=True, text=True, timeout=120).stdout
    found = re.search(r'data-width="(\d+)/(\d+)"', dom)
    assert found, dom[:500]
    return int(found.group(1)), int(found.group(2))


def test_a_long_name_stays_inside_the_page(seeded_sqlite_url: str, tmp_path: Path) -> None:
    url = seeded_sqlite_url
    assert run_formdb(["--db", url, "ingredient", "add", LONG, "--role", "emulsifier",
                       "--set", "hlb=15", "--set", "solubility=water", "--source",
                       "from-memory", "--reason", "long-name trial"]).exit_code == 0
    formula = tmp_path / "long.toml"
    formula.write_text(FORMULA, encoding="utf-8")
    check, sheet, review = (tmp_path / n for n in ("check.html", "sheet.html", "review.html"))
    assert run_formdb(["--db", url, "check", str(formula), "--format", "html",
                       "--out", str(check)]).exit_code in (0, 1)
    assert run_formdb(["--db", url, "batch", str(formula), "--kg", "1",
                       "--out", str(sheet)]).exit_code == 0
    assert run_formdb(["--db", url, "formula", "import", str(formula)]).exit_code == 0
    run = run_formdb(["--db", url, "review", "run", "stored:Larkspur long-name trial"])
    assert run.exit_code == 0, run.stderr
    key = re.search(r"Run ([0-9a-f]{12})", run.stdout)
    assert key, run.stdout
    assert run_formdb(["--db", url, "review", "report", key.group(1),
                       "--out", str(review)]).exit_code == 0
    for page in (check, sheet, review):
        assert LONG in page.read_text(encoding="utf-8")
        laid_out, window = _widths(page, tmp_path)
        assert laid_out <= window, (page.name, laid_out, window)
