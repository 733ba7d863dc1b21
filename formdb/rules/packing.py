"""PAK01: the dispersed phase's volume fraction against the packing limits of spheres."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity


@register
class Packing(Rule):
    """The dispersed phase fills more volume than spheres can pack into.

    Flags: a dispersed phase whose volume fraction (from the weights and the library's
    densities) is above pi/sqrt(18) = 0.7405, the densest packing of equal spheres. A high
    internal phase emulsion whose emulsifier system clearly gives the working type (the type
    decision is strong and matches) is judged as one: an info on the emulsifier and process it
    needs. Otherwise a warning that it is likely to invert. An info when the fraction is above
    random close packing, about 0.64. Judges emulsions and soap creams only (facts.kind).
    Why: equal spheres cannot fill more than 74 % of space (Kepler's conjecture, proved by
    Hales, Ann. Math. 162 (2005) 1065); randomly packed ones about 64 % (Scott & Kilgour,
    J. Phys. D 2 (1969) 863). Beyond these the drops must be polydisperse or squeezed out of
    shape (a high internal phase emulsion), and the emulsion is prone to invert.
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
        values: dict[str, float | str | None] = {
            "dispersed_fraction": phi, "dispersed_phase": phase,
            "packing_limit": facts.packing_limit, "random_close_packing": options["random_close"]}
        kind = facts.working_type.value if facts.working_type else ""
        decision = facts.type_decision
        designed = (decision is not None and decision.strong
                    and decision.predicted == facts.working_type)
        if phi > facts.packing_limit and designed:
            yield self.finding(
                Severity.INFO,
                f"a high internal phase emulsion ({kind}): the dispersed {phase} phase fills "
                f"{phi:.3f} of the volume, beyond the {facts.packing_limit:.4f} of equal spheres, "
                "so its drops are polydisperse and deformed",
                ingredients=names, values=values,
                advice=(f"it needs an emulsifier system clearly on the {kind.split('/')[-1]} "
                        "side at a generous level (the interface is large), the internal phase "
                        "added slowly under steady shear, and a stability check on storage"))
        elif phi > facts.packing_limit:
            yield self.finding(
                self.default_severity,
                f"the dispersed {phase} phase fills {phi:.3f} of the volume, above the "
                f"{facts.packing_limit:.4f} that equal spheres can pack into ({kind})",
                ingredients=names, values=values,
                advice=("only polydisperse or deformed drops pack this close and inversion "
                        f"becomes likely: reduce the {phase} phase, or design it as a high "
                        "internal phase emulsion with an emulsifier strong enough for it"))
        elif options["random_close_info"] and phi > options["random_close"]:
            yield self.finding(
                Severity.INFO,
                f"the dispersed {phase} phase fills {phi:.3f} of the volume, above random "
                f"close packing ({options['random_close']:g}): the drops touch and deform",
                ingredients=names, values=values,
                advice="expect a stiff, gel-like cream; check stability on storage")
