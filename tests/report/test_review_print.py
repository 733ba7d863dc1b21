"""The filed report as it prints: Chromium (headless, as scripts/screenshot_report.sh runs it)
prints the HTML to an A4 PDF, and pypdf reads each page's text back.

Checked on every page: the footer "Page x of y" with the run key and the formula name. Checked
on every page break: no page ends with a heading (a heading's text is the last line of a page),
a table carried over to the next page starts there with its header row again, and the
signature table is on one page with its heading.

The formulas are the three golden formulas of the invented Larkspur Bench Laboratories on the
bundled seed library; the number of signatures varies so that the page breaks fall in
different places.
"""

from __future__ import annotations

import html
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from pypdf import PdfReader

from tests.helpers import chromium
from tests.signing import act, new_signer, people, sign

__all__ = ["people"]  # the fixture, imported for its tests

ROOT = Path(__file__).parents[2]
FORMULAS = ROOT / "tests" / "golden" / "formulas"
FINDINGS_HEADER = "Rule Severity Finding What to do"

pytestmark = pytest.mark.slow


@pytest.fixture(autouse=True)
def _browser() -> Path:
    return chromium()


def _print(page: Path) -> list[str]:
    pdf = page.with_suffix(".pdf")
    subprocess.run([str(ROOT / "scripts" / "screenshot_report.sh"), str(page), str(pdf)],
                   check=True, timeout=180, capture_output=True)
    return [p.extract_text() for p in PdfReader(pdf).pages]


def _headings(page_html: str) -> set[str]:
    found = re.findall(r"<h[1-4][^>]*>(.*?)</h[1-4]>", page_html, flags=re.S)
    return {html.unescape(re.sub(r"<[^>]+>", "", h)).strip() for h in found}


def _body(text: str, footer: str) -> list[str]:
    """The page's lines without the footer line(s)."""
    return [ln.strip() for ln in text.splitlines()
            if ln.strip() and "Page " not in ln and footer not in ln]


def _filed(url: str, tmp_path: Path, formula: str, signatures: int,
           people) -> tuple[str, str, Path]:
    source = tmp_path / formula
    shutil.copyfile(FORMULAS / formula, source)
    ana = people(url, "ana")
    done = act(ana, "review", "run", str(source))
    assert done.exit_code == 0, done.stderr
    key = done.stdout.split()[1].rstrip(":")
    doc = json.loads(act(ana, "review", "report", key, "--format", "json").stdout)
    justify = [arg for rule in sorted({i["rule"] for i in doc["open_items"]})
               for arg in ("--justify", f"{rule}=accepted for the first lab batch, see file")]
    for n in range(signatures):
        signer = new_signer(people(url, f"rev{n}"), tmp_path, f"Reviewer Number {n}")
        meaning = ("approved", "reviewed", "rejected")[n % 3]
        extra = {"approved": justify, "reviewed": [], "rejected": ["--reason", "not yet"]}
        signed = sign(signer, key, meaning, *extra[meaning])
        assert signed.exit_code == 0, signed.stderr
    page = tmp_path / f"{formula}.html"
    done = act(ana, "review", "report", key, "--out", str(page))
    assert done.exit_code == 0, done.stderr
    return key, doc["header"]["formula"], page


def _check_pages(key: str, name: str, page: Path, signers: int) -> int:
    pages = _print(page)
    headings = _headings(page.read_text(encoding="utf-8"))
    total = len(pages)
    footer = f"Review record {key} - {name}"
    for number, text in enumerate(pages, 1):
        assert f"Page {number} of {total}" in text, (number, text[:200])
        assert footer in text, (number, text[:200])
        body = _body(text, footer)
        assert body, f"page {number} is empty"
        assert body[-1] not in headings, f"page {number} ends with the heading {body[-1]!r}"
    # a findings table carried over repeats its header row at the top of the next page
    start = next(i for i, t in enumerate(pages) if "All findings" in _body(t, footer))
    end = next(i for i, t in enumerate(pages) if "Signatures" in _body(t, footer))
    for i in range(start + 1, end + 1):
        first = _body(pages[i], footer)
        if first[0] != "Signatures":
            assert FINDINGS_HEADER in first[:3], (i + 1, first[:3])
    # the signatures stay together, on one page with their heading
    [sig_page] = [" ".join(t.split()) for t in pages if "Signatures" in _body(t, footer)]
    for n in range(signers):
        assert f"Reviewer Number {n}" in sig_page
    return total


@pytest.mark.parametrize(("formula", "signatures"), [
    ("ow-cream.toml", 0), ("ow-cream.toml", 4), ("benzoate-lotion.toml", 2),
    ("vanishing-cream.toml", 6)])
def test_every_page_has_its_footer_and_no_page_ends_with_a_heading(
        seeded_sqlite_url: str, tmp_path: Path, formula: str, signatures: int,
        people) -> None:
    key, name, page = _filed(seeded_sqlite_url, tmp_path, formula, signatures, people)
    assert _check_pages(key, name, page, signatures) >= 2


def test_the_printed_report_on_both_backends(seeded_library_url: str, tmp_path: Path,
                                             people) -> None:
    key, name, page = _filed(seeded_library_url, tmp_path, "ow-cream.toml", 3, people)
    _check_pages(key, name, page, 3)
    text = page.read_text(encoding="utf-8")
    assert "seed_data" not in text and "site-packages" not in text
    for section in ("HLB balance", "Emulsion type", "Dispersed phase", "What to do"):
        assert f">{section}</h" in text
