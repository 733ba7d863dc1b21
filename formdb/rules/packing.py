"""PAK01: the dispersed phase's volume fraction against the packing limits of spheres."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts, FractionRange
from formdb.schemas.vocab import Severity
from formdb.science.packing import EDGE, above


@register
class Packing(Rule):
    """The dispersed phase fills more volume than spheres can pack into.

    Flags: a dispersed phase whose volume fraction (from the weights and the library's
    densities) is above pi/sqrt(18) = 0.7405, the densest packing of equal spheres. A high
    internal phase emulsion whose emulsifier system clearly gives the working type (the type
    decision is strong and matches) is judged as one: an info on the emulsifier and process it
    needs. Otherwise a warning that it is likely to invert. An info when the fraction is above
    random close packing, about 0.64. A fraction on a limit (within 1e-9, floating-point
    noise) is not above it. Where some densities are estimated (a line without one takes its
    phase's mean), the fraction's range over the usual densities of those lines' roles
    (facts.dispersed_fraction_range) decides: a verdict only when the whole range is on one
    side of each limit, and the verdict names the estimate and the range; a range across a
    limit gives an info marked "lower confidence" with no verdict, naming the densities to add.
    Judges emulsions and soap creams only (facts.kind).
    Why: equal spheres cannot fill more than 74 % of space (Kepler's conjecture, proved by
    Hales, Ann. Math. 162 (2005) 1065); randomly packed ones about 64 % (Scott & Kilgour,
    J. Phys. D 2 (1969) 863). Beyond these the drops must be polydisperse or squeezed out of
    shape (a high internal phase emulsion), and the emulsion is prone to invert. A verdict
    that turns on a guessed density, or on the last digit of a float, is not one to act on.
    Fails: O/W with Paraffinum Liquidum 80, Water 15, Polysorbate 80 5: oil volume fraction
    about 0.82.
    Passes: O/W with Paraffinum Liquidum 20, Water 75, Polysorbate 80 5: about 0.23.
    Options: random_close_info (bool, default true): also report fractions above random close
    packing; random_close (default 0.64): that limit.
    """

    code = "PAK01"
    name = "packing"
    groups = ("emulsion",)
    default_severity = Severity.WARNING
    kinds: ClassVar[frozenset[str] | None] = frozenset({"emulsion", "soap cream"})
    options: ClassVar[dict[str, Option]] = {
        "random_close_info": Option(bool, True, "report fractions above random close packing"),
        "random_close": Option(float, 0.64, "random close packing limit",
                               minimum=0.01, maximum=1),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        phi = facts.dispersed_fraction
        if phi is None or facts.dispersed_phase is None:
            return
        phase = facts.dispersed_phase
        names = [lf.inci for lf in facts.lines if lf.phase == phase and not lf.emulsifier]
        spread = facts.dispersed_fraction_range
        low, high = (spread.low, spread.high) if spread else (phi, phi)
        random_close = options["random_close"] if options["random_close_info"] else None
        verdicts = {_verdict(low, facts.packing_limit, random_close),
                    _verdict(high, facts.packing_limit, random_close)}
        values: dict[str, float | str | None] = {
            "dispersed_fraction": phi, "dispersed_phase": phase,
            "packing_limit": facts.packing_limit, "random_close_packing": options["random_close"]}
        rests = ""
        if spread is not None:
            values |= {"dispersed_fraction_low": low, "dispersed_fraction_high": high,
                       "dispersed_estimated_share": spread.dispersed_estimated_share}
            rests = f" ({_estimated(spread)}: between {low:.3f} and {high:.3f}, above either way)"
        if len(verdicts) > 1:
            yield self._undecided(phase, phi, low, high, spread, names, values, random_close,
                                  facts)
            return
        verdict = verdicts.pop()
        kind = facts.working_type.value if facts.working_type else ""
        decision = facts.type_decision
        designed = (decision is not None and decision.strong
                    and decision.predicted == facts.working_type)
        if verdict == "close" and designed:
            yield self.finding(
                Severity.INFO,
                f"a high internal phase emulsion ({kind}): the dispersed {phase} phase fills "
                f"{phi:.3f} of the volume, beyond the {facts.packing_limit:.4f} of equal spheres"
                f"{rests}, so its drops are polydisperse and deformed",
                ingredients=names, values=values,
                advice=(f"it needs an emulsifier system clearly on the {kind.split('/')[-1]} "
                        "side at a generous level (the interface is large), the internal phase "
                        "added slowly under steady shear, and a stability check on storage"))
        elif verdict == "close":
            yield self.finding(
                self.default_severity,
                f"the dispersed {phase} phase fills {phi:.3f} of the volume, above the "
                f"{facts.packing_limit:.4f} that equal spheres can pack into ({kind}){rests}",
                ingredients=names, values=values,
                advice=("only polydisperse or deformed drops pack this close and inversion "
                        f"becomes likely: reduce the {phase} phase, or design it as a high "
                        "internal phase emulsion with an emulsifier strong enough for it"))
        elif verdict == "random":
            yield self.finding(
                Severity.INFO,
                f"the dispersed {phase} phase fills {phi:.3f} of the volume, above random "
                f"close packing ({options['random_close']:g}){rests}: the drops touch and "
                "deform",
                ingredients=names, values=values,
                advice="expect a stiff, gel-like cream; check stability on storage")

    def _undecided(self, phase: str, phi: float, low: float, high: float,
                   spread: FractionRange | None, names: list[str],
                   values: dict[str, float | str | None], random_close: float | None,
                   facts: FormulaFacts) -> Finding:
        """The estimated densities leave the fraction on both sides of a limit: a note that
        says so, never a verdict either way."""
        assert spread is not None  # a range without estimates has one verdict
        limits = [f"{facts.packing_limit:.4f} of equal spheres"] if (
            low <= facts.packing_limit + EDGE < high) else []
        if random_close is not None and low <= random_close + EDGE < high:
            limits.append(f"random close packing ({random_close:g})")
        return self.finding(
            Severity.INFO,
            f"lower confidence: the dispersed {phase} phase fills about {phi:.3f} of the "
            f"volume, but {_estimated(spread)}: between {low:.3f} and {high:.3f}, on both "
            f"sides of {' and '.join(limits)}; no packing verdict",
            ingredients=[*names, *(n for n in spread.estimated if n not in names)],
            values=values,
            advice=("add the missing densities to the library (formdb ingredient edit), "
                    f"then check again: {', '.join(spread.estimated)}"))


def _verdict(fraction: float, close: float, random_close: float | None) -> str:
    """Which packing limit a fraction is above ("close", "random") or "below" both; a fraction
    on a limit (within floating-point noise) is not above it."""
    if above(fraction, close):
        return "close"
    if random_close is not None and above(fraction, random_close):
        return "random"
    return "below"


def _estimated(spread: FractionRange) -> str:
    share = spread.dispersed_estimated_share
    where = (f"{share:.0%} of the dispersed phase's mass has no library density"
             if share > 0 else "the continuous phase has lines without a library density")
    return (f"{where} ({', '.join(spread.estimated)}: estimated at its phase's mean, and anywhere "
            "in the usual density of its roles for the range)")
