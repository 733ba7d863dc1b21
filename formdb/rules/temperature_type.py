"""HLD01: the type the HLD gives at the process temperature, and a phase inversion in between."""

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
class TemperatureType(Rule):
    """At the temperature of making, the emulsifier system favours the other type.

    Flags: a warning when Salager's HLD at the process temperature (the ``[process]``
    temperature, else the step that joins the phases, else 25 °C) lies beyond ``band`` on the
    side of the other type than the one worked for (HLD > 0 favours W/O, < 0 O/W). An info when
    an ethoxylated nonionic system's phase inversion temperature lies between 25 °C and the
    process temperature: the emulsion inverts as it cools (the PIT method, on purpose or not).
    Silent where the library lacks the EACN, Cc or salinity the HLD needs (the report's
    Temperature and HLD section says which).
    Why: ethoxylated nonionics lose hydration as they warm (c_T about 0.06 per K, from memory),
    so an O/W system can be W/O at 75 °C (Bourrel, Salager, Schechter, Wade, J. Colloid
    Interface Sci. 75 (1980) 451; Salager et al., Cosmetics 7 (2020) 57). The HLB has no
    temperature in it.
    Fails: O/W made at 85 °C whose ethoxylate system has HLD +0.68 there (PIT about 74 °C).
    Passes: the same system made at 25 °C (HLD -2.92).
    Options: band (default 0.5): HLD within this of 0 is left alone (the constants are from
    memory); pit_info (bool, default true): report a PIT crossed on cooling.
    """

    code = "HLD01"
    name = "temperature-type"
    groups = ("emulsion",)
    default_severity = Severity.WARNING
    kinds: ClassVar[frozenset[str] | None] = frozenset({"emulsion", "soap cream"})
    options: ClassVar[dict[str, Option]] = {
        "band": Option(float, 0.5, "HLD within this of 0 is not judged", minimum=0,
                       maximum=5),  # the facts' hld_band holds at most 5
        "pit_info": Option(bool, True, "report a phase inversion crossed on cooling"),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        h = facts.hld
        working = facts.working_type
        if h is None or h.status != "computed" or h.hld is None or working is None:
            return
        names = [e.inci for e in facts.emulsifiers]
        values: dict[str, float | str | None] = {
            "hld": h.hld, "hld_25c": h.hld_25c, "temperature_c": h.temperature_c,
            "eacn": h.eacn, "cc": h.cc, "pit_c": h.pit_c}
        other = "W/O" if working.value == "O/W" else "O/W"
        wrong_side = h.hld > options["band"] if working.value == "O/W" \
            else h.hld < -options["band"]
        if wrong_side:
            yield self.finding(
                self.default_severity,
                f"at {h.temperature_c:g} °C the HLD is {h.hld:+.2f}: the emulsifier system "
                f"favours {other} there, while the formula is worked as {working.value}",
                ingredients=names, values=values,
                advice=(f"emulsify below the phase inversion temperature"
                        f"{f' (about {h.pit_c:.0f} °C)' if h.pit_c is not None else ''}, or "
                        f"move the system towards {working.value} (a more "
                        f"{'hydrophilic' if working.value == 'O/W' else 'lipophilic'} "
                        "emulsifier, less salt); confirm the type on the batch by dilution"))
        pit = h.pit_c
        if options["pit_info"] and pit is not None and \
                min(25.0, h.temperature_c) < pit < max(25.0, h.temperature_c):
            yield self.finding(
                Severity.INFO,
                f"the phase inversion temperature, about {pit:.0f} °C, lies between the "
                f"{h.temperature_c:g} °C of making and 25 °C: the emulsion inverts on cooling",
                ingredients=names, values=values,
                advice=("cool quickly through the inversion with stirring (the PIT method gives "
                        "fine drops); keep storage well away from it"))
