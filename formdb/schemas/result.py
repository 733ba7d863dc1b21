"""The result of checking one formula: the hand-worked numbers (``FormulaFacts``) and the findings.

``FormulaFacts`` holds what a chemist would work out on paper before a batch, computed once per
formula by ``formdb.rules.facts`` and shown by every report. Masses are grams per 100 g of the
formula as written (so equal to % w/w); volumes are mL for those grams. A number that cannot be
worked out is ``None`` and the reason is in ``gaps`` (missing library values) or ``notes``.
Numbers are kept at full precision; ``round_value`` rounds them only at output.
"""

from __future__ import annotations

import math
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from formdb.schemas.findings import Finding
from formdb.schemas.vocab import Category, EmulsionType, IonicCharacter, Severity, Solubility

PhaseName = Literal["oil", "water", "none"]

# Default surface load used when the formula states none: the middle of the 1-4 mg/m2 typical of
# small-molecule surfactants and proteins (from memory; formdb.science.interface keeps the same
# figure as TYPICAL_SURFACE_EXCESS_MG_M2, and a test holds the two equal).
DEFAULT_SURFACE_EXCESS_MG_M2 = 2.0
DEFAULT_SURFACE_EXCESS_SOURCE = ("from memory: the middle of the 1-4 mg/m2 typical of small-"
                                 "molecule surfactants and proteins at an oil-water interface")
# Default droplet diameter: cosmetic creams and lotions mostly have drops of 1-10 um
# (rule of thumb).
DEFAULT_DROPLET_DIAMETER_UM = 5.0
# Defaults of the exposure arithmetic (regulatory.md section 2.1). Each is flagged wherever used.
DEFAULT_BODY_WEIGHT_KG = 60.0  # SCCS NoG default adult body weight (from memory)
DEFAULT_DERMAL_ABSORPTION_PERCENT = 50.0  # SCCS practice without adequate data (from memory)
# SCCS Notes of Guidance, 12th revision (SCCS/1647/22), the defaults without data: 50 % oral
# bioavailability when the PoD is oral and no absorption data exist, 50 % dermal absorption when
# no adequate study exists (regulatory.md section 2.1; from memory, NoG text not read)
DEFAULT_ORAL_BIOAVAILABILITY_PERCENT = 50.0
SCCS_NOG = "SCCS Notes of Guidance, 12th revision (SCCS/1647/22, adopted 15 May 2023)"
DERMAL_ABSORPTION_DEFAULT_SOURCE = (
    "SCCS NoG 12th revision (SCCS/1647/22) section 3-3.5, dermal absorption: default without "
    "adequate data (from memory)")
ORAL_BIOAVAILABILITY_DEFAULT_SOURCE = (
    "SCCS NoG 12th revision (SCCS/1647/22) section 3-4, margin of safety: default oral "
    "absorption without data (from memory)")
# Coverage thresholds below which there is no HLB verdict (rule of thumb: a value resting on
# less than four fifths of the phase it describes is not the phase's value).
DEFAULT_MIN_COVERAGE = 0.8
# An oil or water phase below this % w/w is a trace (a fragrance, a preservative dissolved or
# solubilised), not a phase to emulsify (rule of thumb).
DEFAULT_TRACE_PHASE_PERCENT = 1.0
DEFAULT_MOS_THRESHOLD = 100.0  # 10 interspecies x 10 intraspecies (SCCS/1575/16 summary)


class _Frozen(BaseModel):
    model_config = ConfigDict(defer_build=True, frozen=True, extra="forbid")


class FactsSettings(_Frozen):
    """The assumptions behind the facts; a profile's ``[facts]`` table may change them.

    ``hlb_tolerance`` is not set here by a profile: the engine copies HLB01's ``tolerance``
    option into it, so the band a report shows is the band the rule judges.
    """

    hlb_tolerance: float = Field(1.0, ge=0, le=10)
    hlb_wo_max: float = Field(6.0, ge=0, le=20)  # Griffin 1949: W/O emulsifiers about 3-6
    hlb_ow_min: float = Field(8.0, ge=0, le=20)  # Griffin 1949: O/W emulsifiers about 8-16/18
    bancroft_margin: float = Field(0.1, ge=0, lt=1)
    # HLD within this of 0 gives no type indicator (near the optimum either type can form, and
    # the HLD constants are from memory); the same default as HLD01's band
    hld_band: float = Field(0.5, ge=0, le=5)
    droplet_diameter_um: float = Field(DEFAULT_DROPLET_DIAMETER_UM, ge=0.001, le=10000)
    droplet_diameter_source: str = "rule of thumb: creams and lotions mostly have 1-10 um drops"
    surface_excess_mg_m2: float = Field(DEFAULT_SURFACE_EXCESS_MG_M2, ge=0.01, le=100)
    surface_excess_source: str = DEFAULT_SURFACE_EXCESS_SOURCE
    body_weight_kg: float = Field(DEFAULT_BODY_WEIGHT_KG, ge=0.5, le=500)
    body_weight_source: str = "SCCS Notes of Guidance default adult body weight (from memory)"
    default_dermal_absorption_percent: float = Field(DEFAULT_DERMAL_ABSORPTION_PERCENT, ge=0,
                                                     le=100)
    dermal_absorption_source: str = DERMAL_ABSORPTION_DEFAULT_SOURCE
    default_oral_bioavailability_percent: float = Field(DEFAULT_ORAL_BIOAVAILABILITY_PERCENT,
                                                        ge=0.01, le=100)
    oral_bioavailability_source: str = ORAL_BIOAVAILABILITY_DEFAULT_SOURCE
    # coverage below which the required HLB / blend HLB gives no verdict (fractions by mass)
    min_required_hlb_coverage: float = Field(DEFAULT_MIN_COVERAGE, ge=0, le=1)
    min_blend_hlb_coverage: float = Field(DEFAULT_MIN_COVERAGE, ge=0, le=1)
    trace_phase_percent: float = Field(DEFAULT_TRACE_PHASE_PERCENT, ge=0, le=50)
    # not set in [facts]: the engine copies MOS01's ``threshold`` here (as for hlb_tolerance)
    mos_threshold: float = Field(DEFAULT_MOS_THRESHOLD, ge=1, le=100_000)
    # not set in [facts]: the engine copies ALG01's ``jurisdiction`` here
    label_jurisdiction: str = "EU"


class LineFacts(_Frozen):
    """Where one formula line goes and how much of it stays there."""

    line_no: int
    inci: str
    percent: float
    phase: PhaseName
    phase_reason: str  # e.g. "solubility: oil", "role: humectant"
    density: float | None  # g/mL, from the library
    volume_ml: float | None  # volume of what stays in the phase (None without a density)
    remaining_percent: float  # what is left in its phase after soap formation
    emulsifier: bool  # counted in the emulsifier system
    required_hlb_member: bool  # counted in the oil phase's required HLB
    phase_letter: str | None = None  # the formulator's process phase (A, B, ...) as written


class EmulsifierFacts(_Frozen):
    """One member of the emulsifier system (a formula line, or soap formed in the batch)."""

    inci: str
    percent: float
    hlb: float | None
    solubility: Solubility | None
    ionic_character: IonicCharacter | None
    share: float  # fraction of the emulsifier system's mass
    formed_in_place: bool = False
    line_no: int | None = None  # None for soap formed in the batch
    side: Literal["water", "oil"] | None = None  # Bancroft's side (None: not counted)
    # the HLB scale of the value: Griffin's (nonionics, 0-20) or Davies' group numbers (ionics,
    # soaps); values of the two scales are never averaged together
    scale: Literal["griffin", "davies"] | None = None


class SoapFacts(_Frozen):
    """A fatty acid neutralised by a base in the batch, worked out from the moles."""

    acid: str
    base: str
    soap: str  # the library soap's INCI name, or a description when no soap pair matches
    soap_in_library: bool
    soap_percent: float
    acid_used_percent: float
    base_used_percent: float
    acid_left_percent: float
    base_left_percent: float
    water_formed_percent: float
    limiting: str  # "acid", "base" or "neither" (exact equivalence)
    cation_valence: int | None
    favours: EmulsionType | None  # monovalent soaps O/W, divalent and trivalent W/O
    hlb: float | None
    source: str | None  # the soap pair's source key, when one matched
    acid_line_no: int
    base_line_no: int
    classes: tuple[str, ...] = ("carboxylate soap",)  # compatibility classes (ION01)


# The library properties whose reads the facts record (FormulaFacts.values_read): a value is
# recorded where a number or verdict of the facts is worked from it (both emulsion types'
# required HLB are worked out, but only the working type's is read for the balance; a density
# is read for the dispersed fraction, a viscosity only for the continuous phase's main
# ingredient, a base's constants only where a soap forms or alkali is left free).
RECORDED_PROPERTIES = frozenset({
    "hlb", "required_hlb_ow", "required_hlb_wo", "solubility", "ionic_character", "density",
    "molar_mass", "base_equivalents", "acid_value", "cation_valence", "neutralisation_water",
    "viscosity_mpas", "eacn", "hld_cc", "ethoxylated",
    # the ends of the sources' range of a required HLB, where they widen HLB01's band
    "required_hlb_ow_low", "required_hlb_ow_high", "required_hlb_wo_low", "required_hlb_wo_high"})


class ValueRead(_Frozen):
    """A library value a verdict of the facts rests on: whose and which property."""

    ingredient: str
    property: str


class RequiredHlbFacts(_Frozen):
    """Required HLB of the oil phase for one emulsion type (weight average over known values)."""

    emulsion_type: EmulsionType
    value: float | None
    covered_percent: float  # mass of oil-phase ingredients that had a value
    members_percent: float  # mass of all ingredients counted in the oil phase's need
    missing: tuple[str, ...] = ()  # counted ingredients without a value for this type
    # where sources disagree: the weight average of each member's lowest and highest value
    # (a member without a range counts at its value); None when no member has a range
    low: float | None = None
    high: float | None = None
    # an in-house measurement of this very oil phase replaces the weight average: its source key
    # and expanded uncertainty (formdb.facts.measured_rhlb)
    measured_source: str | None = None
    measured_uncertainty: float | None = None
    # the library values the value rests on (none once a measurement replaces the average)
    rests_on: tuple[ValueRead, ...] = ()


class HlbSystemFacts(_Frozen):
    """Which HLB scale the blend rests on and how much of the emulsifier system it covers."""

    griffin_percent: float  # emulsifier mass with an HLB on Griffin's scale (averaged)
    davies_percent: float  # ionic members on Davies' scale (never averaged with Griffin's)
    no_hlb_percent: float  # members with no HLB in the library
    griffin_value: float | None  # weight average over the Griffin members, whatever the cover
    coverage: float  # griffin_percent / the emulsifier system's mass
    min_coverage: float
    led_by: Literal["nonionic", "ionic", "none"]
    assessment: str  # which assessment the system gets, in words


class TypeIndicator(_Frozen):
    """One indicator of the emulsion type and what it rests on."""

    name: Literal["hlb class", "soap and ionic", "hld", "solubility split"]
    favours: EmulsionType | None
    mass_percent: float  # emulsifier mass behind it
    detail: str


class TypeDecision(_Frozen):
    """The emulsion type decided from the emulsifier system as a whole (the decision table of
    ``science.emulsion_type.decide_type``)."""

    predicted: EmulsionType | None
    row: str  # the decision table's row, in words
    strong: bool  # True when decisive indicators agree or one decides alone
    indicators: tuple[TypeIndicator, ...] = ()


class KindFacts(_Frozen):
    """The kind of product: stated with ``kind`` in the formula, else recognised from it."""

    kind: Literal["emulsion", "anhydrous", "surfactant solution", "soap cream", "aqueous gel",
                  "aqueous solution"]
    source: Literal["stated", "recognised"]
    reason: str
    high_internal_phase: bool = False  # an emulsion whose dispersed phase exceeds the packing
    trace_oil_percent: float = 0.0  # oil-phase mass below the trace threshold, if ignored


class FreeBaseFacts(_Frozen):
    """A base left free in the batch: after the soaps formed, or with no acid to take it."""

    base: str
    free_percent: float  # % w/w of the formula
    strong: bool  # an alkali-metal hydroxide (fully dissociated)
    water_phase_percent: float  # the water it dissolves in, % w/w of the formula
    molar_concentration: float | None  # mol/L in the water phase (about 1 g/mL)
    ph_low: float | None  # the pH range to expect from the free base alone
    ph_high: float | None
    acids_present: tuple[str, ...] = ()  # other acids that may take some of it up (no value)
    after_soap: bool = False
    taken_by: tuple[str, ...] = ()  # acids with an acid value that took part of it first


class BlendSolution(_Frozen):
    """The proportions of the formula's own emulsifiers that would give the required HLB."""

    target_hlb: float
    emulsifiers: tuple[str, ...]
    hlbs: tuple[float, ...]
    reachable: bool
    reachable_low: float
    reachable_high: float
    fractions: tuple[float, ...] | None = None  # weight fractions of the system, same order
    percents: tuple[float, ...] | None = None  # at the system's present total %
    method: str = ""


class PhaseFacts(_Frozen):
    """Masses and volumes of the two liquid phases (per 100 g of formula)."""

    oil_percent: float
    water_percent: float
    other_percent: float  # insoluble solids and lines that fit neither phase
    oil_volume_ml: float | None
    water_volume_ml: float | None
    oil_density: float | None  # g/mL, mass / volume of the phase
    water_density: float | None
    missing_density: tuple[str, ...] = ()
    # lines without a density whose volume was estimated at their phase's mean density
    estimated_percent: float = 0.0
    neither: tuple[str, ...] = ()


class FractionRange(_Frozen):
    """Where the dispersed fraction can lie when some densities are estimated: each missing
    density anywhere between the usual densities of its line's roles (science.density)."""

    low: float
    high: float
    estimated: tuple[str, ...]  # the lines (or soaps) whose density is estimated
    # % w/w of the formula in the dispersed phase without a library density, and that as a
    # share of the dispersed phase's mass
    dispersed_estimated_percent: float
    dispersed_estimated_share: float


class InterfaceFacts(_Frozen):
    """Interface created at the droplet size, and the emulsifier needed to cover it."""

    droplet_diameter_um: float
    droplet_source: str
    specific_area_m2_per_ml: float  # 6 phi / d, per mL of emulsion
    area_m2: float  # total interface for the dispersed volume of 100 g of formula
    surface_excess_mg_m2: float
    surface_excess_source: str
    emulsifier_needed_percent: float
    emulsifier_present_percent: float
    coverage_ratio: float | None  # present / needed


class CreamingFacts(_Frozen):
    """Stokes' law creaming (positive) or sedimentation (negative) speed of one droplet."""

    droplet_diameter_um: float
    dispersed_density_kg_m3: float
    continuous_density_kg_m3: float
    density_difference_kg_m3: float  # continuous minus dispersed
    continuous_viscosity_mpas: float | None
    viscosity_from: str | None  # the ingredient whose viscosity stands for the phase
    velocity_m_s: float | None
    velocity_mm_per_day: float | None


class MosLine(_Frozen):
    """The exposure and margin of safety of one substance, with every step written out."""

    inci: str
    percent: float  # C: % in the product (summed over every line that carries it)
    dermal_absorption_percent: float
    dermal_absorption_source: str
    dermal_absorption_default: bool
    sed_mg_kg_bw_day: float
    pod_kind: str
    pod_value: float
    pod_unit: str
    pod_route: str
    species: str
    study: str
    pod_source: str
    pod_duration: str | None = None  # the study's duration, where the library holds it
    oral_bioavailability_percent: float
    oral_bioavailability_source: str
    oral_bioavailability_default: bool
    pod_sys_mg_kg_bw_day: float
    mos: float | None  # None when the SED is zero
    threshold: float
    below_threshold: bool
    steps: tuple[str, ...] = ()


class ExposureFacts(_Frozen):
    """The exposure sheet: the product type's row, the defaults used, one MosLine per substance
    with a point of departure, and the substances that need one but have none."""

    product: str
    category: str
    exposure_source: str
    amount_g_day: float | None
    retention_factor: float
    exposure_mg_kg_bw_day: float  # E_product
    exposure_from: Literal["table", "grams per day and body weight"]
    body_weight_kg: float | None  # used only when the table gives grams per day alone
    threshold: float
    lines: tuple[MosLine, ...] = ()
    steps: tuple[str, ...] = ()
    defaults_used: tuple[str, ...] = ()
    missing_pod: tuple[str, ...] = ()


class SubstanceFacts(_Frozen):
    """One substance of the formula after mixtures are exploded into their constituents."""

    inci: str
    percent: float  # % in the product, summed over every source
    sources: tuple[str, ...]  # e.g. "line 5 (Parfum): 2 % of 0.5 %"


class AllergenLine(_Frozen):
    """One labelled allergen: its total in the product, summed over every source."""

    inci: str
    percent: float
    sources: tuple[str, ...]  # where it comes from, e.g. "line 4 (Limonene)"
    must_label: bool  # total above the threshold


class AllergenFacts(_Frozen):
    """The allergen table: each allergen's total against the labelling threshold."""

    jurisdiction: str
    category: str
    threshold_percent: float
    entry: str
    list_name: str
    label_rule: str
    source: str
    list_date: str
    lines: tuple[AllergenLine, ...] = ()
    must_label: tuple[str, ...] = ()


class DataGap(_Frozen):
    """A library value that is missing and the number it blocks or weakens."""

    property: str
    ingredients: tuple[str, ...]
    blocks: str
    detail: str = ""


class HldFacts(_Frozen):
    """Salager's HLD of the formula at its process temperature: a third, temperature-aware type
    indicator, and for ethoxylated nonionics the phase inversion temperature
    (formdb.facts.temperature). ``status`` says whether the data were there."""

    status: Literal["computed", "not enough data"]
    reason: str | None = None  # why not, when status is "not enough data"
    form: Literal["nonionic", "ionic"] | None = None
    temperature_c: float = 25.0
    temperature_from: str = "no process temperature given: room temperature assumed"
    eacn: float | None = None  # of the oil phase, weight average
    cc: float | None = None  # of the surfactant system, weight average
    salinity_g_100ml: float | None = None  # sodium chloride per 100 g of the water phase
    hld: float | None = None  # at temperature_c
    hld_25c: float | None = None
    favours: EmulsionType | None = None  # HLD < 0: O/W; > 0: W/O
    pit_c: float | None = None  # where the nonionic HLD crosses zero
    missing: tuple[str, ...] = ()  # lines without the value the HLD needs
    constants: str = ("K 0.17, c_T 0.06 /K, b 0.13 per g/100 mL, a_T 0.01 /K: from memory, not "
                      "yet checked against the published papers (Salager; Bourrel et al. 1980)")


class FormulaFacts(_Frozen):
    """The numbers a chemist works out by hand, once per formula, shown by every report."""

    basis: str = "per 100 g of formula as written; masses in g (= % w/w), volumes in mL"
    settings: FactsSettings = Field(default_factory=FactsSettings)
    percent_total: float
    lines: tuple[LineFacts, ...] = ()

    emulsifiers: tuple[EmulsifierFacts, ...] = ()
    emulsifier_percent: float = 0.0
    co_emulsifiers: tuple[str, ...] = ()
    soaps: tuple[SoapFacts, ...] = ()
    blend_hlb: float | None = None
    blend_hlb_covered_percent: float = 0.0  # emulsifier mass with a known HLB
    hlb_system: HlbSystemFacts | None = None
    required_hlb_coverage: float | None = None  # covered / counted oil phase, working type

    required_hlb_ow: RequiredHlbFacts
    required_hlb_wo: RequiredHlbFacts
    working_type: EmulsionType | None = None  # the type the required HLB and phases are for
    working_type_source: Literal["intended", "predicted"] | None = None
    required_hlb: float | None = None
    target_low: float | None = None
    target_high: float | None = None
    blend_solution: BlendSolution | None = None

    water_side_emulsifier_percent: float = 0.0
    oil_side_emulsifier_percent: float = 0.0
    type_by_bancroft: EmulsionType | None = None
    type_by_hlb: EmulsionType | None = None
    predicted_type: EmulsionType | None = None
    types_disagree: bool = False
    type_decision: TypeDecision | None = None
    kind: KindFacts | None = None
    free_bases: tuple[FreeBaseFacts, ...] = ()

    phases: PhaseFacts
    dispersed_phase: Literal["oil", "water"] | None = None
    dispersed_fraction: float | None = None  # VOLUME fraction of the dispersed phase
    # its range when a density is estimated; None when every density is the library's
    dispersed_fraction_range: FractionRange | None = None
    packing_limit: float
    random_close_packing: float
    interface: InterfaceFacts | None = None
    creaming: CreamingFacts | None = None
    exposure: ExposureFacts | None = None  # None without a product type
    allergens: AllergenFacts | None = None  # None when the formula holds no labelled allergen
    # substance-level composition; empty unless a line is a mixture with declared constituents
    substances: tuple[SubstanceFacts, ...] = ()

    hld: HldFacts | None = None  # the temperature-aware type indicator
    # the library values (of RECORDED_PROPERTIES) the verdicts rest on, in the order read
    values_read: tuple[ValueRead, ...] = ()
    gaps: tuple[DataGap, ...] = ()
    notes: tuple[str, ...] = ()


class ProfileRef(_Frozen):
    name: str
    version: str


def _finding_key(finding: Finding) -> tuple[int, str, tuple[str, ...], str]:
    return (-finding.severity.rank, finding.rule, finding.ingredients, finding.message)


def sort_findings(findings: list[Finding] | tuple[Finding, ...]) -> tuple[Finding, ...]:
    """Most severe first, then by rule code, ingredients and message (a stable report order)."""
    return tuple(sorted(findings, key=_finding_key))


class CheckResult(_Frozen):
    """One formula checked against one profile."""

    formula: str
    source: str
    content_hash: str
    category: Category
    product: str | None = None
    intended_type: EmulsionType | None = None
    ph: float | None = None
    profile: ProfileRef
    facts: FormulaFacts
    findings: tuple[Finding, ...] = ()

    @property
    def predicted_type(self) -> EmulsionType | None:
        return self.facts.predicted_type

    def severity_counts(self) -> dict[str, int]:
        """How many findings of each severity ({"error": n, "warning": n, "info": n})."""
        counts = {s.value: 0 for s in Severity}
        for finding in self.findings:
            counts[finding.severity.value] += 1
        return counts

    @property
    def has_errors(self) -> bool:
        return any(f.severity.rank >= 3 for f in self.findings)

    def to_contract_json(self) -> dict[str, Any]:
        """DESIGN.md section 3 keys first, then everything a text report shows, rounded."""
        return contract_json(self)


# ----- rounding at output -------------------------------------------------------------------

def _is_hlb_key(key: str) -> bool:
    return "hlb" in key or key in {"target_low", "target_high", "reachable_low",
                                   "reachable_high"}


def round_value(key: str, value: Any) -> Any:
    """Round one number by what it is: 2 decimals for HLB, 3 for fractions, else 4 figures."""
    if isinstance(value, bool) or not isinstance(value, float):
        return value
    if not math.isfinite(value):
        return None
    if "fraction" in key or "share" in key or "packing" in key or "ratio" in key:
        return round(value, 3)
    if _is_hlb_key(key):
        return round(value, 2)
    if "percent" in key or key in {"ph", "ph_min", "ph_max"}:
        return round(value, 4)
    if value == 0:
        return 0.0
    return float(f"{value:.4g}")


def rounded(data: Any, key: str = "") -> Any:
    """Round every number in a JSON-like structure, keyed by its field name."""
    if isinstance(data, dict):
        return {k: rounded(v, str(k)) for k, v in data.items()}
    if isinstance(data, list | tuple):
        return [rounded(v, key) for v in data]
    return round_value(key, data)


def finding_json(finding: Finding) -> dict[str, Any]:
    return {
        "rule": finding.rule,
        "severity": finding.severity.value,
        "message": finding.message,
        "ingredients": list(finding.ingredients),
        "name": finding.name,
        "values": rounded(dict(finding.values)),
        "advice": finding.advice,
    }


def contract_json(result: CheckResult) -> dict[str, Any]:
    facts = result.facts
    return {
        "formula": result.formula,
        "predicted_type": facts.predicted_type.value if facts.predicted_type else None,
        "blend_hlb": round_value("blend_hlb", facts.blend_hlb),
        "required_hlb": round_value("required_hlb", facts.required_hlb),
        "dispersed_fraction": round_value("dispersed_fraction", facts.dispersed_fraction),
        "findings": [finding_json(f) for f in result.findings],
        "source": result.source,
        "content_hash": result.content_hash,
        "category": result.category.value,
        "product": result.product,
        "intended_type": result.intended_type.value if result.intended_type else None,
        "ph": result.ph,
        "profile": {"name": result.profile.name, "version": result.profile.version},
        "facts": rounded(facts.model_dump(mode="json")),
    }
