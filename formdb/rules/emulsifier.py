"""EMU01: oil and water together with nothing to emulsify them."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity


def absorption_bases(formula: ResolvedFormula, facts: FormulaFacts
                     ) -> list[tuple[str, float, float]]:
    """(name, % left in the formula, water number) of each line that takes up water as a W/O
    emulsion on its own (wool fat): an absorption base."""
    left = {lf.line_no: lf.remaining_percent for lf in facts.lines}
    return [(ln.ingredient.inci_name, left[ln.line_no], ln.ingredient.p.water_number)
            for ln in formula.lines
            if ln.ingredient.p.water_number is not None and left[ln.line_no] > 0]


@register
class NoEmulsifier(Rule):
    """Oil and water phases are both present but there is no emulsifier at all.

    Flags: a formula with an oil phase and a water phase and no emulsifier: no line with the
    emulsifier role and no soap formed in the batch from a fatty acid and a base. Judges
    emulsions only (facts.kind): an oil content below the trace threshold ([facts]
    trace_phase_percent, 1 %: a perfume or preservative dissolved in water) makes no oil phase,
    and an anhydrous product has no water phase.
    Why: without an emulsifier the interface created by mixing is not held; the drops coalesce
    and the phases separate within hours. Co-emulsifiers (fatty alcohols, glyceryl stearate)
    thicken and stabilise a film but do not emulsify on their own. A soap made in place
    (stearic acid with triethanolamine) does count. An absorption base (wool fat) takes up water
    as a W/O emulsion by itself, up to its water number (grams of water per 100 g; wool fat
    about 80, CAMEO's entry after Gettens and Stout): within it, an info (hydrous wool fat, 70
    wool fat with 30 water); beyond it, the error, naming what it holds.
    Fails: Water 75, Paraffinum Liquidum 20, Cetyl Alcohol 5.
    Passes: Water 78, Stearic Acid 18, Triethanolamine 1.2, Glycerin 2.8 (triethanolamine
    stearate forms in the batch).
    Options: none.
    """

    code = "EMU01"
    name = "no-emulsifier"
    groups = ("emulsion",)
    default_severity = Severity.ERROR
    kinds: ClassVar[frozenset[str] | None] = frozenset({"emulsion"})

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        if not reads_water_numbers(facts):
            return
        phases = facts.phases
        oils = [lf.inci for lf in facts.lines if lf.phase == "oil"]
        bases = absorption_bases(formula, facts)
        holds = sum(percent * number / 100.0 for _, percent, number in bases)
        named = ", ".join(f"{name} (water number {number:g})" for name, _, number in bases)
        if bases and phases.water_percent <= holds + 1e-9:
            yield self.finding(
                Severity.INFO,
                f"no emulsifier, but {named} takes up water as a W/O emulsion: "
                f"{phases.water_percent:.4g} % water phase within the {holds:.3g} % it holds",
                ingredients=[name for name, _, _ in bases],
                values={"oil_percent": phases.oil_percent,
                        "water_percent": phases.water_percent, "water_held_percent": holds},
                advice="an absorption base (a W/O emulsion of its own); confirm the water "
                       "stays taken up on storage")
            return
        co = list(facts.co_emulsifiers)
        verb = "is a co-emulsifier" if len(co) == 1 else "are co-emulsifiers"
        extra = f"; {', '.join(co)} {verb} and cannot emulsify alone" if co else ""
        if bases:
            extra += (f"; {named} holds only {holds:.3g} % water as a W/O emulsion, not the "
                      f"{phases.water_percent:.4g} %")
        yield self.finding(
            self.default_severity,
            f"{phases.oil_percent:.4g} % oil phase and {phases.water_percent:.4g} % water phase "
            f"with no emulsifier{extra}",
            ingredients=oils,
            values={"oil_percent": phases.oil_percent, "water_percent": phases.water_percent,
                    "emulsifier_percent": 0.0},
            advice="add an emulsifier system matched to the oil phase's required HLB "
                   "(`formdb blend`), or a fatty acid with a base to form a soap in the batch")


def reads_water_numbers(facts: FormulaFacts) -> bool:
    """EMU01 judges (and weighs absorption bases' water numbers for) only an emulsion with oil
    and water and no emulsifier."""
    phases = facts.phases
    return (NoEmulsifier().applies_to(facts) and not facts.emulsifiers
            and phases.oil_percent > 0 and phases.water_percent > 0)
