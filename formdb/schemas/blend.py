"""Blend plans and pair searches: what `formdb blend` answers (built by services.blending)."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class BlendMember:
    """One emulsifier of a blend: its HLB with provenance and its share."""

    inci: str
    hlb: float
    hlb_source: str  # source key and evidence, e.g. "pmc4137601 (published)"
    fraction: float
    percent: float | None = None  # % w/w of the formula at the total, when a total is known
    present_percent: float | None = None  # what the formula has now (FILE mode)
    formed_in_place: bool = False
    hlb_citation: str | None = None  # the source's full citation


@dataclass(frozen=True)
class BlendPlan:
    target: float
    target_from: str
    members: tuple[BlendMember, ...]
    method: str
    blend_hlb: float  # the blend HLB of the answer (equals the target: a check)
    reachable_low: float
    reachable_high: float
    total_percent: float | None = None
    formula: str | None = None
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class PairCandidate:
    low: BlendMember  # the lower-HLB member
    high: BlendMember
    complementary: bool
    distance: float
    gaps: tuple[str, ...]
    proportion_ok: bool = True  # the minor member has a sensible share of the blend
    spread_ok: bool = True  # the two HLBs lie far enough apart for the ratio to tune the blend
    clashes: tuple[str, ...] = ()  # incompatibilities with the formula's own ingredients
    reasons: tuple[str, ...] = ()  # why the pair ranks where it does, in words

    @property
    def rank_key(self) -> tuple[bool, bool, bool, bool, float, int, str, str]:
        return (bool(self.clashes), not self.complementary, not self.proportion_ok,
                not self.spread_ok, round(self.distance, 9), len(self.gaps),
                self.low.inci, self.high.inci)


@dataclass(frozen=True)
class PairSearch:
    target: float
    target_from: str
    total_percent: float
    candidates: tuple[PairCandidate, ...]  # the best first, at most ``limit``
    found: int  # every pair that passed
    considered: int  # pairs whose HLBs bracket the target
    excluded_incompatible: int
    excluded_use_range: int
    emulsifiers: int
    formula: str | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)
    emulsion_type: str | None = None  # the side the candidates must suit (O/W or W/O)
    excluded_kinds: tuple[str, ...] = ()  # emulsifiers left out as candidates, with why
