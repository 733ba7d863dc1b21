"""The demo's run: its library, the checked formulas and the limit lists' dates."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

from formdb.schemas.result import CheckResult


@dataclass
class DemoRun:
    """The demo's library, the checked formulas (file, what it shows, result) and the limit
    lists' dates for the cautions; report.demo renders it."""

    library: Path
    results: list[CheckResult]
    files: list[Path] = field(default_factory=list)
    purposes: list[str] = field(default_factory=list)
    snapshots: list[tuple[str, str, date]] = field(default_factory=list)
    kept: bool = False  # --keep: the library stays; otherwise it is removed when the demo ends
