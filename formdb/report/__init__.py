"""Reports of a check: text (rich), JSON (the DESIGN.md contract) and HTML (standalone).

One dispatch table maps a format name to its renderer; every renderer takes the same arguments
and prints the same cautions (``formdb.report.cautions``).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from importlib import import_module
from typing import TYPE_CHECKING

from formdb.errors import ConfigError
from formdb.report.cautions import ListSnapshot

if TYPE_CHECKING:  # the result models are built only by commands that check
    from formdb.schemas.result import CheckResult

# format name -> "module:function"; imported on first use so JSON output does not load jinja2
RENDERERS: dict[str, str] = {
    "text": "formdb.report.text:render_text",
    "json": "formdb.report.json_report:render_json",
    "html": "formdb.report.html:render_html",
}
FORMATS: tuple[str, ...] = tuple(RENDERERS)
SUFFIXES: dict[str, str] = {"text": "txt", "json": "json", "html": "html"}

Renderer = Callable[..., str]

__all__ = ["FORMATS", "RENDERERS", "SUFFIXES", "ListSnapshot", "render", "renderer"]


def renderer(fmt: str) -> Renderer:
    """The renderer of a format; ConfigError naming the formats for an unknown one."""
    target = RENDERERS.get(fmt)
    if target is None:
        raise ConfigError(f"unknown report format {fmt!r}",
                          hint=f"use one of: {', '.join(FORMATS)}")
    module, attr = target.split(":")
    function: Renderer = getattr(import_module(module), attr)
    return function


def render(results: Sequence[CheckResult], fmt: str, *,
           snapshots: Sequence[ListSnapshot] | None = None, color: bool = False) -> str:
    """The report of ``results`` in format ``fmt`` ("text", "json" or "html") as one string.

    ``snapshots``: the limit lists (jurisdiction, list name, date) of the library checked
    against, named in the dated-snapshot caution; ``color``: ANSI colour in the text report.
    """
    return renderer(fmt)(list(results), snapshots=snapshots, color=color)
