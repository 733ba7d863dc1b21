"""Text that reaches a terminal carries no control sequences from the data.

A name, a reason or a formula title holding ESC sequences could recolour, clear or retitle the
reader's terminal, or hide text; bidirectional overrides and zero-width characters make it show
something other than what is stored. Every such character is written as a visible ``\\uXXXX``
escape instead: readable on a terminal, and inside a JSON string the same escape JSON itself
uses, so JSON output still parses to the stored text.
"""

from __future__ import annotations

import dataclasses
import io
import re
from typing import IO, Any

# C0 controls but tab and newline, DEL, C1 controls, and the invisible format characters (soft
# hyphen, Arabic letter mark, zero-width space/joiners, directional marks, line/paragraph
# separators, bidi embeddings, overrides and isolates, word joiner and invisible operators,
# byte-order mark, interlinear annotation, tags)
_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u00ad\u061c\u180e\u200b-\u200f\u2028-\u202e"
                     "\u2060-\u206f\ufeff\ufff9-\ufffb\U000e0000-\U000e007f]")


def terminal_safe(text: str) -> str:
    """``text`` with every control or invisible formatting character as a ``\\uXXXX`` escape."""
    return _UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


def one_line(text: str) -> str:
    """A message as one line: a line break inside it (from the data it quotes) shown as
    ``\\n`` or ``\\r``, so one problem is one line that a script can read."""
    return text.replace("\r", "\\r").replace("\n", "\\n")


class SafeOutput(io.TextIOBase):
    """A text stream that passes everything through ``terminal_safe``; ``raw`` is the stream
    under it, for the one output that colours itself from sanitised data (``check`` on a
    terminal)."""

    def __init__(self, raw: IO[str]) -> None:
        super().__init__()
        self.raw = raw

    def write(self, text: str) -> int:
        self.raw.write(terminal_safe(text))
        return len(text)

    def flush(self) -> None:
        self.raw.flush()

    def isatty(self) -> bool:
        return self.raw.isatty()

    def writable(self) -> bool:
        return True

    def fileno(self) -> int:
        return self.raw.fileno()

    @property
    def encoding(self) -> str:  # type: ignore[override]
        return str(getattr(self.raw, "encoding", None) or "utf-8")

    @property
    def errors(self) -> str | None:  # type: ignore[override]
        return getattr(self.raw, "errors", None)

    def __getattr__(self, name: str) -> Any:
        return getattr(self.raw, name)


def safe_fields(value: Any) -> Any:
    """A view record (dataclasses, tuples, lists and text) with ``terminal_safe`` text: for the
    coloured report, which must escape the data before the colours are added."""
    if isinstance(value, str):
        return terminal_safe(value)
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return dataclasses.replace(value, **{f.name: safe_fields(getattr(value, f.name))
                                             for f in dataclasses.fields(value) if f.init})
    if isinstance(value, tuple | list):
        return type(value)(safe_fields(v) for v in value)
    return value


def raw_stdout(stream: IO[str]) -> IO[str]:
    """The stream under a SafeOutput (or the stream itself)."""
    return stream.raw if isinstance(stream, SafeOutput) else stream
