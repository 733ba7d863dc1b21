"""The printable weigh sheet, printed to PDF by the system Chromium (headless) and read back with
pypdf: the text a lab gets on paper holds the masses, the phases and the signature lines."""

from __future__ import annotations

import subprocess
from pathlib import Path

import pytest

from tests.helpers import chromium, run_formdb

CREAM = Path(__file__).parents[1] / "fixtures" / "bench_cream.toml"
pytestmark = pytest.mark.slow


def test_weigh_sheet_prints_to_pdf_with_its_text(seeded_sqlite_url: str, tmp_path: Path) -> None:
    pypdf = pytest.importorskip("pypdf")
    browser = chromium()
    html = tmp_path / "sheet.html"
    result = run_formdb(["--db", seeded_sqlite_url, "batch", str(CREAM), "--kg", "20",
                         "--evaporation-percent", "2", "--out", str(html)])
    assert result.exit_code == 0, result.stderr
    pdf = tmp_path / "sheet.pdf"
    subprocess.run(
        [str(browser), "--headless", "--no-sandbox", "--disable-gpu",
         "--disable-background-networking", "--no-first-run", f"--user-data-dir={tmp_path}/p",
         "--no-pdf-header-footer", f"--print-to-pdf={pdf}", html.as_uri()],
        check=True, capture_output=True, timeout=120)
    reader = pypdf.PdfReader(str(pdf))
    text = " ".join(" ".join(page.extract_text().split()) for page in reader.pages)
    assert "Weigh sheet: Larkspur bench cream, draft 4" in text
    assert "Batch 20.000 kg, plus 2 % water for evaporation" in text
    for phase in "ABCD":
        assert f"Phase {phase}" in text
    assert "14,460" in text and "400.0" in text  # water on the 1 g balance; the allowance
    assert "Paraffinum Liquidum" in text and "NF-2291" in text
    assert "neutralised in the batch" in text
    assert "Weighed by:" in text and "Checked by:" in text
    assert "within the rounding bound" in text
