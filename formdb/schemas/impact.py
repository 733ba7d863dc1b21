"""What a library change does to stored formulas and signed review runs (services.impact)."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime


@dataclass(frozen=True)
class FindingKey:
    """A finding as compared: what it says, not where it sits in the list."""

    rule: str
    severity: str
    message: str


@dataclass(frozen=True)
class FormulaImpact:
    formula: str
    via: tuple[str, ...]  # the lines that bring the ingredient in
    compared_with: str
    verdict_before: str | None  # None: nothing to compare with
    verdict_now: str
    added: tuple[FindingKey, ...] = ()
    gone: tuple[FindingKey, ...] = ()

    @property
    def verdict_changed(self) -> bool:
        return self.verdict_before is not None and self.verdict_before != self.verdict_now

    @property
    def changed(self) -> bool:
        return self.verdict_changed or bool(self.added or self.gone)


@dataclass(frozen=True)
class StaleRun:
    run_key: str
    formula: str
    used_version: int
    current_version: int
    signatures: tuple[str, ...]  # "meaning by signer at time"
    superseded: bool


@dataclass(frozen=True)
class LibraryChange:
    version: int
    at: datetime
    user: str
    fields: tuple[str, ...]  # "field: old -> new"


@dataclass
class ImpactReport:
    ingredient: str
    version: int
    baseline_version: int | None
    change: LibraryChange | None
    formulas: list[FormulaImpact] = field(default_factory=list)
    stale_runs: list[StaleRun] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def changed(self) -> list[FormulaImpact]:
        return [f for f in self.formulas if f.changed]
