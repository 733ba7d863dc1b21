"""The exposure and margin-of-safety section: the sheet a reviewer redoes by hand."""

from __future__ import annotations

from formdb.report.blocks import Block, Line, Notes, Section, lines, table
from formdb.schemas.result import ExposureFacts, FormulaFacts, MosLine

DASH = "-"


def _g(value: float | None) -> str:
    return DASH if value is None else f"{value:.4g}"


def _verdict(line: MosLine) -> str:
    if line.mos is None:
        return "no exposure"
    return "below threshold" if line.below_threshold else "passes"


def _row(line: MosLine) -> tuple[str, ...]:
    dap = _g(line.dermal_absorption_percent) + ("*" if line.dermal_absorption_default else "")
    pod_sys = _g(line.pod_sys_mg_kg_bw_day) + ("*" if line.oral_bioavailability_default else "")
    return (line.inci, _g(line.percent), dap, _g(line.sed_mg_kg_bw_day),
            f"{line.pod_kind} {_g(line.pod_value)}", pod_sys, _g(line.mos), _verdict(line))


def point_of_departure(line: MosLine) -> str:
    """The point of departure as a reviewer cites it: kind, value, species, route, the study's
    duration (or that the library holds none), study and source."""
    duration = line.pod_duration or "duration not in the library"
    return (f"{line.pod_kind} {_g(line.pod_value)} {line.pod_unit} ({line.species}, "
            f"{line.pod_route}, {duration}; {line.study}; source {line.pod_source})")


def _header(sheet: ExposureFacts) -> list[Line]:
    out = [Line("Product type", f"{sheet.product} ({sheet.category}), retention factor "
                                f"{_g(sheet.retention_factor)}"),
           Line("E_product", f"{_g(sheet.exposure_mg_kg_bw_day)} mg/kg bw/day, source "
                             f"{sheet.exposure_source}"),
           Line("Body weight", f"{_g(sheet.body_weight_kg)} kg (default)" if sheet.body_weight_kg
                else "not used: the table gives E_product per kg body weight"),
           Line("MoS threshold", f"{_g(sheet.threshold)}")]
    if sheet.defaults_used:
        out.append(Line("Defaults used", "; ".join(sheet.defaults_used), "warn"))
    if sheet.missing_pod:
        out.append(Line("No point of departure", ", ".join(sheet.missing_pod), "bad"))
    if any(line.below_threshold for line in sheet.lines):
        out.append(Line("Verdict", "a margin of safety is below the threshold", "bad"))
    elif sheet.lines:
        out.append(Line("Verdict", "every margin of safety worked out reaches the threshold",
                        "ok"))
    return out


def exposure_section(facts: FormulaFacts) -> Section | None:
    """None when the formula names no product type (nothing to work out)."""
    sheet = facts.exposure
    if sheet is None:
        return None
    blocks: list[Block] = [lines(*_header(sheet))]
    if sheet.lines:
        blocks.append(table(("Substance", "C %", "DAp %", "SED", "PoD", "PoD_sys", "MoS",
                             "Verdict"), [_row(line) for line in sheet.lines], "snnnsnns"))
        blocks.append(Notes(("SED, PoD and PoD_sys in mg/kg bw/day; * a default was used "
                             "(dermal absorption, or oral bioavailability for PoD_sys).",)))
        blocks.append(Notes(tuple(f"{line.inci}: {point_of_departure(line)}"
                                  for line in sheet.lines), "Points of departure"))
        blocks.extend(Notes((*sheet.steps, *line.steps), f"Arithmetic: {line.inci}")
                      for line in sheet.lines)
    else:
        blocks.append(lines(Line("Substances", "none of the formula's substances has a point "
                                               "of departure in the library")))
    return Section("Exposure and margin of safety", tuple(blocks))


def allergen_section(facts: FormulaFacts) -> Section | None:
    """The allergen table; None when the formula holds no labelled allergen."""
    table_facts = facts.allergens
    if table_facts is None:
        return None
    head = lines(
        Line("Threshold", f"{table_facts.threshold_percent:g} % in a {table_facts.category} "
                          f"product ({table_facts.list_name} {table_facts.entry}, list of "
                          f"{table_facts.list_date}, source {table_facts.source})"),
        Line("Must be named on the label",
             ", ".join(table_facts.must_label) if table_facts.must_label else "none",
             "warn" if table_facts.must_label else "ok"))
    rows = [(line.inci, f"{line.percent:.4g}", "yes" if line.must_label else "no",
             "; ".join(line.sources)) for line in table_facts.lines]
    return Section("Fragrance allergens", (head, table(
        ("Allergen", "Total %", "Label", "Summed over"), rows, "snss"),
        Notes(("Each allergen is summed over every line that carries it before the threshold "
               "test; Annex III maximum concentrations still apply (limits section).",))))


def substance_section(facts: FormulaFacts) -> Section | None:
    """The substance-level composition; None unless a line is a mixture with constituents."""
    if not facts.substances:
        return None
    rows = [(item.inci, f"{item.percent:.4g}", "; ".join(item.sources))
            for item in facts.substances]
    return Section("Substances (mixtures exploded)", (
        table(("Substance", "% in product", "From"), rows, "sns"),
        Notes(("A mixture's declared constituents count as substances: limits of the MoS "
               "sheet and the allergen sums use these totals; what a declaration leaves "
               "undeclared stays with the mixture.",))))
