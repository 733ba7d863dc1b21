"""ALK01 and ALK02: acid-base chemistry a formulator checks by hand (free alkali, high pH)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.limits import JURISDICTION, PhCondition, legal_ph_limits, ph_conditions, ph_range
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts, FreeBaseFacts
from formdb.schemas.vocab import Category, Severity

# rule of thumb where no list entry limits the pH: skin tolerates a leave-on product up to about
# pH 11 at most (the figure Annex III/15a of Regulation (EC) No 1223/2009 sets for sodium and
# potassium hydroxide as pH adjusters in other uses, recalled from memory; for those two bases
# the entry itself applies, through LIM01 on the seed's rows or LIM03 on an imported Annex III)
LEAVE_ON_PH_MAX = 11.0
# a stated pH this far below the low end of what the free base gives is called out (rule of
# thumb: the range already reaches half a unit below the ideal value)
STATED_PH_SLACK = 1.0


@register
class FreeAlkali(Rule):
    """A strong base is left free in the batch.

    Flags: sodium or potassium hydroxide (an alkali-metal hydroxide: one cation charge, one water
    per equivalent) left over after the soaps form and the other acids take their share, or
    with no acid to take it at all. The finding states the free amount (% w/w), its
    concentration in the water phase and the pH to expect from it (14 + log10[OH-] at 25 degC,
    the ideal value, and half a unit below for activity and buffers). Other acids take the base
    up first by their acid value (mg KOH/g: carbomer in a gel, citric acid), so a base they can
    take is not flagged. A warning; an info when an acid with no acid value in the library is
    present that may take some of it up (the free amount is then an upper bound). A stated pH
    more than 1 below the low end of that range is named as one that cannot hold. Where a list
    entry sets a pH condition on the base (EU Annex III/15a for sodium and potassium hydroxide:
    "(d) Other uses as pH adjuster", "up to pH 11"; a seed row or an imported export), the
    finding cites the entry, its pH range and its words as the library holds them, when the
    stated pH cannot hold (the entry was judged on it) or the free base's pH is beyond it.
    Why: a soap batch is made with the base a little short of the acid so no alkali is left;
    free alkali in a leave-on product irritates skin and eyes and saponifies esters on storage.
    Stoichiometry as in formdb.science.soap; pH from Kw = 1.0e-14 at 25 degC (any physical
    chemistry text).
    Fails: Stearic Acid 15, Sodium Hydroxide 2.5, Water 82.5: 15/284.48 = 0.0527 mol acid takes
    2.11 g of NaOH, 0.39 % is left free, about 0.12 mol/L, pH about 12.6-13.1.
    Passes: Stearic Acid 15, Sodium Hydroxide 0.5, Water 84.5 (the acid in excess: no free
    base); Carbomer 0.5, Sodium Hydroxide 0.2, Water 99.3 (a gel: 0.5 g carbomer of acid value
    779 mg KOH/g takes up to 0.28 g NaOH, so all 0.2 g).
    Options: jurisdiction (default "EU"): whose list entries are cited.
    """

    code = "ALK01"
    name = "free-alkali"
    groups = ("chemistry",)
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Option]] = {"jurisdiction": JURISDICTION}

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        conditions = ph_conditions(formula, reference, options["jurisdiction"]) \
            if facts.free_bases else []
        for base in facts.free_bases:
            where = ("left over after the soap formed" if base.after_soap
                     else "with no acid to take it" if not base.taken_by else "left over")
            ph = (f"; in the {base.water_phase_percent:.4g} % water phase that is "
                  f"{base.molar_concentration:.3g} mol/L, pH about {base.ph_low:.1f} to "
                  f"{base.ph_high:.1f}" if base.molar_concentration is not None
                  and base.ph_low is not None and base.ph_high is not None else "")
            severity = Severity.INFO if base.acids_present else self.default_severity
            after = (f" after {', '.join(base.taken_by)} took what their acid value allows"
                     if base.taken_by else "")
            taken = (f"; {', '.join(base.acids_present)} may take some of it up (no acid value "
                     "in the library, so this is an upper bound)"
                     if base.acids_present else "")
            stated = formula.formula.ph
            clashes = (stated is not None and base.ph_low is not None and not base.acids_present
                       and base.ph_low > stated + STATED_PH_SLACK)
            clash = (f"; the stated pH {stated:g} cannot hold with this free base"
                     if clashes else "")
            cited = _cited(base, conditions, clashes)
            values: dict[str, float | str | None] = {
                "free_percent": base.free_percent, "ph_low": base.ph_low,
                "ph_high": base.ph_high, "hydroxide_mol_l": base.molar_concentration}
            if cited:
                values |= {"entry": "; ".join(c.where for c in cited),
                           "entry_ph_max": min(c.ph_max for c in cited if c.ph_max is not None),
                           "entry_words": " | ".join(c.words for c in cited if c.words)}
            yield self.finding(
                severity,
                f"{base.base} {base.free_percent:.3g} % is free, {where}{after}{ph}{taken}{clash}"
                + "".join(_entry_words(base, c, bool(base.acids_present)) for c in cited),
                ingredients=[base.base], values=values,
                advice=("reduce the base to what the acid takes (or add acid), then measure the "
                        "pH of the batch; "
                        + ("; ".join(_entry_advice(c) for c in cited) if cited else
                           "a leave-on product above pH 11 is not acceptable (rule of thumb)")))


def _cited(base: FreeBaseFacts, conditions: list[PhCondition],
           clashes: bool) -> list[PhCondition]:
    """The list entries' pH conditions a free base's finding rests on: every one on the base when
    the stated pH (which LIM01/LIM03 judge) cannot hold, else those its pH would break."""
    mine = [c for c in conditions if name_key(base.base) in c.substances]
    if clashes:
        return mine
    return [c for c in mine if base.ph_low is not None and (
        (c.ph_max is not None and base.ph_low > c.ph_max + 1e-9)
        or (c.ph_min is not None and base.ph_high is not None
            and base.ph_high < c.ph_min - 1e-9))]


def _entry_words(base: FreeBaseFacts, cond: PhCondition, upper_bound: bool) -> str:
    """The entry, its condition in the words the library holds, and the free base against it."""
    may = " (its scope may apply: the formula does not say enough)" if cond.applies is None \
        else ""
    said = f" ({cond.words})" if cond.words and not cond.seed_row else ""
    over = base.ph_low is not None and cond.ph_max is not None and base.ph_low > cond.ph_max
    verdict = (f": the free base's pH, {base.ph_low:.1f} at the least, "
               f"{'could be' if upper_bound else 'is'} above it" if over else "")
    return f"; {cond.where}{may} sets {ph_range(cond)}{said}{verdict}"


def _entry_advice(cond: PhCondition) -> str:
    text = f"{cond.where} sets {ph_range(cond)}"
    if cond.seed_row and cond.words:
        text += f" (the seed's row: {cond.words})"
    return text


@register
class LeaveOnPh(Rule):
    """A leave-on product whose stated pH is above the rule-of-thumb maximum.

    Flags: a leave-on formula with a stated pH above max_ph (default 11), where no list entry
    limits the pH for one of its substances.
    Why: skin's surface is acid (about pH 4.5-5.5) and a leave-on product far above it
    irritates. The maximum of 11 is a rule of thumb. Where a list entry sets the pH (Annex III/15a
    of Regulation (EC) No 1223/2009: sodium and potassium hydroxide as pH adjusters up to pH 11,
    from memory in the seed's row, or as imported) the entry is the law and LIM01/LIM03 name it,
    so this rule stays quiet. Rinse-off products (soaps, depilatories) are not judged here.
    Fails: leave-on, pH 11.5, Water 99.5, Triethanolamine 0.5.
    Passes: leave-on, pH 5.5; rinse-off at pH 10; leave-on pH 12.8 with Sodium Hydroxide (LIM01
    reports III/15a).
    Options: max_ph (default 11.0).
    """

    code = "ALK02"
    name = "leave-on-ph"
    groups = ("chemistry",)
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Option]] = {
        "max_ph": Option(float, LEAVE_ON_PH_MAX, "highest pH of a leave-on product", minimum=0,
                         maximum=14),
        "jurisdiction": JURISDICTION,
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        body = formula.formula
        limit = options["max_ph"]
        if body.category != Category.LEAVE_ON or body.ph is None or body.ph <= limit + 1e-9:
            return
        if legal_ph_limits(formula, reference, options["jurisdiction"]):
            return  # the entry is the law: LIM01 (seed rows) or LIM03 (imported) name it
        bases = [b.base for b in facts.free_bases]
        yield self.finding(
            self.default_severity,
            f"stated pH {body.ph:g} is above {limit:g} for a leave-on product (rule of thumb "
            "until the regulatory lists give the legal limit)",
            ingredients=bases, values={"ph": body.ph, "max_ph": limit},
            advice="bring the pH down with less base or an acid, or treat the product as "
                   "rinse-off if that is what it is")
