"""The two liquid phases by mass and volume, and the dispersed phase's volume fraction.

A line without a density takes its phase's mean density (noted, and a data gap); water formed by
neutralisation joins the water phase. The mean is a point estimate: the fraction's range puts
each missing density anywhere between the usual densities of the line's roles
(science.density), so a verdict near a packing limit can tell whether it rests on the guess.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Literal

from formdb.facts.work import Work
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.result import FractionRange, LineFacts, PhaseFacts
from formdb.schemas.vocab import EmulsionType, Role
from formdb.science.density import density_bounds
from formdb.science.packing import volume_fraction, volume_fraction_bounds

WATER_DENSITY = 0.99705  # g/mL at 25 degC (CRC Handbook; IAPWS), for water formed by neutralising


@dataclass
class Phase:
    """One liquid phase: its mass and its parts (mass, density or None, name), with the
    (lowest, highest) density each part without one could have."""

    mass: float = 0.0
    parts: list[tuple[float, float | None, str]] = field(default_factory=list)
    bounds: list[tuple[float, float]] = field(default_factory=list)

    def add(self, mass: float, density: float | None, name: str,
            roles: Iterable[str] = ()) -> None:
        if mass > 0:
            self.mass += mass
            self.parts.append((mass, density, name))
            self.bounds.append(density_bounds(roles))

    def mean_density(self) -> float | None:
        known = [(m, d) for m, d, _ in self.parts if d]
        volume = sum(m / d for m, d in known if d)
        return sum(m for m, _ in known) / volume if volume > 0 else None

    def filled(self) -> list[tuple[float, float]] | None:
        """(mass, density) with missing densities at the phase mean; None if nothing known."""
        if not self.parts:
            return []
        mean = self.mean_density()
        if mean is None:
            return None
        return [(m, d if d else mean) for m, d, _ in self.parts]

    def volume(self) -> float | None:
        filled = self.filled()
        return None if filled is None else sum(m / d for m, d in filled)

    def ranged(self) -> list[tuple[float, float, float]] | None:
        """(mass, lowest, highest density): a known density at both ends, a missing one over its
        roles' usual range widened to take in the phase mean it is estimated at."""
        mean = self.mean_density()
        if mean is None and self.parts:
            return None
        out = []
        for (mass, density, _), (low, high) in zip(self.parts, self.bounds, strict=True):
            if density:
                out.append((mass, density, density))
            else:
                assert mean is not None
                out.append((mass, min(low, mean), max(high, mean)))
        return out

    def estimated_mass(self) -> float:
        return sum(m for m, d, _ in self.parts if not d)

    def missing(self) -> list[str]:
        return [name for _, d, name in self.parts if not d]

    def main_part(self) -> str | None:
        return max(self.parts, key=lambda p: p[0])[2] if self.parts else None


@dataclass(frozen=True)
class PhaseVolumes:
    oil: Phase
    water: Phase
    facts: PhaseFacts
    dispersed: Literal["oil", "water"] | None
    fraction: float | None  # volume fraction of the dispersed phase
    fraction_range: FractionRange | None = None  # None when no density is estimated

    def dispersed_volume_ml(self) -> float | None:
        return self.facts.oil_volume_ml if self.dispersed == "oil" else \
            self.facts.water_volume_ml


def _phases(formula: ResolvedFormula, lines: list[LineFacts],
            work: Work) -> tuple[Phase, Phase, float, list[str]]:
    oil, water = Phase(), Phase()
    other, neither = 0.0, []
    roles = {ln.line_no: [r.value for r in ln.ingredient.roles] for ln in formula.lines}
    for lf in lines:
        if lf.phase == "oil":
            oil.add(lf.remaining_percent, lf.density, lf.inci, roles.get(lf.line_no, ()))
        elif lf.phase == "water":
            water.add(lf.remaining_percent, lf.density, lf.inci, roles.get(lf.line_no, ()))
        elif lf.remaining_percent > 0:
            other += lf.remaining_percent
            neither.append(lf.inci)
    for soap in work.soaps:
        target = oil if soap.side == "oil" else water if soap.side == "water" else None
        if target is None:
            other += soap.facts.soap_percent
            neither.append(soap.facts.soap)
        else:
            target.add(soap.facts.soap_percent, soap.density, soap.facts.soap,
                       (Role.EMULSIFIER.value,))
    water.add(work.water_formed, WATER_DENSITY, "water formed by neutralisation")
    return oil, water, other, neither


def phase_volumes(formula: ResolvedFormula, lines: list[LineFacts],
                  working: EmulsionType | None, work: Work,
                  emulsion: bool = True) -> PhaseVolumes:
    """Both phases, and (with a working type) which is dispersed and its volume fraction, with
    the fraction's range when a density is estimated. Missing densities are data gaps only for
    an emulsion (``emulsion``), where they weaken the dispersed fraction; other kinds of
    product have none."""
    oil, water, other, neither = _phases(formula, lines, work)
    if neither:
        work.note(f"in neither liquid phase: {', '.join(neither)}")
    for phase in (oil, water) if emulsion else ():
        for name in phase.missing():
            work.gap("density", name, "dispersed_fraction",
                     "estimated at its phase's mean density")
    oil_volume, water_volume = oil.volume(), water.volume()

    dispersed: Literal["oil", "water"] | None = None if working is None else (
        "oil" if working == EmulsionType.OW else "water")
    fraction, fraction_range = None, None
    if dispersed is not None:
        disp, cont = (oil, water) if dispersed == "oil" else (water, oil)
        d_parts, c_parts = disp.filled(), cont.filled()
        if d_parts is None or c_parts is None:
            work.note("dispersed_fraction: a phase has no ingredient with a density")
        elif d_parts or c_parts:
            fraction = volume_fraction(d_parts, c_parts)
            fraction_range = _range(disp, cont)
    if fraction is not None and emulsion:  # the packing verdict and creaming rest on them
        for lf in lines:
            if lf.phase in ("oil", "water") and lf.density and lf.remaining_percent > 0:
                work.read("density", lf.inci)
        for soap in work.soaps:
            if soap.side in ("oil", "water") and soap.density and soap.facts.soap_in_library:
                work.read("density", soap.facts.soap)

    facts = PhaseFacts(
        oil_percent=oil.mass, water_percent=water.mass, other_percent=other,
        oil_volume_ml=oil_volume, water_volume_ml=water_volume,
        oil_density=oil.mass / oil_volume if oil_volume else None,
        water_density=water.mass / water_volume if water_volume else None,
        missing_density=tuple(oil.missing() + water.missing()),
        estimated_percent=sum(m for p in (oil, water) for m, d, _ in p.parts if not d),
        neither=tuple(neither))
    return PhaseVolumes(oil, water, facts, dispersed, fraction, fraction_range)


def _range(disp: Phase, cont: Phase) -> FractionRange | None:
    """The dispersed fraction's range over the missing densities' bounds; None when every
    density is known (the fraction is then as good as the library's densities)."""
    d_ranged, c_ranged = disp.ranged(), cont.ranged()
    estimated = disp.missing() + cont.missing()
    if not estimated or d_ranged is None or c_ranged is None:
        return None
    low, high = volume_fraction_bounds(d_ranged, c_ranged)
    share = disp.estimated_mass() / disp.mass if disp.mass > 0 else 0.0
    return FractionRange(low=low, high=high, estimated=tuple(estimated),
                         dispersed_estimated_percent=disp.estimated_mass(),
                         dispersed_estimated_share=share)
