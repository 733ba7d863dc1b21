"""Review runs, their state and signatures as the review service returns them."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from formdb.schemas.result import CheckResult


@dataclass(frozen=True)
class Policy:
    """The review policy in force: the signable profile by content hash, the role each meaning
    needs, whether an author may approve their own run, and who set it when."""

    profile_name: str
    profile_version: str
    profile_hash: str
    profile_origin: str
    roles: dict[str, str]
    author_may_approve: bool
    set_at: str
    set_by: str
    policy_hash: str


@dataclass(frozen=True)
class KeyInfo:
    """An enrolled signing key (or its revocation) as ``formdb key list`` shows it."""

    key_id: str
    login: str
    printed_name: str
    public_key: str
    enrolled_at: str
    enrolled_by: str
    revoked_at: str | None = None
    revoked_by: str | None = None
    reason: str | None = None


@dataclass(frozen=True)
class NewKey:
    """A key pair just made: where the private key went, and the public key to enrol."""

    private_path: str
    public_path: str
    public_key: str
    key_id: str


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
    signable: bool = True
    profile: str = ""
    profile_hash: str = ""
    profile_origin: str = ""
    policy_profile: str = ""


@dataclass(frozen=True)
class SignatureInfo:
    signer: str
    signed_by: str
    meaning: str
    signed_at: str
    comment: str | None
    run_hash: str
    number: int = 0
    key_id: str | None = None
    waivers: list[dict[str, Any]] = field(default_factory=list)
    check: str = "valid"  # valid, or "INVALID: why"
    superseded_by: int | None = None  # a later signature by the same person
    supersedes: int | None = None  # on a new signature: the signer's earlier one it replaces

    @property
    def valid(self) -> bool:
        return self.check == "valid"


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
    kind: str = "signable"  # signable | draft | legacy (before the review policy)
    profile_hash: str | None = None
    profile_origin: str | None = None
    broken: list[str] = field(default_factory=list)  # why the stored record does not verify

    @property
    def verified(self) -> bool:
        """The run's record and every signature on it verify."""
        return not self.broken and all(s.valid for s in self.signatures)


@dataclass(frozen=True)
class ReviewStatus:
    """``formdb review status``: every run, verified; problems in the chains it reads (review
    runs and signatures, enrolled keys, policy); and the policy in force."""

    runs: list[RunState]
    problems: list[str]
    policy: Policy

    @property
    def verified(self) -> bool:
        return not self.problems and all(r.verified for r in self.runs)


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
    policy: dict[str, Any] | None = None
    heads: list[tuple[str, int | None, str | None, bool]] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)  # in the chains the report read

    @property
    def verified(self) -> bool:
        """The run, its signatures and every chain the report read verify."""
        return not self.problems and self.state.verified
