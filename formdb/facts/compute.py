"""Work out a formula's facts once: phases, soap formed in place, HLB balance, type, packing.

This is the arithmetic a chemist does by hand before a batch, on 100 g of the formula as written.
The science (``formdb.science``) does each calculation; the modules of this package decide what
goes in. The order of the steps is the order of the data gaps and notes in every report.
"""

from __future__ import annotations

from dataclasses import replace

from formdb.facts import droplets, hlb, phase_volume
from formdb.facts.acid_base import free_bases
from formdb.facts.allergen_table import allergen_table
from formdb.facts.composition import has_mixtures, substances
from formdb.facts.emulsion_type import emulsion_type
from formdb.facts.exposure_sheet import exposure_sheet
from formdb.facts.kind import EMULSION_KINDS, recognise
from formdb.facts.measured_rhlb import apply_measured
from formdb.facts.phases import is_co_emulsifier_only, line_facts
from formdb.facts.soap import form_soaps
from formdb.facts.temperature import hld_facts
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import (
    FactsSettings,
    FormulaFacts,
    RequiredHlbFacts,
    SubstanceFacts,
)
from formdb.schemas.vocab import EmulsionType
from formdb.science.packing import CLOSE_PACKING, RANDOM_CLOSE_PACKING, above


def compute_facts(formula: ResolvedFormula, reference: ReferenceData,
                  settings: FactsSettings | None = None) -> FormulaFacts:
    """Every hand-worked number of one formula (pure: no database, no rule options)."""
    settings = settings or FactsSettings()
    work = Work(remaining={ln.line_no: ln.percent for ln in formula.lines})
    form_soaps(formula, reference, work)
    lines = line_facts(formula, work, settings.trace_phase_percent)
    emulsifiers = hlb.emulsifiers(formula, lines, work)
    emulsifier_percent = sum(e.percent for e in emulsifiers)
    by_no = {ln.line_no: ln.ingredient for ln in formula.lines}
    co_emulsifiers = tuple(lf.inci for lf in lines if is_co_emulsifier_only(by_no[lf.line_no]))
    blend, blend_covered, system = hlb.blend(emulsifiers, emulsifier_percent,
                                             settings.min_blend_hlb_coverage, work)

    product = recognise(formula, lines, emulsifiers, work.water_formed, settings)
    hld = hld_facts(formula, lines, emulsifiers, work) if product.kind in EMULSION_KINDS else None
    kind = emulsion_type(formula, emulsifiers, blend, blend_covered, settings, work, hld)
    if product.kind not in EMULSION_KINDS:
        work.drop_gaps(hlb.BLEND_HLB)
        work.note(f"{product.kind} ({product.reason}): no emulsion type, required HLB, dispersed "
                  "phase or creaming is worked out")
        kind = replace(kind, working=None, source=None, predicted=None, disagree=False,
                       decision=None)
    measured = reference.measured_required_hlb
    rhlb_ow = apply_measured(hlb.required(formula, lines, EmulsionType.OW, work), formula,
                             lines, measured, work)
    rhlb_wo = apply_measured(hlb.required(formula, lines, EmulsionType.WO, work), formula,
                             lines, measured, work)
    # a system led by ionic members (a soap cream, say) gets no HLB balance: its required HLB
    # is shown for reference only, so no verdict, band or ratio advice rests on it
    balanced = product.kind in EMULSION_KINDS and (system is None or system.led_by != "ionic")
    required, coverage = (hlb.working_required(kind.working, rhlb_ow, rhlb_wo,
                                               settings.min_required_hlb_coverage, work)
                          if balanced else (None, None))
    tol = settings.hlb_tolerance
    solution = hlb.solve(required, emulsifiers) if required is not None else None

    phases = phase_volume.phase_volumes(formula, lines, kind.working, work,
                                        emulsion=product.kind in EMULSION_KINDS)
    # high internal phase only when the fraction is above close packing at every density the
    # estimated ones could have
    lowest = phases.fraction_range.low if phases.fraction_range else phases.fraction
    if lowest is not None and above(lowest, CLOSE_PACKING):
        product = product.model_copy(update={"high_internal_phase": True})
    interface = droplets.interface(formula, settings, phases, emulsifier_percent)
    creaming = droplets.creaming(formula, settings, phases, work)
    bases = free_bases(formula, work)

    return FormulaFacts(
        settings=settings,
        percent_total=sum(ln.percent for ln in formula.lines),
        lines=tuple(lines), emulsifiers=tuple(emulsifiers),
        emulsifier_percent=emulsifier_percent, co_emulsifiers=co_emulsifiers,
        soaps=tuple(s.facts for s in work.soaps), blend_hlb=blend,
        blend_hlb_covered_percent=blend_covered, hlb_system=system,
        required_hlb_coverage=coverage,
        required_hlb_ow=rhlb_ow, required_hlb_wo=rhlb_wo,
        working_type=kind.working, working_type_source=kind.source,
        required_hlb=required,
        target_low=(_chosen_low(kind.working, rhlb_ow, rhlb_wo, required) - tol
                    if required is not None else None),
        target_high=(_chosen_high(kind.working, rhlb_ow, rhlb_wo, required) + tol
                     if required is not None else None),
        blend_solution=solution,
        water_side_emulsifier_percent=kind.water_side, oil_side_emulsifier_percent=kind.oil_side,
        type_by_bancroft=kind.by_bancroft, type_by_hlb=kind.by_hlb,
        predicted_type=kind.predicted, types_disagree=kind.disagree,
        type_decision=kind.decision, kind=product, free_bases=bases,
        phases=phases.facts,
        dispersed_phase=phases.dispersed,
        dispersed_fraction=phases.fraction, dispersed_fraction_range=phases.fraction_range,
        packing_limit=CLOSE_PACKING,
        random_close_packing=RANDOM_CLOSE_PACKING, interface=interface, creaming=creaming,
        exposure=exposure_sheet(formula, reference, settings),
        allergens=allergen_table(formula, reference, settings),
        substances=tuple(
            SubstanceFacts(inci=item.record.inci_name, percent=item.percent,
                           sources=tuple(item.sources))
            for item in sorted(substances(formula, reference).values(),
                               key=lambda i: (-i.percent, i.record.inci_name))
        ) if has_mixtures(formula, reference) else (),
        hld=hld,
        values_read=work.values_read(),
        gaps=work.data_gaps(),
        notes=tuple(work.notes))


def _chosen(working: EmulsionType | None, rhlb_ow: RequiredHlbFacts,
            rhlb_wo: RequiredHlbFacts) -> RequiredHlbFacts | None:
    return rhlb_ow if working == EmulsionType.OW else rhlb_wo if working else None


def _chosen_low(working: EmulsionType | None, rhlb_ow: RequiredHlbFacts,
                rhlb_wo: RequiredHlbFacts, required: float) -> float:
    """The low end of the required HLB where sources disagree, else the value."""
    chosen = _chosen(working, rhlb_ow, rhlb_wo)
    return min(chosen.low, required) if chosen and chosen.low is not None else required


def _chosen_high(working: EmulsionType | None, rhlb_ow: RequiredHlbFacts,
                 rhlb_wo: RequiredHlbFacts, required: float) -> float:
    chosen = _chosen(working, rhlb_ow, rhlb_wo)
    return max(chosen.high, required) if chosen and chosen.high is not None else required
