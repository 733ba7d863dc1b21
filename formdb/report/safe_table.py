"""A Rich table for the library's own text (imported when a table is drawn, not at start-up).

Rich lays a cell out from its characters and silently drops some control characters (BEL,
backspace, vertical tab, form feed, carriage return); the terminal filter escapes the others
only after the layout, so the row runs past its border. Cells are escaped first
(``terminal_safe``): every character comes out, visible, and the table stays square.
"""

from __future__ import annotations

from io import StringIO
from typing import Any

from rich.console import Console
from rich.table import Column, Table

from formdb.report.terminal import terminal_safe


def data_console(width: int, *, color: bool = False) -> Console:
    """A console into a string that prints the library's and the user's text as written: no
    Rich markup, emoji codes or highlighting are read in it ("[bold]", ":warning:" stay as
    typed); styles only where formdb sets them, and only with ``color``."""
    return Console(file=StringIO(), width=width, color_system="standard" if color else None,
                   force_terminal=color, no_color=not color, highlight=False, emoji=False,
                   markup=False, legacy_windows=False, soft_wrap=False)


class SafeTable(Table):
    """A table whose text cells are ``terminal_safe`` and whose columns fold a word too long
    for them onto the next line (Rich's default would cut it short with an ellipsis)."""

    def __init__(self, *headers: str) -> None:
        super().__init__(*(Column(header, overflow="fold") for header in headers))

    def add_row(self, *cells: Any, **options: Any) -> None:
        super().add_row(*(terminal_safe(c) if isinstance(c, str) else c for c in cells),
                        **options)
