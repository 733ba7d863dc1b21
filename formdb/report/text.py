"""The text report: rich tables rendered to a string, 100 columns, colour only when asked.

User strings (formula names, INCI names, messages) go in as ``Text`` objects, never as console
markup, so a name such as ``[bold]`` prints as written.
"""

from __future__ import annotations

from collections.abc import Sequence

from rich import box
from rich.console import Console, Group, RenderableType
from rich.padding import Padding
from rich.panel import Panel
from rich.rule import Rule
from rich.table import Table
from rich.text import Text

from formdb.report.blocks import Block, Lines, Notes, Section
from formdb.report.blocks import Table as TableBlock
from formdb.report.cautions import ListSnapshot, cautions
from formdb.report.safe_table import data_console
from formdb.report.terminal import safe_fields, terminal_safe
from formdb.report.view import FindingGroup, FormulaView, formula_view
from formdb.schemas.result import CheckResult

WIDTH = 100
FLAG_STYLES = {"ok": "green", "warn": "yellow", "bad": "bold red", "": ""}
FLAG_MARKS = {"ok": "", "warn": "  [check]", "bad": "  [problem]", "": ""}
SEVERITY_STYLES = {"error": "bold red", "warning": "yellow", "info": "cyan"}


def _console(color: bool) -> Console:
    return data_console(WIDTH, color=color)


def _lines(block: Lines) -> RenderableType:
    grid = Table.grid(padding=(0, 2))
    grid.add_column(no_wrap=True, style="bold")
    grid.add_column(ratio=1, overflow="fold")
    for line in block.items:
        grid.add_row(Text(line.label), Text(line.value + FLAG_MARKS[line.flag],
                                            style=FLAG_STYLES[line.flag]))
    return grid


def _table(block: TableBlock) -> RenderableType:
    table = Table(box=box.SIMPLE_HEAD, title=Text(block.title, style="bold") if block.title
                  else None, title_justify="left", show_edge=False, pad_edge=False)
    for header, numeric in zip(block.headers, block.numeric, strict=True):
        table.add_column(Text(header), justify="right" if numeric else "left",
                         overflow="fold")
    for row in block.rows:
        table.add_row(*(Text(cell) for cell in row))
    return table


def _notes(block: Notes) -> RenderableType:
    parts: list[RenderableType] = [Text(block.title, style="bold")] if block.title else []
    grid = Table.grid(padding=(0, 1))
    grid.add_column(no_wrap=True)
    grid.add_column(ratio=1, overflow="fold")
    for item in block.items:
        grid.add_row(Text("-"), Text(item))
    parts.append(grid)
    return Group(*parts)


RENDER_BLOCK = {"lines": _lines, "table": _table, "notes": _notes}


def _block(block: Block) -> RenderableType:
    rendered: RenderableType = RENDER_BLOCK[block.kind](block)  # type: ignore[operator]
    return rendered


def _section(section: Section) -> RenderableType:
    body = [_block(b) for b in section.blocks]
    return Group(Text(section.title.upper(), style="bold underline"),
                 Padding(Group(*body), (0, 0, 1, 2)))


def _findings(groups: tuple[FindingGroup, ...]) -> RenderableType:
    if not groups:
        return Group(Text("FINDINGS", style="bold underline"),
                     Padding(Text("No findings."), (0, 0, 1, 2)))
    parts: list[RenderableType] = [Text("FINDINGS", style="bold underline")]
    for group in groups:
        grid = Table.grid(padding=(0, 2))
        grid.add_column(no_wrap=True, style=SEVERITY_STYLES[group.severity])
        grid.add_column(ratio=1, overflow="fold")
        for item in group.items:
            grid.add_row(Text(item.code), Text(f"{item.name}: {item.message}"))
            if item.ingredients:
                grid.add_row(Text(""), Text(f"Ingredients: {item.ingredients}"))
            if item.advice:
                grid.add_row(Text(""), Text(f"What to do: {item.advice}"))
        parts.append(Padding(Group(Text(group.title, style=SEVERITY_STYLES[group.severity]),
                                   Padding(grid, (0, 0, 1, 2))), (0, 0, 0, 2)))
    return Group(*parts)


def _header(view: FormulaView) -> RenderableType:
    grid = Table.grid(padding=(0, 2))
    grid.add_column(no_wrap=True, style="bold")
    grid.add_column(ratio=1, overflow="fold")
    for line in view.header:
        grid.add_row(Text(line.label), Text(line.value))
    grid.add_row(Text("Findings"), Text(view.verdict, style=FLAG_STYLES[view.verdict_flag]))
    return Group(Rule(style="bold"), Text(view.title, style="bold"), grid, Text(""))


def formula_renderable(view: FormulaView) -> RenderableType:
    return Group(_header(view), *(_section(s) for s in view.sections), _findings(view.findings))


def cautions_renderable(items: Sequence[str]) -> RenderableType:
    grid = Table.grid(padding=(0, 1))
    grid.add_column(no_wrap=True)
    grid.add_column(ratio=1, overflow="fold")
    for number, item in enumerate(items, start=1):
        grid.add_row(Text(f"{number}."), Text(item))
    return Panel(grid, title=Text("Cautions", style="bold"), title_align="left",
                 box=box.ASCII, border_style="yellow")


def render_text(results: Sequence[CheckResult], *,
                snapshots: Sequence[ListSnapshot] | None = None, color: bool = False) -> str:
    """The text report of every result, then the cautions once."""
    console = _console(color)
    for result in results:
        view = formula_view(result)
        # escaped before the layout: Rich would drop some control characters and lay out the
        # others unescaped (report.safe_table); coloured output bypasses the terminal filter
        console.print(formula_renderable(safe_fields(view)))
    notes = cautions(results, snapshots)
    console.print(cautions_renderable([terminal_safe(n) for n in notes]))
    output = console.file.getvalue()  # type: ignore[attr-defined]
    return "\n".join(line.rstrip() for line in output.splitlines()) + "\n"
