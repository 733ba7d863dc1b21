"""The droplets: the interface the emulsifier must cover, and how fast they cream (Stokes)."""

from __future__ import annotations

from formdb.facts.phase_volume import PhaseVolumes
from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import CreamingFacts, FactsSettings, InterfaceFacts
from formdb.science.interface import emulsifier_needed_g, interfacial_area_m2, specific_area
from formdb.science.stokes import creaming_velocity


def interface(formula: ResolvedFormula, settings: FactsSettings, phases: PhaseVolumes,
              emulsifier_percent: float) -> InterfaceFacts | None:
    """Interfacial area at the stated (or default) droplet size, and the emulsifier it needs."""
    fraction, dispersed_volume_ml = phases.fraction, phases.dispersed_volume_ml()
    if fraction is None or dispersed_volume_ml is None or dispersed_volume_ml <= 0:
        return None
    process = formula.formula.process
    if process.droplet_diameter_um is not None:
        d_um, d_source = process.droplet_diameter_um, "stated in the formula"
    else:
        d_um, d_source = settings.droplet_diameter_um, settings.droplet_diameter_source
    if process.surface_excess_mg_m2 is not None:
        gamma, g_source = process.surface_excess_mg_m2, "stated in the formula"
    else:
        gamma, g_source = settings.surface_excess_mg_m2, settings.surface_excess_source
    d_m = d_um * 1e-6
    area = interfacial_area_m2(dispersed_volume_ml * 1e-6, d_m)
    needed = emulsifier_needed_g(area, gamma)
    return InterfaceFacts(
        droplet_diameter_um=d_um, droplet_source=d_source,
        specific_area_m2_per_ml=specific_area(fraction, d_m) * 1e-6, area_m2=area,
        surface_excess_mg_m2=gamma, surface_excess_source=g_source,
        emulsifier_needed_percent=needed, emulsifier_present_percent=emulsifier_percent,
        coverage_ratio=emulsifier_percent / needed if needed > 0 else None)


def creaming(formula: ResolvedFormula, settings: FactsSettings, phases: PhaseVolumes,
             work: Work) -> CreamingFacts | None:
    """Stokes creaming speed with the viscosity of the continuous phase's main ingredient."""
    if phases.dispersed is None:
        return None
    oil, water = phases.oil, phases.water
    disp, cont = (oil, water) if phases.dispersed == "oil" else (water, oil)
    d_vol, c_vol = disp.volume(), cont.volume()
    if not d_vol or not c_vol or disp.mass <= 0 or cont.mass <= 0:
        return None
    rho_d, rho_c = disp.mass / d_vol * 1000.0, cont.mass / c_vol * 1000.0
    main = cont.main_part()
    records = {ln.ingredient.inci_name: ln.ingredient for ln in formula.lines}
    viscosity = records[main].p.viscosity_mpas if main in records else None
    if main is not None and viscosity is not None:
        work.read("viscosity_mpas", main)
    if main is not None and viscosity is None:
        work.gap("viscosity_mpas", main, "creaming speed",
                 "the main ingredient of the continuous phase")
    d_um = formula.formula.process.droplet_diameter_um or settings.droplet_diameter_um
    velocity = None
    if viscosity is not None and rho_d != rho_c:
        velocity = creaming_velocity(d_um * 1e-6, rho_d, rho_c, viscosity / 1000.0)
        work.note(f"creaming speed uses the viscosity of {main} alone; thickeners and crowded "
                  "drops slow creaming, so the real speed is lower (Stokes, dilute limit)")
    elif viscosity is not None:
        velocity = 0.0
    return CreamingFacts(
        droplet_diameter_um=d_um, dispersed_density_kg_m3=rho_d, continuous_density_kg_m3=rho_c,
        density_difference_kg_m3=rho_c - rho_d, continuous_viscosity_mpas=viscosity,
        viscosity_from=main if viscosity is not None else None, velocity_m_s=velocity,
        velocity_mm_per_day=velocity * 1000.0 * 86400.0 if velocity is not None else None)
