"""The sections of a formula report, built from ``FormulaFacts`` as formatted strings.

Each function returns one ``Section``; the wording explains a number where a formulator would
otherwise have to guess what it means (which oils a required HLB covers, where a band comes from).
"""

from __future__ import annotations

from formdb.report import numbers as n
from formdb.report.blocks import Block, Flag, Line, Notes, Section, lines, table
from formdb.schemas.result import (
    BlendSolution,
    CheckResult,
    EmulsifierFacts,
    FormulaFacts,
    LineFacts,
    RequiredHlbFacts,
    SoapFacts,
)
from formdb.schemas.vocab import EmulsionType, Severity
from formdb.science.packing import above

SIDE_WORDS = {"oil": "oil", "water": "water", "none": "neither", None: n.DASH}
SCALE_WORDS = {"griffin": "Griffin", "davies": "Davies", None: n.DASH}


def _phase_letter(line: LineFacts) -> str:
    """The formulator's phase letter (A, B, ...), or a dash when the file gives none."""
    return line.phase_letter or n.DASH


# ----- phases -----------------------------------------------------------------------------

def _line_row(line: LineFacts, with_left: bool) -> tuple[str, ...]:
    row: tuple[str, ...] = (str(line.line_no), line.inci, n.percent(line.percent, ""),
                            _phase_letter(line),
           SIDE_WORDS[line.phase], n.density(line.density).removesuffix(" g/mL"),
           line.phase_reason)
    if with_left:
        row = (*row[:3], n.percent(line.remaining_percent, ""), *row[3:])
    return row


def _phase_lines(facts: FormulaFacts) -> list[Line]:
    ph = facts.phases
    out = [Line("Oil phase", f"{n.percent(ph.oil_percent)}, {n.volume_ml(ph.oil_volume_ml)}, "
                             f"mean density {n.density(ph.oil_density)}"),
           Line("Water phase", f"{n.percent(ph.water_percent)}, "
                               f"{n.volume_ml(ph.water_volume_ml)}, "
                               f"mean density {n.density(ph.water_density)}")]
    if ph.other_percent > 0:
        out.append(Line("In neither phase",
                        f"{n.percent(ph.other_percent)}: {', '.join(ph.neither)}"))
    if ph.estimated_percent > 0:
        out.append(Line("Density estimated",
                        f"{n.percent(ph.estimated_percent)} without a library density, taken at "
                        f"its phase's mean: {', '.join(ph.missing_density)}", "warn"))
    return out


def phases_section(facts: FormulaFacts, *, with_hlb: bool = True) -> Section:
    """The phases table. ``with_hlb``: the report shows the HLB balance, where the soaps formed
    in the batch are worked out; other kinds of product get that working here."""
    with_left = any(abs(ln.remaining_percent - ln.percent) > 1e-9 for ln in facts.lines)
    headers: tuple[str, ...] = ("Line", "INCI name", "% w/w", "Phase", "Side", "Density g/mL",
                                "Placed by")
    align = "nsnssns"
    if with_left:
        headers = (*headers[:3], "Stays % w/w", *headers[3:])
        align = "nsnnssns"
    rows = [_line_row(ln, with_left) for ln in facts.lines]
    blocks: list[Block] = [table(headers, rows, align)]
    where = "see the HLB balance" if with_hlb else "worked out below"
    if with_left:
        blocks.append(Notes((f"'Stays' is what remains of the line after soap forms in the "
                             f"batch ({where}).",)))
    soaps = [] if with_hlb else [line for soap in facts.soaps for line in _soap_lines(soap)]
    blocks.append(lines(*_phase_lines(facts), *soaps))
    return Section("Phases", tuple(blocks))


# ----- HLB balance ------------------------------------------------------------------------

def _origin(member: EmulsifierFacts) -> str:
    if member.formed_in_place:
        return "soap formed in the batch"
    return f"line {member.line_no}" if member.line_no is not None else n.DASH


def _emulsifier_table(facts: FormulaFacts) -> Block:
    rows = [(e.inci, n.percent(e.percent, ""), n.hlb(e.hlb), SCALE_WORDS.get(e.scale, n.DASH),
             n.share(e.share), SIDE_WORDS.get(e.side, n.DASH), _origin(e))
            for e in facts.emulsifiers]
    return table(("Emulsifier", "% w/w", "HLB", "Scale", "Share of system", "Dissolves in",
                  "Origin"), rows, "snnsnss", "Emulsifier system")


def _soap_lines(soap: SoapFacts) -> list[Line]:
    favours = f", favours {soap.favours.value}" if soap.favours else ""
    where = "" if soap.soap_in_library else " (no soap pair in the library)"
    left = [f"{soap.acid} {n.percent(soap.acid_left_percent)}"] if \
        soap.acid_left_percent > 1e-9 else []
    if soap.base_left_percent > 1e-9:
        left.append(f"{soap.base} {n.percent(soap.base_left_percent)}")
    return [
        Line("Soap formed in the batch",
             f"{soap.acid} (line {soap.acid_line_no}) + {soap.base} (line {soap.base_line_no}) "
             f"give {soap.soap} {n.percent(soap.soap_percent)}{where}{favours}"),
        Line("Used", f"{soap.acid} {n.percent(soap.acid_used_percent)}, {soap.base} "
                     f"{n.percent(soap.base_used_percent)}; {soap.limiting} limits the "
                     f"reaction; water formed {n.percent(soap.water_formed_percent)}"),
        Line("Left over", "; ".join(left) or "nothing")]


def _required_line(req: RequiredHlbFacts, working: bool) -> Line:
    """One type's required HLB; a missing value is flagged only for the type worked for."""
    label = f"Required HLB, {req.emulsion_type.value}"
    flag: Flag = "warn" if working else ""
    if req.members_percent <= 0:
        return Line(label, "not worked out: no oil-phase ingredient counts toward it")
    if req.value is None:
        return Line(label, f"not worked out: no value in the library for "
                           f"{', '.join(req.missing)}", flag)
    if req.measured_source is not None:
        return Line(label, f"{n.hlb(req.value)} ± {n.hlb(req.measured_uncertainty)} (measured "
                           f"in-house for this oil phase: source {req.measured_source}, graded "
                           "measured)")
    if not req.missing:
        return Line(label, f"{n.hlb(req.value)} (weight average over the "
                           f"{n.percent(req.members_percent)} of oil phase that counts)")
    cover = req.covered_percent / req.members_percent
    return Line(label, f"{n.hlb(req.value)} (weight average over "
                       f"{n.percent(req.covered_percent, '')} of "
                       f"{n.percent(req.members_percent)}, {cover:.0%} of the oil phase; no "
                       f"value for {', '.join(req.missing)})", flag)


def _blend_line(facts: FormulaFacts) -> Line:
    if not facts.emulsifiers:
        return Line("Blend HLB", "not worked out: no emulsifier, and no soap formed in the batch",
                    "bad")
    system = facts.hlb_system
    if facts.blend_hlb is None:
        if system is None or (system.griffin_value is None and system.led_by != "ionic"):
            off_scale = [e.inci for e in facts.emulsifiers if e.hlb is not None]
            why = (f"none has an HLB on Griffin's scale ({', '.join(off_scale)}: charged or a "
                   "polymer, not averaged)" if off_scale
                   else "no emulsifier has an HLB in the library")
            return Line("Blend HLB", f"not worked out: {why}", "warn")
        alone = (f"; the Griffin-scale members alone give {n.hlb(system.griffin_value)}"
                 if system.griffin_value is not None else "")
        return Line("Blend HLB", f"not judged: {system.assessment}{alone}",
                    "" if system.led_by == "ionic" else "warn")
    covered = ""
    if system is not None and system.coverage < 1 - 1e-9:
        covered = (f"; rests on {n.percent(facts.blend_hlb_covered_percent)} of "
                   f"{n.percent(facts.emulsifier_percent)} ({system.coverage:.0%} of the system)")
    davies = [e.inci for e in facts.emulsifiers if e.scale == "davies"]
    apart = (f"; {', '.join(davies)} on Davies' scale, not averaged in" if davies else "")
    return Line("Blend HLB", f"{n.hlb(facts.blend_hlb)} (weight average of the Griffin-scale "
                             f"members, Griffin's additivity{covered}{apart})")


def _band_lines(facts: FormulaFacts) -> list[Line]:
    if facts.required_hlb is None or facts.target_low is None or facts.target_high is None:
        return []
    tol = facts.settings.hlb_tolerance
    kind = facts.working_type.value if facts.working_type else ""
    req = (facts.required_hlb_ow if facts.working_type == EmulsionType.OW
           else facts.required_hlb_wo)
    span = (f"; sources range {n.hlb(req.low)} to {n.hlb(req.high)}"
            if req is not None and req.low is not None and req.high is not None else "")
    out = [Line("Target band", f"{n.hlb(facts.target_low)} to {n.hlb(facts.target_high)} "
                               f"(required {n.hlb(facts.required_hlb)} ± {tol:g}{span}, "
                               f"{kind})")]
    blend = facts.blend_hlb
    if blend is None:
        return out
    if facts.target_low - 1e-9 <= blend <= facts.target_high + 1e-9:
        out.append(Line("Balance", f"blend HLB {n.hlb(blend)} is inside the band", "ok"))
    else:
        gap = blend - facts.required_hlb
        side = "above" if gap > 0 else "below"
        out.append(Line("Balance", f"blend HLB {n.hlb(blend)} is {abs(gap):.2f} {side} the "
                                   f"required {n.hlb(facts.required_hlb)}: outside the band",
                        "warn"))
    return out


def _working_line(facts: FormulaFacts) -> Line | None:
    if facts.working_type is None:
        return Line("Worked for", "no intended type and no prediction: no required HLB chosen",
                    "warn")
    how = "as intended" if facts.working_type_source == "intended" else "as predicted"
    return Line("Worked for", f"{facts.working_type.value} ({how})")


def _present(facts: FormulaFacts) -> dict[str, float]:
    return {e.inci: e.percent for e in facts.emulsifiers}


def _unreachable_line(sol: BlendSolution) -> Line:
    reach = (f"have HLB {n.hlb(sol.reachable_low)} only"
             if abs(sol.reachable_high - sol.reachable_low) < 1e-9 else
             f"reach HLB {n.hlb(sol.reachable_low)} to {n.hlb(sol.reachable_high)} only")
    return Line("Ratio for the target",
                f"none: the formula's emulsifiers {reach}, and the target is "
                f"{n.hlb(sol.target_hlb)}; add or swap in an emulsifier beyond the target", "bad")


def _solution_table(facts: FormulaFacts, sol: BlendSolution) -> Block:
    present = _present(facts)
    total = sum(present.get(name, 0.0) for name in sol.emulsifiers)
    rows = []
    for i, name in enumerate(sol.emulsifiers):
        now = present.get(name, 0.0)
        rows.append((name, n.hlb(sol.hlbs[i]), n.percent(now, ""),
                     n.share(now / total if total > 0 else None),
                     n.share(sol.fractions[i] if sol.fractions else None),
                     n.percent(sol.percents[i] if sol.percents else None, "")))
    method = f" ({sol.method})" if sol.method else ""
    return table(("Emulsifier", "HLB", "Now % w/w", "Share now", "Share for target",
                  "% w/w for target"), rows, "snnnnn",
                 f"Ratio that gives HLB {n.hlb(sol.target_hlb)} at the present total{method}")


def hlb_section(facts: FormulaFacts) -> Section:
    blocks: list[Block] = []
    if facts.emulsifiers:
        blocks.append(_emulsifier_table(facts))
    items = [
        *(line for soap in facts.soaps for line in _soap_lines(soap)),
        Line("Emulsifier total", n.percent(facts.emulsifier_percent)) if facts.emulsifiers
        else None,
        _blend_line(facts),
        Line("Co-emulsifiers", "counted with the oil phase: " + ", ".join(facts.co_emulsifiers))
        if facts.co_emulsifiers else None,
        _required_line(facts.required_hlb_ow, facts.working_type == EmulsionType.OW),
        _required_line(facts.required_hlb_wo, facts.working_type == EmulsionType.WO),
        _working_line(facts),
        *_band_lines(facts),
    ]
    sol = facts.blend_solution
    if sol is not None and not sol.reachable:
        items.append(_unreachable_line(sol))
    blocks.append(lines(*items))
    if sol is not None and sol.reachable:
        blocks.append(_solution_table(facts, sol))
    return Section("HLB balance", tuple(blocks))


# ----- emulsion type ----------------------------------------------------------------------

def _bancroft_line(facts: FormulaFacts) -> Line:
    water, oil = facts.water_side_emulsifier_percent, facts.oil_side_emulsifier_percent
    split = f"water-soluble {n.percent(water)} vs oil-soluble {n.percent(oil)}"
    label = "Solubility split"
    if water + oil <= 0:
        return Line(label, "no indication: no emulsifier with a known solubility")
    if facts.type_by_bancroft is None:
        return Line(label, f"no indication, evenly split ({split})")
    return Line(label, f"{facts.type_by_bancroft.value} by mass of the members ({split}); "
                       "a supporting indicator only")


def _hlb_class_line(facts: FormulaFacts) -> Line:
    s = facts.settings
    bounds = f"W/O at or below {s.hlb_wo_max:g}, O/W at or above {s.hlb_ow_min:g}"
    if facts.blend_hlb is None:
        return Line("By HLB class", "no indication: no blend HLB to judge by")
    if facts.type_by_hlb is None:
        return Line("By HLB class", f"no indication: blend HLB {n.hlb(facts.blend_hlb)} lies "
                                    f"between the classes ({bounds})", "warn")
    return Line("By HLB class", f"{facts.type_by_hlb.value}: blend HLB "
                                f"{n.hlb(facts.blend_hlb)} ({bounds})")


def _ionic_line(facts: FormulaFacts) -> Line | None:
    decision = facts.type_decision
    ionic = next((i for i in decision.indicators if i.name == "soap and ionic"), None) \
        if decision else None
    if ionic is None:
        return None
    favours = ionic.favours.value if ionic.favours else "no indication (evenly split)"
    return Line("Soap and ionic", f"{favours}: {ionic.detail}")


def _hld_line(facts: FormulaFacts) -> Line | None:
    decision = facts.type_decision
    hld = next((i for i in decision.indicators if i.name == "hld"), None) if decision else None
    if hld is None:
        return None
    if hld.favours is None and hld.mass_percent <= 0:
        return Line("By HLD", "not enough data (the Temperature and HLD section names what "
                              "is missing)")
    if hld.favours is None:
        return Line("By HLD", f"no indication: {hld.detail}")
    return Line("By HLD", f"{hld.favours.value}: {hld.detail}; a supporting indicator (its "
                          "constants are from memory)")


def _agreement_lines(result: CheckResult) -> list[Line]:
    facts, out = result.facts, []
    if facts.types_disagree:
        out.append(Line("Agreement", "the indicators disagree (information, not a fault); "
                                     "confirm the type on the first batch by dilution"))
    elif facts.type_decision and len([i for i in facts.type_decision.indicators
                                      if i.favours is not None]) > 1:
        out.append(Line("Agreement", "the indicators agree", "ok"))
    intended, predicted = result.intended_type, facts.predicted_type
    if intended and predicted and intended != predicted:
        # as strongly as TYP01 judged it: a problem where it found strong evidence (an error),
        # a check where the evidence is weaker (a warning)
        strong = any(f.rule == "TYP01" and f.severity == Severity.ERROR for f in result.findings)
        out.append(Line("Against intended", f"intended {intended.value} but the system gives "
                                            f"{predicted.value}"
                                            + ("" if strong else " (not decisive)"),
                        "bad" if strong else "warn"))
    elif intended and predicted:
        out.append(Line("Against intended", f"matches the intended {intended.value}", "ok"))
    return out


def prediction_section(result: CheckResult) -> Section:
    facts = result.facts
    decision = facts.type_decision
    predicted = facts.predicted_type.value if facts.predicted_type else "none"
    row = f" ({decision.row}{'' if decision.strong else '; weak evidence'})" if decision else ""
    items = [_hlb_class_line(facts), _ionic_line(facts), _hld_line(facts), _bancroft_line(facts),
             Line("Decided type", f"{predicted}{row}"),
             *_agreement_lines(result)]
    return Section("Emulsion type", (lines(*items),))


def hld_section(facts: FormulaFacts) -> Section | None:
    """Salager's HLD at the process temperature and, for ethoxylated nonionics, the PIT."""
    h = facts.hld
    if h is None:
        return None
    at = f"{n.plain(h.temperature_c)} °C ({h.temperature_from})"
    if h.status != "computed":
        return Section("Temperature and HLD", (lines(
            Line("Temperature", at),
            Line("HLD", f"not enough data: {h.reason}"),
            Line("Constants", h.constants)),))
    band = facts.settings.hld_band

    def reading(value: float | None) -> str:
        if value is None:
            return n.DASH
        side = ("O/W" if value < -band else "W/O" if value > band
                else f"near the optimum, within ±{band:g}: either type")
        return f"{value:+.2f} ({side})"

    items = [Line("Temperature", at),
             Line("Oil EACN", f"{n.plain(h.eacn or 0)} (weight average of the oils)"),
             Line("Surfactant Cc", f"{n.plain(h.cc or 0)} ({h.form}, weight average)"),
             Line("Salinity", f"{n.plain(h.salinity_g_100ml or 0)} g NaCl per 100 g water "
                              "phase"),
             Line("HLD", (f"{reading(h.hld)} at {n.plain(h.temperature_c)} °C, "
                          if abs(h.temperature_c - 25.0) > 1e-9 else "")
                  + f"{reading(h.hld_25c)} at 25 °C (HLD < 0 favours O/W, > 0 W/O)"),
             Line("Phase inversion", (f"about {n.plain(h.pit_c)} °C (the nonionic HLD crosses 0;"
                                      " O/W below, W/O above)") if h.pit_c is not None else
                  "not estimated (only when every emulsifier is an ethoxylated nonionic)"),
             Line("Constants", h.constants)]
    return Section("Temperature and HLD", (lines(*items),))


# ----- packing ----------------------------------------------------------------------------

def _packing_class(phi: float, facts: FormulaFacts) -> str:
    if above(phi, facts.packing_limit):
        return "close"
    return "random" if above(phi, facts.random_close_packing) else "below"


def _packing_verdict(facts: FormulaFacts) -> Line | None:
    phi = facts.dispersed_fraction
    if phi is None:
        return None
    spread = facts.dispersed_fraction_range
    ends = {_packing_class(spread.low, facts), _packing_class(spread.high, facts)} if spread \
        else {_packing_class(phi, facts)}
    if len(ends) > 1:
        return Line("Verdict", "none: the densities estimated leave the fraction on both sides "
                               "of a packing limit; add them to the library", "warn")
    verdict = ends.pop()
    if verdict == "close":
        return Line("Verdict", "above the close-packing limit: only polydisperse or deformed "
                               "drops pack this densely, and the emulsion is likely to invert",
                    "bad")
    if verdict == "random":
        return Line("Verdict", "above random close packing: drops are crowded and deformed; "
                               "expect a stiff cream", "warn")
    return Line("Verdict", "below the packing limits", "ok")


def _fraction_range(facts: FormulaFacts) -> Line | None:
    spread = facts.dispersed_fraction_range
    if spread is None or facts.dispersed_fraction is None:
        return None
    return Line("Range of φ", f"{n.fraction(spread.low)} to {n.fraction(spread.high)}: "
                              f"{', '.join(spread.estimated)} without a library density, anywhere "
                              "in the usual density of their roles (rule of thumb)")


def packing_section(facts: FormulaFacts) -> Section:
    if facts.dispersed_phase is None:
        return Section("Dispersed phase", (lines(Line(
            "Dispersed phase", "not worked out: no intended or predicted type")),))
    kind = facts.working_type.value if facts.working_type else ""
    phi = facts.dispersed_fraction
    value = ("not worked out: a phase has no density in the library" if phi is None else
             f"{n.fraction(phi)} ({phi * 100:.1f} % of the volume, from weights and densities)")
    items = [Line("Dispersed phase", f"{facts.dispersed_phase} ({kind})"),
             Line("Volume fraction φ", value),
             _fraction_range(facts),
             Line("Packing limit", f"{facts.packing_limit:.4f} (π/√18, equal spheres); "
                                   f"random close packing about "
                                   f"{facts.random_close_packing:.2f}"),
             _packing_verdict(facts)]
    return Section("Dispersed phase", (lines(*items),))


# ----- interface and creaming -------------------------------------------------------------

def _interface_lines(facts: FormulaFacts) -> list[Line]:
    face = facts.interface
    if face is None:
        return [Line("Interface", "not worked out: no dispersed volume fraction")]
    coverage = face.coverage_ratio
    cover_flag: Flag = "" if coverage is None else ("ok" if coverage >= 1 else "warn")
    cover_text = (n.DASH if coverage is None
                  else f"{n.plain(coverage, 2)} × what the interface needs")
    return [
        Line("Droplet diameter", f"{n.with_unit(face.droplet_diameter_um, 'µm')} "
                                 f"({face.droplet_source})"),
        Line("Interface", f"{n.with_unit(face.specific_area_m2_per_ml, 'm² per mL')} of "
                          f"emulsion (6φ/d); {n.with_unit(face.area_m2, 'm²')} per 100 g"),
        Line("Surface load", f"{n.with_unit(face.surface_excess_mg_m2, 'mg/m²')} "
                             f"({face.surface_excess_source})"),
        Line("Emulsifier to cover it", f"{n.percent(face.emulsifier_needed_percent)} needed, "
                                       f"{n.percent(face.emulsifier_present_percent)} present"),
        Line("Coverage", cover_text, cover_flag),
    ]


def _creaming_lines(facts: FormulaFacts) -> list[Line]:
    cr = facts.creaming
    if cr is None:
        return [Line("Creaming", "not worked out: the phase densities are not known")]
    out = [Line("Phase densities",
                f"dispersed {n.with_unit(cr.dispersed_density_kg_m3, 'kg/m³', 4)}, continuous "
                f"{n.with_unit(cr.continuous_density_kg_m3, 'kg/m³', 4)} (difference "
                f"{cr.density_difference_kg_m3:+.1f} kg/m³)")]
    if cr.continuous_viscosity_mpas is None or cr.velocity_m_s is None:
        out.append(Line("Creaming speed", "not worked out: no viscosity in the library for the "
                                          "continuous phase"))
        return out
    out.append(Line("Continuous viscosity", f"{n.with_unit(cr.continuous_viscosity_mpas, 'mPa·s')}"
                                            f" (that of {cr.viscosity_from})"))
    v = cr.velocity_m_s
    direction = "drops rise (creaming)" if v > 0 else "drops sink (sedimentation)" if v < 0 \
        else "no movement (equal densities)"
    out.append(Line("Creaming speed (Stokes)",
                    f"{n.with_unit(abs(v) * 1e6, 'µm/s')} = "
                    f"{n.with_unit(abs(cr.velocity_mm_per_day or 0.0), 'mm/day')}: {direction}, "
                    f"for one {cr.droplet_diameter_um:g} µm drop in the unthickened phase"))
    return out


def interface_section(facts: FormulaFacts) -> Section:
    return Section("Interface and creaming",
                   (lines(*_interface_lines(facts), *_creaming_lines(facts)),))


# ----- data gaps --------------------------------------------------------------------------

READABLE = {
    "hlb": "HLB", "required_hlb_ow": "required HLB (O/W)", "required_hlb_wo": "required HLB (W/O)",
    "viscosity_mpas": "viscosity", "use_min_percent": "use range, low end",
    "use_max_percent": "use range, high end", "ph_min": "working pH, low end",
    "ph_max": "working pH, high end", "dispersed_fraction": "dispersed volume fraction",
    "molar_mass": "molar mass", "base_equivalents": "base equivalents", "acid_value": "acid value",
    "water_number": "water number",
    "cation_valence": "cation valence", "ionic_character": "ionic character",
}


def readable(word: str) -> str:
    """A library field or fact name as words ("required_hlb_ow" -> "required HLB (O/W)")."""
    return READABLE.get(word, word.replace("_", " "))


def data_gaps_section(facts: FormulaFacts) -> Section:
    blocks: list[Block] = []
    if facts.gaps:
        rows = [(readable(g.property), ", ".join(g.ingredients), readable(g.blocks),
                 g.detail or n.DASH) for g in facts.gaps]
        blocks.append(table(("Missing value", "Ingredients", "Blocks or weakens", "Detail"),
                            rows, "ssss"))
    else:
        blocks.append(lines(Line("Data gaps", "none: every value these numbers need is in the "
                                              "library", "ok")))
    if facts.notes:
        blocks.append(Notes(facts.notes, "Notes on the numbers"))
    return Section("Data gaps", tuple(blocks))
