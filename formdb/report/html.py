"""The HTML report: one standalone file (inline CSS and SVG, no script, no external assets).

Jinja2 with autoescape on for every template, so each user string (formula name, INCI names,
messages) is escaped wherever it lands, SVG labels included.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime
from functools import lru_cache
from typing import Any

from jinja2 import Environment, PackageLoader, StrictUndefined
from markupsafe import Markup

from formdb import __version__
from formdb.report.cautions import ListSnapshot, cautions
from formdb.report.terminal import terminal_safe
from formdb.report.view import formula_view
from formdb.schemas.result import CheckResult

TEMPLATE = "report.html.j2"


def _visible(value: Any) -> Any:
    """Every text a template prints, with control and invisible formatting characters as
    visible ``\\uXXXX`` escapes (``report.terminal``), as on a terminal: a right-to-left
    override in a signer's reason or a zero-width space in a supplier's name would make the
    printed page read other than what is stored. Markup built by formdb is left as it is."""
    return terminal_safe(value) if isinstance(value, str) and not isinstance(value, Markup) \
        else value


@lru_cache(maxsize=1)
def environment() -> Environment:
    return Environment(loader=PackageLoader("formdb.report", "templates"), autoescape=True,
                       undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                       keep_trailing_newline=True, finalize=_visible)


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
