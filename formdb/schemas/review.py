"""Review runs, their state and signatures as the review service returns them."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from formdb.schemas.result import CheckResult


@dataclass(frozen=True)
class RunSummary:
    run_key: str
    run_hash: str
    formula: str
    verdict: str
    errors: int
    warnings: int
    open_items: int
    records: int
    supersedes: str | None


@dataclass(frozen=True)
class SignatureInfo:
    signer: str
    signed_by: str
    meaning: str
    signed_at: str
    comment: str | None
    run_hash: str


@dataclass
class RunState:
    run_key: str
    run_hash: str
    formula: str
    source: str
    profile: str
    created_at: str
    created_by: str
    state: str = "current"  # current | stale | superseded
    superseded_by: str | None = None
    changes: list[str] = field(default_factory=list)
    signatures: list[SignatureInfo] = field(default_factory=list)


@dataclass(frozen=True)
class FiledRun:
    """What a filed report shows: the stored run, its state now and the stored result."""

    state: RunState
    formula_hash: str
    library_hash: str
    profile_name: str
    profile_version: str
    formdb_version: str
    result: CheckResult
    label: Any  # checking.labelling.LabelDeclaration, or None when it cannot be made
    open_items: list[dict[str, Any]]
    records: list[dict[str, Any]]
