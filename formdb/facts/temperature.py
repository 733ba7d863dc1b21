"""Temperature in the type: Salager's HLD at the process temperature, and the phase inversion
temperature (PIT) of an ethoxylated nonionic system.

The HLB ignores temperature; an ethoxylated emulsifier turns lipophilic as it warms, so an O/W
made hot can be W/O at the temperature of making (science.md section 6). The HLD needs the oil
phase's EACN, the surfactants' Cc and the salinity; where the library lacks any of them the fact
says "not enough data" and which lines lack what. Ionic-nonionic mixtures, soaps formed in the
batch and amphoterics are not worked out (their mixing needs the normalised HLDN of Salager et
al., Cosmetics 7 (2020) 57). Only sodium chloride counts in the salinity (the constants are
fitted to it). Mixing rules are linear by weight (science.md section 6, from memory). Fatty
alcohols and other co-emulsifiers are left out of the oil's EACN: they act at the interface (the
f(A) term), which is not modelled.
"""

from __future__ import annotations

from formdb.facts.phases import is_co_emulsifier_only
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import name_key
from formdb.schemas.result import EmulsifierFacts, HldFacts, LineFacts
from formdb.schemas.vocab import IonicCharacter
from formdb.science.hld import hld_ionic, hld_nonionic, hld_type, linear_mix, pit_nonionic

SODIUM_CHLORIDE = name_key("Sodium Chloride")
IONIC = frozenset({IonicCharacter.ANIONIC, IonicCharacter.CATIONIC})


def _not_enough(reason: str, temperature: float, source: str,
                missing: tuple[str, ...] = ()) -> HldFacts:
    return HldFacts(status="not enough data", reason=reason, temperature_c=temperature,
                    temperature_from=source, missing=missing)


def hld_facts(formula: ResolvedFormula, lines: list[LineFacts],
              emulsifiers: list[EmulsifierFacts], work: Work) -> HldFacts:
    """The HLD fact of one formula (pure: the resolved formula and the facts so far)."""
    process = formula.formula.process.emulsifying_temperature_c()
    temperature = 25.0 if process is None else process
    source = ("no process temperature given: room temperature assumed" if process is None
              else "process temperature" if formula.formula.process.temperature_c is not None
              else "the process step that joins the phases")
    by_no = {ln.line_no: ln.ingredient for ln in formula.lines}
    members = [e for e in emulsifiers if e.percent > 0]
    if not members:
        return _not_enough("no emulsifier", temperature, source)
    if any(e.formed_in_place or e.line_no is None for e in members):
        return _not_enough("a soap formed in the batch has no Cc in the library", temperature,
                           source)
    characters = {by_no[e.line_no].p.ionic_character for e in members if e.line_no}
    if characters <= {IonicCharacter.NONIONIC}:
        form = "nonionic"
    elif characters <= IONIC:
        form = "ionic"
    else:
        return _not_enough("the emulsifiers mix ionic characters (or one is not recorded); "
                           "their HLD needs the normalised HLDN, not worked out here",
                           temperature, source)
    oils = [lf for lf in lines if lf.required_hlb_member and lf.remaining_percent > 0
            and not is_co_emulsifier_only(by_no[lf.line_no])]
    if not oils:
        return _not_enough("no oil counts in the oil phase", temperature, source)
    no_eacn = tuple(lf.inci for lf in oils if by_no[lf.line_no].p.eacn is None)
    no_cc = tuple(e.inci for e in members if e.line_no and by_no[e.line_no].p.hld_cc is None)
    if no_eacn or no_cc:
        parts = ([f"no EACN for {', '.join(no_eacn)}"] if no_eacn else []) + \
            ([f"no Cc for {', '.join(no_cc)}"] if no_cc else [])
        return _not_enough("; ".join(parts), temperature, source, no_eacn + no_cc)
    eacn = linear_mix([(lf.remaining_percent, float(by_no[lf.line_no].p.eacn or 0.0))
                       for lf in oils])
    cc = linear_mix([(e.percent, float(by_no[e.line_no].p.hld_cc or 0.0))
                     for e in members if e.line_no])
    water = sum(lf.remaining_percent for lf in lines if lf.phase == "water")
    salt = sum(ln.percent for ln in formula.lines
               if name_key(ln.ingredient.inci_name) == SODIUM_CHLORIDE)
    salinity = salt / water * 100.0 if water > 0 else 0.0
    if form == "ionic":
        if salinity <= 0:
            return _not_enough("an ionic HLD needs the salinity: the formula has no sodium "
                               "chloride in its water phase", temperature, source)
        hld = hld_ionic(salinity, eacn, cc, temperature)
        hld_25 = hld_ionic(salinity, eacn, cc, 25.0)
        pit = None
    else:
        hld = hld_nonionic(salinity, eacn, cc, temperature)
        hld_25 = hld_nonionic(salinity, eacn, cc, 25.0)
        ethoxylated = all(by_no[e.line_no].p.ethoxylated for e in members if e.line_no)
        for e in members:  # whether a phase inversion temperature is worked out
            if e.line_no is not None and by_no[e.line_no].p.ethoxylated is not None:
                work.read("ethoxylated", e.inci)
        pit = pit_nonionic(salinity, eacn, cc) if ethoxylated else None
    for lf in oils:
        work.read("eacn", lf.inci)
    for e in members:
        work.read("hld_cc", e.inci)
    return HldFacts(status="computed", form=form, temperature_c=temperature,
                    temperature_from=source, eacn=eacn, cc=cc, salinity_g_100ml=salinity,
                    hld=hld, hld_25c=hld_25, favours=hld_type(hld), pit_c=pit)
