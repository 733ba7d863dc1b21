"""The HTML report: standalone, every user string escaped (SVG labels too), chart and cautions."""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

from formdb.report import render
from formdb.report.cautions import SCREENING
from formdb.schemas.vocab import Role, Severity
from tests.helpers import run_formdb
from tests.report.factory import finding, formula_toml, result

EVIL = "<script>alert('x')</script>"


class _Tags(HTMLParser):
    """Every start tag and attribute, to prove no script or external asset got in."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.attrs: list[tuple[str, str | None]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append(tag)
        self.attrs.extend(attrs)


def _parse(html: str) -> _Tags:
    parser = _Tags()
    parser.feed(html)
    return parser


def test_user_strings_are_escaped_everywhere() -> None:
    extra = {f"Oil {EVIL}": {"roles": {Role.OIL}, "props": {
                 "solubility": "oil", "density": 0.81, "required_hlb_ow": 11.0}},
             f"Ester {EVIL}": {"roles": {Role.EMULSIFIER}, "props": {
                 "hlb": 14.0, "solubility": "water"}}}
    checked = result(name=f"Lotion {EVIL}", lines=[
        ("Water", 75.0), (f"Oil {EVIL}", 20.0), (f"Ester {EVIL}", 3.0), ("Sorbitan Oleate", 2.0)],
        findings=(finding(message=f"message {EVIL}", ingredients=(f"Oil {EVIL}",),
                          advice=f"advice {EVIL}"),), extra=extra)
    html = render([checked], "html")
    tags = _parse(html)
    assert "script" not in tags.tags
    assert EVIL not in html
    escaped = "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt;"
    assert html.count(escaped) >= 6  # name, title, lines, chart labels, finding texts
    svg = html[html.index("<svg"):html.index("</svg>")]
    assert f"Ester {escaped}" in svg  # the emulsifier's label inside the SVG


def test_one_standalone_file_with_chart_cautions_and_print_css() -> None:
    html = render([result(intended_type="O/W"), result(name="Second lotion")], "html")
    tags = _parse(html)
    assert tags.tags.count("svg") == 2  # one chart per formula
    assert "link" not in tags.tags and "img" not in tags.tags and "script" not in tags.tags
    external = [v for k, v in tags.attrs if k in ("src", "href") and v]
    assert external == []
    assert "@media print" in html
    assert SCREENING in html.replace("\n", " ")
    assert html.index("Read first: cautions") < html.index("<article")


def test_chart_marks_blend_and_band() -> None:
    html = render([result(intended_type="O/W")], "html")
    svg = html[html.index("<svg"):html.index("</svg>")]
    assert "Sorbitan Oleate 4.3" in svg and "Polysorbate 80 15.0" in svg
    assert "blend 11.79" in svg  # PMC4137601 Table 2: 30/70 of 4.3 and 15.0
    assert "required 11.5 ± 1 (O/W)" in svg  # isopropyl myristate 11.5 (OCL 2022 Table 4)
    band = re.search(r'<rect x="([\d.]+)" y="4" width="([\d.]+)"', svg)
    assert band is not None
    # axis 0-20 from x=30 to x=690: 10.5 -> 376.5, width of 2 HLB units = 66 px
    assert float(band.group(1)) == 376.5 and float(band.group(2)) == 66.0


def test_chart_axis_widens_for_ionic_hlb() -> None:
    extra = {"Sulfate Test": {"roles": {Role.EMULSIFIER},
                              "props": {"hlb": 40.0, "solubility": "water"}}}
    # an emulsion (the chart belongs to the HLB section, which only emulsions get)
    html = render([result(lines=[("Water", 70.0), ("Isopropyl Myristate", 20.0),
                                 ("Sulfate Test", 10.0)], extra=extra)],
                  "html")
    svg = html[html.index("<svg"):html.index("</svg>")]
    ticks = re.findall(r'fill="#5b6675">(\d+)</text>', svg)
    assert ticks[-1] == "40"


def test_findings_grouped_by_severity_most_severe_first() -> None:
    checked = result(findings=(finding("E1", Severity.ERROR, "first error"),
                               finding("W1", Severity.WARNING, "a warning"),
                               finding("I1", Severity.INFO, "a note")))
    html = render([checked], "html")
    assert html.index("Errors (1)") < html.index("Warnings (1)") < html.index("Information (1)")


def test_cli_html_escapes_a_formula_name_and_a_library_name(seeded_sqlite_url: str,
                                                            tmp_path: Path) -> None:
    added = run_formdb([
        "--db", seeded_sqlite_url, "ingredient", "add",
        f"Larkspur {EVIL} Ester", "--set", "hlb=12", "--set", "solubility=water",
        "--set", "density=1.0", "--source", "from-memory", "--synonym", f"syn {EVIL}",
        "--role", "emulsifier", "--reason", "escaping test"])
    assert added.exit_code == 0, added.stderr
    path = tmp_path / "evil.toml"
    path.write_text(formula_toml(f"Cream {EVIL}", [
        ("Aqua", 80.0), ("Paraffinum Liquidum", 15.0), (f"syn {EVIL}", 5.0)],
        intended_type="O/W"), encoding="utf-8")
    out = tmp_path / "report.html"
    checked = run_formdb(["--db", seeded_sqlite_url, "check", str(path), "--format", "html",
                          "--out", str(out)])
    assert checked.exit_code in (0, 1), checked.stderr
    html = out.read_text(encoding="utf-8")
    assert EVIL not in html and "script" not in _parse(html).tags
    assert "Cream &lt;script&gt;" in html  # the formula name
    assert "Larkspur &lt;script&gt;" in html  # the INCI name the synonym resolved to
    assert "<svg" in html
