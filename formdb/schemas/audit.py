"""What `formdb audit verify` found in each hash chain (built by services.audit)."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime


@dataclass(frozen=True)
class ChainProblem:
    table: str
    row_id: int
    kind: str  # altered | removed | inserted | unsealed | broken-link | invalid-signature |
    #            removed-since-anchor | rewritten-since-anchor | unlogged-change
    detail: str


@dataclass
class ChainReport:
    table: str
    rows: int = 0
    head_id: int | None = None
    head_hash: str | None = None
    problems: list[ChainProblem] = field(default_factory=list)
    more_problems: int = 0

    @property
    def intact(self) -> bool:
        return not self.problems


@dataclass(frozen=True)
class AuditReport:
    chains: list[ChainReport]
    anchor: str | None = None  # "FILE (made at ...)" when verified against an anchor
    anchor_problems: list[ChainProblem] = field(default_factory=list)
    anchor_notes: list[str] = field(default_factory=list)  # records changed, logged

    @property
    def intact(self) -> bool:
        return all(c.intact for c in self.chains) and not self.anchor_problems

    @property
    def first_problem(self) -> ChainProblem | None:
        return next((p for c in self.chains for p in c.problems),
                    self.anchor_problems[0] if self.anchor_problems else None)


@dataclass(frozen=True)
class ServerChangeRecord:
    """One statement's change as the PostgreSQL server recorded it (server_change_log)."""

    id: int
    at: datetime
    login: str
    table: str
    operation: str
    rows: int  # rows the statement touched
    old_rows: str | None  # JSON arrays, as stored
    new_rows: str | None
