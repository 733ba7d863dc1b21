"""An oil phase the lab has measured: its in-house required HLB replaces the weight average.

A screening series (formdb screen) fits the required HLB of one oil phase, its members in set
shares. A formula whose counted oil phase has the same members in shares within
``MATCH_TOLERANCE`` (absolute, as fractions of the phase) takes the measured value, and the
report says where it came from. The weight average rests on additivity, which was never shown
(Pasquali et al., Int. J. Pharm. 356 (2008) 44); a measurement of the phase itself does not.
"""

from __future__ import annotations

from collections.abc import Sequence

from formdb.facts.phases import line_facts
from formdb.facts.soap import form_soaps
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import MeasuredRequiredHlb, ReferenceData
from formdb.schemas.result import LineFacts, RequiredHlbFacts
from formdb.schemas.vocab import EmulsionType

MATCH_TOLERANCE = 0.02  # two percentage points of the oil phase (rule of thumb)


def oil_phase_shares(formula: ResolvedFormula, lines: Sequence[LineFacts]) -> dict[str, float]:
    """The members counted in the oil phase's required HLB, as fractions of it."""
    by_no = {ln.line_no: ln.inci for ln in formula.lines}
    mass: dict[str, float] = {}
    for lf in lines:
        if lf.required_hlb_member and lf.remaining_percent > 0:
            name = by_no[lf.line_no]
            mass[name] = mass.get(name, 0.0) + lf.remaining_percent
    total = sum(mass.values())
    return {name: m / total for name, m in mass.items()} if total > 0 else {}


def matching(shares: dict[str, float], measured: Sequence[MeasuredRequiredHlb],
             kind: str) -> MeasuredRequiredHlb | None:
    """The newest measurement of the same type whose members and shares match ``shares``."""
    for m in measured:
        theirs = dict(m.oils)
        if m.emulsion_type == kind and set(theirs) == set(shares) and all(
                abs(theirs[name] - share) <= MATCH_TOLERANCE for name, share in shares.items()):
            return m
    return None


def apply_measured(facts: RequiredHlbFacts, formula: ResolvedFormula,
                   lines: Sequence[LineFacts], measured: Sequence[MeasuredRequiredHlb],
                   work: Work) -> RequiredHlbFacts:
    """``facts`` with the measured value when one matches this formula's oil phase."""
    if not measured:
        return facts
    found = matching(oil_phase_shares(formula, lines), measured, facts.emulsion_type.value)
    if found is None:
        return facts
    average = "none" if facts.value is None else f"{facts.value:.2f}"
    work.note(f"required HLB ({found.emulsion_type}) {found.value:.2f} ± {found.uncertainty:.2f} "
              f"is measured in-house for this oil phase (screening series {found.series!r}, "
              f"source {found.source_key}, graded measured); the weight average of the "
              f"library's values would be {average}")
    return facts.model_copy(update={
        "value": found.value, "covered_percent": facts.members_percent, "missing": (),
        "measured_source": found.source_key, "measured_uncertainty": found.uncertainty,
        "low": None, "high": None, "rests_on": ()})


def measurements_taken(formula: ResolvedFormula, reference: ReferenceData
                       ) -> tuple[MeasuredRequiredHlb, ...]:
    """The measurements the check of ``formula`` takes (O/W, then W/O), found as the check
    finds them (its oil phase after soap formation), so a review run can name them among the
    records it used and go stale when a newer one would be taken instead."""
    measured = reference.measured_required_hlb
    if not measured:
        return ()
    work = Work(remaining={ln.line_no: ln.percent for ln in formula.lines})
    form_soaps(formula, reference, work)
    shares = oil_phase_shares(formula, line_facts(formula, work))
    found = (matching(shares, measured, kind.value) for kind in (EmulsionType.OW, EmulsionType.WO))
    return tuple(m for m in found if m is not None)
