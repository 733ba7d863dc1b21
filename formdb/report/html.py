"""The HTML report: one standalone file (inline CSS and SVG, no script, no external assets).

Jinja2 with autoescape on for every template, so each user string (formula name, INCI names,
messages) is escaped wherever it lands, SVG labels included.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime
from functools import lru_cache

from jinja2 import Environment, PackageLoader, StrictUndefined

from formdb import __version__
from formdb.report.cautions import ListSnapshot, cautions
from formdb.report.view import formula_view
from formdb.schemas.result import CheckResult

TEMPLATE = "report.html.j2"


@lru_cache(maxsize=1)
def environment() -> Environment:
    return Environment(loader=PackageLoader("formdb.report", "templates"), autoescape=True,
                       undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                       keep_trailing_newline=True)


def _title(results: Sequence[CheckResult]) -> str:
    if len(results) == 1:
        return f"formdb check: {results[0].formula}"
    return f"formdb check: {len(results)} formulas"


def render_html(results: Sequence[CheckResult], *,
                snapshots: Sequence[ListSnapshot] | None = None, color: bool = False,
                generated: datetime | None = None) -> str:
    """The whole report as one HTML document; ``generated`` fixes the stamp (tests)."""
    stamp = (generated or datetime.now(UTC)).strftime("%Y-%m-%d %H:%M UTC")
    template = environment().get_template(TEMPLATE)
    return template.render(title=_title(results), views=[formula_view(r) for r in results],
                           cautions=cautions(results, snapshots), generated=stamp,
                           version=__version__)
