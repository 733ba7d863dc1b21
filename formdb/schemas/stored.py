"""Formulas stored in the library, and what an import of formula files did."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime


@dataclass(frozen=True)
class StoredFormulaInfo:
    name: str
    version: int
    content_hash: str
    updated_at: datetime
    updated_by: str
    lines: int


@dataclass(frozen=True)
class FormulaImportReport:
    added: list[str]
    changed: list[str]
    unchanged: list[str]
