"""EVD01: a number the check relies on is not verified (from memory, a rule of thumb, or seen
only in a secondary copy)."""

from __future__ import annotations

import shlex
from collections.abc import Iterable, Iterator, Mapping, Sequence
from typing import Any, ClassVar

from formdb.facts.soap import soap_record
from formdb.rules.base import Option, Rule
from formdb.rules.emulsifier import reads_water_numbers
from formdb.rules.ph_window import reads_ph_windows
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import RECORDED_PROPERTIES, FormulaFacts
from formdb.schemas.vocab import Evidence, Severity

_SEVERITIES = ("off", *(s.value for s in Severity))

# The properties the facts and rules compute with. Typical use ranges are left out: they are
# experience by nature and USE01 only advises on them; so is electrolyte sensitivity, which no
# check reads (INC01 matches compatibility classes).
CHECKED_PROPERTIES = (
    "hlb", "required_hlb_ow", "required_hlb_wo", "required_hlb_ow_low", "required_hlb_ow_high",
    "required_hlb_wo_low", "required_hlb_wo_high", "solubility", "ionic_character", "density",
    "ph_min", "ph_max", "molar_mass", "base_equivalents", "acid_value", "cation_valence",
    "neutralisation_water", "water_number", "viscosity_mpas", "eacn", "hld_cc", "ethoxylated")
# read by a rule rather than the facts: whether this formula's check reads them
_READ_BY_RULES = {"ph_min": "ph", "ph_max": "ph", "water_number": "water"}


@register
class UnverifiedValue(Rule):
    """A value the check computes with is recalled from memory or is a rule of thumb.

    Flags: for each formula line, the library values among those the check uses (HLB, required
    HLB, solubility, ionic character, density, pH window, molar mass, base equivalents, acid
    value, cation valence, neutralisation water, water number, viscosity, EACN, Cc, whether
    ethoxylated) whose evidence is
    "from memory", "rule of thumb" or a secondary copy; one finding per ingredient and kind of
    evidence, naming the properties. A value is named only where this formula's check reads
    it (FormulaFacts.values_read): the required HLB of the working type only (both types
    while the type is undecided), and the ends of its sources' range where they widen HLB01's
    band (a low end from memory can pass a blend HLB the value alone would not); the HLB of
    the members the blend averages, of a nonionic its value alone puts on Davies' scale, and
    of an emulsifier placed by it for want of a solubility, not a value an in-house
    measurement replaced; a solubility that placed a line;
    an emulsifier's ionic character; densities once a dispersed fraction is worked out; the
    viscosity of the continuous phase's main ingredient only; a base's constants where a soap
    forms or alkali is left free, and the acid values that took it up, and the library record of
    the soap formed (named as such: its side and charge); EACN, Cc and ethoxylation
    once an HLD is worked out; pH windows only when
    the formula states a pH (PH01); water numbers only where EMU01 weighs absorption bases.
    The same for the toxicology values a margin of safety was worked out from (point of
    departure, and dermal absorption or oral bioavailability where the library holds them),
    graded by their source; a default standing in for one is MOS01's to name.
    Why: a reviewer signs a formula off on its numbers; a value nobody checked against a
    published source or a supplier's certificate is an open item before a trial, however
    plausible it looks (regulatory.md: every default and unverified value must be shown).
    Fails: Polysorbate 80 whose solubility is recorded "from memory".
    Passes: Polysorbate 80 whose HLB 15.0 cites HPE6 Table IX (published).
    Options: from_memory_severity (default "info"; the strict profile makes it "error"),
    rule_of_thumb_severity (default "info"; strict: "warning") and secondary_severity for values
    seen only in someone else's copy of the source (default "info"; strict: "warning"); "off"
    silences one kind.
    """

    code = "EVD01"
    name = "unverified-value"
    groups = ("data", "review")
    default_severity = Severity.INFO
    options: ClassVar[dict[str, Option]] = {
        "from_memory_severity": Option(str, "info", "severity of values from memory",
                                       _SEVERITIES),
        "rule_of_thumb_severity": Option(str, "info", "severity of rule-of-thumb values",
                                         _SEVERITIES),
        "secondary_severity": Option(str, "info", "severity of values seen only in a "
                                     "secondary copy", _SEVERITIES),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        kinds = ((Evidence.FROM_MEMORY, options["from_memory_severity"]),
                 (Evidence.RULE_OF_THUMB, options["rule_of_thumb_severity"]),
                 (Evidence.SECONDARY, options["secondary_severity"]))
        read = {(v.ingredient, v.property) for v in facts.values_read}
        rule_reads = {"ph": reads_ph_windows(formula), "water": reads_water_numbers(facts)}
        # the lines' ingredients, then the library records of soaps formed in the batch (their
        # side and charge are read from them, though no line names them)
        records = [(ln.ingredient, "") for ln in formula.lines]
        records += [(soap, " (the soap formed in the batch)") for soap in
                    (soap_record(reference, s.soap) for s in facts.soaps if s.soap_in_library)
                    if soap is not None]
        seen: set[int] = set()
        for ing, formed in records:
            if ing.id in seen:
                continue
            seen.add(ing.id)
            graded = [(p, ing.provenance[p].evidence) for p in CHECKED_PROPERTIES
                      if getattr(ing.p, p) is not None and p in ing.provenance
                      and ((ing.inci_name, p) in read if p in RECORDED_PROPERTIES
                           else rule_reads[_READ_BY_RULES[p]])]
            for severity, evidence, props in _unverified(kinds, graded):
                rests = "rests on a value" if len(props) == 1 else "rest on values"
                command = (f"formdb ingredient verify {shlex.quote(ing.inci_name)} "
                           + " ".join(f"--value {p}" for p in props) + " --source KEY")
                yield self.finding(
                    severity,
                    f"{ing.inci_name}{formed}: {', '.join(props)} {rests} recorded as "
                    f"{evidence.value} (not verified against a source)",
                    ingredients=[ing.inci_name],
                    values={"evidence": evidence.value, "properties": ", ".join(props)},
                    advice=f"check {', '.join(props)} of {ing.inci_name} against a published "
                           "source or the supplier's certificate, then attach that source "
                           f"(`{command}`; `formdb ingredient edit` if the value differs)")
        yield from self._toxicology(facts, reference, kinds)

    def _toxicology(self, facts: FormulaFacts, reference: ReferenceData,
                    kinds: tuple[tuple[Evidence, str], ...]) -> Iterable[Finding]:
        """The toxicology values a margin of safety was worked out from (a default stands in
        where the library has none, and MOS01 names it), graded by their source."""
        sheet = facts.exposure
        for line in sheet.lines if sheet is not None else ():
            used = [(f"point of departure ({line.pod_kind} {line.pod_value:g} {line.pod_unit})",
                     line.pod_source)]
            if not line.dermal_absorption_default:
                used.append(("dermal absorption", line.dermal_absorption_source))
            if not line.oral_bioavailability_default:
                used.append(("oral bioavailability", line.oral_bioavailability_source))
            graded = [(name, reference.source_evidence.get(source)) for name, source in used]
            for severity, evidence, what in _unverified(kinds, graded):
                record = reference.toxicology.get(name_key(line.inci))
                key = record.key if record is not None else "KEY"
                yield self.finding(
                    severity,
                    f"{line.inci}: the margin of safety rests on a {' and '.join(what)} "
                    f"recorded as {evidence.value} (not verified against a source)",
                    ingredients=[line.inci],
                    values={"evidence": evidence.value, "properties": ", ".join(what)},
                    advice=f"verify the {' and '.join(what)} of {line.inci} against the "
                           "published opinion or study and record its source (`formdb "
                           f"toxicology edit {key} --set source=...` with --reason)")


def _unverified(kinds: Sequence[tuple[Evidence, str]],
                graded: Sequence[tuple[str, Evidence | None]]
                ) -> Iterator[tuple[Severity, Evidence, list[str]]]:
    """(severity, evidence, the names graded so) for each kind of unverified evidence the
    options do not silence, in the options' order, where any value is graded that way."""
    for evidence, severity in kinds:
        names = [name for name, grade in graded if grade == evidence]
        if severity != "off" and names:
            yield Severity(severity), evidence, names
