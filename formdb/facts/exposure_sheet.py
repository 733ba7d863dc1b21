"""The exposure sheet of a formula: SED and MoS of every substance with a point of departure.

Worked once per formula by ``compute_facts`` when the formula names a product type: E_product
comes from the product type's row of the exposure table (SCCS Notes of Guidance, 12th revision,
Table 3A/3B), C from the formula, DAp and oral bioavailability from the substance's toxicology
record or else the profile's defaults, each default flagged. Every step is written out so a
reviewer can redo it by hand.
"""

from __future__ import annotations

from formdb.facts.composition import substances
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ExposureRecord, ReferenceData, ToxicologyRecord
from formdb.schemas.result import ExposureFacts, FactsSettings, MosLine
from formdb.schemas.vocab import Role
from formdb.science.exposure import (
    exposure_per_kg,
    margin_of_safety,
    systemic_exposure_dose,
    systemic_pod,
)

# substances a reviewer expects a point of departure for (systemically relevant by function)
NEEDS_POD_ROLES = frozenset({Role.PRESERVATIVE, Role.UV_FILTER, Role.ACTIVE})


def _n(value: float) -> str:
    return f"{value:.4g}"


def _e_product(row: ExposureRecord, settings: FactsSettings,
               citation: str) -> tuple[float, str, float | None, list[str], list[str]]:
    steps: list[str] = []
    defaults: list[str] = []
    where = f"{row.product}, retention factor {_n(row.retention_factor)}; {citation}"
    if row.exposure_mg_kg_bw_day is not None:
        value = row.exposure_mg_kg_bw_day
        steps.append(f"E_product = {_n(value)} mg/kg bw/day ({where})")
        return value, "table", None, steps, defaults
    assert row.exposure_g_day is not None  # the seed reader requires one of the two
    bw = settings.body_weight_kg
    value = exposure_per_kg(row.exposure_g_day, bw)
    steps.append(f"E_product = {_n(row.exposure_g_day)} g/day x 1000 / {_n(bw)} kg = "
                 f"{_n(value)} mg/kg bw/day ({where})")
    defaults.append(f"body weight {_n(bw)} kg ({settings.body_weight_source})")
    return value, "grams per day and body weight", bw, steps, defaults


def _study(tox: ToxicologyRecord) -> str:
    """Species, route, duration (where the library holds it) and study of a point of departure."""
    duration = f"{tox.duration}, " if tox.duration else ""
    return f"{tox.species}, {tox.route}, {duration}{tox.study}"


def _line(inci: str, percent: float, tox: ToxicologyRecord, e_product: float,
          settings: FactsSettings, defaults: list[str]) -> MosLine:
    if tox.dermal_absorption_percent is not None:
        dap, dap_source, dap_default = (tox.dermal_absorption_percent,
                                        tox.dermal_absorption_source or tox.source, False)
    else:
        dap, dap_source, dap_default = (settings.default_dermal_absorption_percent,
                                        f"default: {settings.dermal_absorption_source}", True)
        defaults.append(f"{inci}: dermal absorption {_n(dap)} % "
                        f"({settings.dermal_absorption_source})")
    if tox.oral_bioavailability_percent is not None or tox.route != "oral":
        bio = tox.oral_bioavailability_percent if tox.route == "oral" else 100.0
        bio_source = (tox.oral_bioavailability_source or tox.source) if tox.route == "oral" \
            else f"the PoD is from a {tox.route} study: no oral correction"
        bio_default = False
    else:
        bio, bio_source, bio_default = (settings.default_oral_bioavailability_percent,
                                        f"default: {settings.oral_bioavailability_source}", True)
        defaults.append(f"{inci}: oral bioavailability {_n(bio)} % "
                        f"({settings.oral_bioavailability_source})")
    assert bio is not None
    sed = systemic_exposure_dose(e_product, percent, dap)
    pod_sys = systemic_pod(tox.pod_value, bio)
    mos = margin_of_safety(pod_sys, sed)
    threshold = settings.mos_threshold
    below = mos is not None and mos < threshold
    verdict = "no systemic exposure" if mos is None else (
        f"below the threshold {_n(threshold)}" if below else f"at least {_n(threshold)}")
    steps = (
        f"C = {_n(percent)} % ({inci} in the product)",
        f"DAp = {_n(dap)} % ({dap_source})",
        f"SED = E_product x C/100 x DAp/100 = {_n(e_product)} x {_n(percent)}/100 x "
        f"{_n(dap)}/100 = {_n(sed)} mg/kg bw/day",
        f"PoD = {tox.pod_kind} {_n(tox.pod_value)} {tox.pod_unit} ({_study(tox)}; {tox.source})",
        f"PoD_sys = PoD x oral bioavailability/100 = {_n(tox.pod_value)} x {_n(bio)}/100 = "
        f"{_n(pod_sys)} mg/kg bw/day ({bio_source})",
        "MoS = PoD_sys / SED = " + (f"{_n(pod_sys)} / {_n(sed)} = {_n(mos)}: {verdict}"
                                   if mos is not None else f"not defined: {verdict}"),
    )
    return MosLine(
        inci=inci, percent=percent, dermal_absorption_percent=dap,
        dermal_absorption_source=dap_source, dermal_absorption_default=dap_default,
        sed_mg_kg_bw_day=sed, pod_kind=tox.pod_kind, pod_value=tox.pod_value,
        pod_unit=tox.pod_unit, pod_route=tox.route, species=tox.species, study=tox.study,
        pod_source=tox.source, pod_duration=tox.duration, oral_bioavailability_percent=bio,
        oral_bioavailability_source=bio_source, oral_bioavailability_default=bio_default,
        pod_sys_mg_kg_bw_day=pod_sys, mos=mos, threshold=threshold, below_threshold=below,
        steps=steps)


def exposure_sheet(formula: ResolvedFormula, reference: ReferenceData,
                   settings: FactsSettings) -> ExposureFacts | None:
    """The sheet for the formula's product type; None when it names none or the library has no
    row for it."""
    product = formula.formula.product
    if product is None:
        return None
    row = reference.exposure.get(product.strip().casefold())
    if row is None:
        return None
    citation = reference.sources.get(row.source, row.source)
    e_product, e_from, bw, steps, defaults = _e_product(row, settings, citation)
    lines, missing = [], []
    composition = substances(formula, reference)
    needs = {key for key, item in composition.items() if item.record.roles & NEEDS_POD_ROLES}
    for key, item in composition.items():
        inci, percent = item.record.inci_name, item.percent
        tox = reference.toxicology.get(key)
        if tox is None:
            if key in needs:
                missing.append(inci)
            continue
        lines.append(_line(inci, percent, tox, e_product, settings, defaults))
    return ExposureFacts(
        product=row.product, category=row.category, exposure_source=row.source,
        amount_g_day=row.amount_g_day, retention_factor=row.retention_factor,
        exposure_mg_kg_bw_day=e_product, exposure_from=e_from, body_weight_kg=bw,
        threshold=settings.mos_threshold, lines=tuple(lines), steps=tuple(steps),
        defaults_used=tuple(defaults), missing_pod=tuple(missing))
