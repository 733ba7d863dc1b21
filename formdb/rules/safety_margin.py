"""MOS01: margin of safety of every substance with a point of departure, for the product type."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, ClassVar

from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import DEFAULT_MOS_THRESHOLD, FormulaFacts
from formdb.schemas.vocab import Severity

SEVERITIES = tuple(s.value for s in Severity)


@register
class SafetyMargin(Rule):
    """A substance's margin of safety is below the threshold for the product type's exposure.

    Flags: an error for each substance whose MoS = PoD_sys / SED is below ``threshold``, with
    SED = E_product x C/100 x DAp/100 (E_product from the product type's row of the exposure
    table); a finding at ``missing_severity`` for each preservative, UV filter or active with
    no point of departure in the library; an info listing every default the arithmetic used
    (dermal absorption, oral bioavailability, body weight); an info when substances with a
    point of departure are present but the formula names no product type.
    Why: the SCCS Notes of Guidance (12th revision, SCCS/1647/22) accept a systemic exposure
    when MoS is at least 100 (10 between species x 10 between people) unless substance data
    justify less. A default stands in for missing data and must never pass unseen.
    Fails: body lotion (E_product 123.2 mg/kg bw/day) with 1 % Phenoxyethanol (NOAEL 357
    mg/kg bw/day, default dermal absorption 50 %, default oral bioavailability 50 %) judged
    against a threshold of 1000: SED 0.616, MoS 290. The finding names the point of departure
    and, where the library holds it, the study's duration.
    Passes: a body lotion of water and glycerin alone (no substance with systemic relevance).
    Options: threshold (the lowest acceptable MoS, default 100); missing_severity (info,
    warning or error, for a substance that needs a point of departure and has none).
    The defaults themselves are [facts] keys: body_weight_kg, default_dermal_absorption_percent,
    default_oral_bioavailability_percent.
    """

    code = "MOS01"
    name = "margin-of-safety"
    groups = ("safety",)
    default_severity = Severity.ERROR
    options: ClassVar[dict[str, Option]] = {
        "threshold": Option(float, DEFAULT_MOS_THRESHOLD, "lowest acceptable margin of safety",
                            minimum=1.0, maximum=100_000),
        "missing_severity": Option(str, "warning", "severity for a preservative, UV filter or "
                                   "active without a point of departure", choices=SEVERITIES),
    }

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        sheet = facts.exposure
        if sheet is None:
            with_pod = [ln.ingredient.inci_name for ln in formula.lines
                        if name_key(ln.ingredient.inci_name) in reference.toxicology]
            if with_pod:
                yield self.finding(
                    Severity.INFO,
                    f"the formula names no product type, so the margin of safety of "
                    f"{', '.join(dict.fromkeys(with_pod))} was not worked out",
                    ingredients=with_pod,
                    advice="add product = \"...\" (a product type of the exposure table)")
            return
        for line in sheet.lines:
            if not line.below_threshold or line.mos is None:
                continue
            flagged = [w for w, used in (("dermal absorption", line.dermal_absorption_default),
                                         ("oral bioavailability",
                                          line.oral_bioavailability_default)) if used]
            caveat = f" (default {' and '.join(flagged)})" if flagged else ""
            study = ", ".join(x for x in (line.species, line.pod_route, line.pod_duration) if x)
            yield self.finding(
                self.default_severity,
                f"{line.inci}: margin of safety {line.mos:.3g} is below {line.threshold:g} for "
                f"{sheet.product} (SED {line.sed_mg_kg_bw_day:.4g} mg/kg bw/day; PoD "
                f"{line.pod_kind} {line.pod_value:.4g} {line.pod_unit}, {study} study; PoD_sys "
                f"{line.pod_sys_mg_kg_bw_day:.4g} mg/kg bw/day){caveat}",
                ingredients=[line.inci],
                values={"mos": line.mos, "threshold": line.threshold,
                        "sed_mg_kg_bw_day": line.sed_mg_kg_bw_day,
                        "pod_kind": line.pod_kind, "pod_value": line.pod_value,
                        "pod_duration": line.pod_duration, "pod_source": line.pod_source,
                        "pod_sys_mg_kg_bw_day": line.pod_sys_mg_kg_bw_day,
                        "percent": line.percent,
                        "dermal_absorption_percent": line.dermal_absorption_percent},
                advice=f"lower {line.inci}, or replace defaults with measured dermal absorption "
                       "and oral bioavailability data; a qualified safety assessor decides")
        if sheet.missing_pod:
            yield self.finding(
                Severity(options["missing_severity"]),
                f"no point of departure (NOAEL) in the library for "
                f"{', '.join(sheet.missing_pod)}: no margin of safety can be worked out",
                ingredients=sheet.missing_pod,
                advice="add a toxicology record (NOAEL in mg/kg bw/day, species, study, source)")
        if sheet.defaults_used:
            yield self.finding(
                Severity.INFO,
                "defaults used in the exposure arithmetic: " + "; ".join(sheet.defaults_used),
                ingredients=[line.inci for line in sheet.lines],
                advice="defaults are conservative placeholders, not measured values; replace "
                       "them with substance data where it exists")
