"""Reference records the rules read besides ingredients: limits, incompatibilities, soaps.

They are data, never code."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

from pydantic import BaseModel, ConfigDict

from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.lists import ListEntry, SnapshotInfo
from formdb.schemas.vocab import Evidence, Severity


class LimitRecord(BaseModel):
    """One concentration limit from a regulatory list.

    ``aggregate``: ``each`` applies ``max_percent`` to every listed ingredient on its own; ``sum``
    applies it to their total. ``basis``: ``as-is`` or ``as-acid`` (a salt's % converted to its
    parent acid, ``acid_inci``, by molar mass). ``max_percent`` 0 means not allowed in ``category``;
    None means no concentration maximum (a row that limits the pH only). ``ph_min``/``ph_max``: the
    product's pH range where the row's ingredient is present (III/15a: pH adjuster up to pH 11).
    ``excludes`` names entries that may not be used in the same product.
    """

    model_config = ConfigDict(defer_build=True, frozen=True)

    key: str
    jurisdiction: str
    list_name: str
    entry: str
    ingredients: tuple[str, ...]
    category: str  # leave-on | rinse-off | any
    product: str | None = None
    max_percent: float | None = None
    aggregate: str = "each"  # each | sum
    basis: str = "as-is"  # as-is | as-acid
    acid_inci: str | None = None
    excludes: tuple[str, ...] = ()
    conditions: str | None = None
    source: str
    list_date: date
    # preservative: binds preservative use only; not-preservative: binds every other use
    purpose: str | None = None
    ph_min: float | None = None
    ph_max: float | None = None


class Incompatibility(BaseModel):
    """A pair of compatibility classes (or INCI names) that do not belong together."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    key: str
    class_a: str
    class_b: str
    severity: Severity
    reason: str
    advice: str
    source: str


class SoapPair(BaseModel):
    """A fatty acid and a base that form a known soap in the batch (the soap is a library entry)."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    acid_inci: str
    base_inci: str
    soap_inci: str
    source: str


class ExposureRecord(BaseModel):
    """Daily exposure to one product type (SCCS Notes of Guidance, Table 3A/3B).

    ``exposure_mg_kg_bw_day`` is E_product after the retention factor; where a table gives only
    grams per day (``exposure_g_day``), E_product is worked out with a body weight.
    """

    model_config = ConfigDict(defer_build=True, frozen=True)

    product: str
    category: str  # leave-on | rinse-off
    amount_g_day: float | None = None
    amount_mg_kg_bw_day: float | None = None
    retention_factor: float
    exposure_g_day: float | None = None
    exposure_mg_kg_bw_day: float | None = None
    source: str


class ToxicologyRecord(BaseModel):
    """A substance's point of departure (value in mg/kg bw/day, species, study, source) and, when
    known, its dermal absorption and oral bioavailability, each with a source."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    key: str
    inci: str
    pod_kind: str  # NOAEL | LOAEL | BMDL
    pod_value: float
    pod_unit: str = "mg/kg bw/day"
    route: str  # oral | dermal
    species: str
    study: str
    source: str
    duration: str | None = None  # of the study, where the library holds it (e.g. "90 days")
    dermal_absorption_percent: float | None = None
    dermal_absorption_source: str | None = None
    oral_bioavailability_percent: float | None = None
    oral_bioavailability_source: str | None = None
    note: str | None = None


class LabelThreshold(BaseModel):
    """Above ``threshold_percent`` in a product of ``category``, every substance with ``role``
    (e.g. the fragrance allergens) must be named on the label."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    key: str
    jurisdiction: str
    list_name: str
    entry: str
    role: str
    category: str  # leave-on | rinse-off
    threshold_percent: float
    label_rule: str
    source: str
    list_date: date


class Constituent(BaseModel):
    """A declared constituent of a mixture: its record and its % in the mixture, with source."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    record: IngredientRecord
    percent: float
    source: str


@dataclass(frozen=True)
class MeasuredRequiredHlb:
    """An in-house measurement of an oil phase's required HLB (from a screening series)."""

    emulsion_type: str
    oils: tuple[tuple[str, float], ...]  # INCI name, fraction of the oil phase
    value: float
    uncertainty: float
    series: str
    source_key: str
    citation: str


class ReferenceData(BaseModel):
    """Everything besides ingredients that a check needs, loaded once per check run."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    limits: tuple[LimitRecord, ...] = ()
    incompatibilities: tuple[Incompatibility, ...] = ()
    soap_pairs: tuple[SoapPair, ...] = ()
    # the soap ingredients named by soap_pairs, resolved, keyed by their INCI name
    soaps: dict[str, IngredientRecord] = {}
    # the parent acids named by "as-acid" limits (acid_inci), resolved, keyed by their INCI name;
    # their molar mass converts a salt's % to % as acid
    acids: dict[str, IngredientRecord] = {}
    sources: dict[str, str] = {}  # key -> citation
    # key -> the grade of every value citing it (EVD01 names what rests on unverified ones)
    source_evidence: dict[str, Evidence] = {}
    # in-house required HLB of oil phases, fitted to screening series (formdb screen fit --store)
    measured_required_hlb: tuple[MeasuredRequiredHlb, ...] = ()
    # exposure per product type, keyed by the product name folded to lower case
    exposure: dict[str, ExposureRecord] = {}
    # toxicology records keyed by name_key of the substance's INCI name
    toxicology: dict[str, ToxicologyRecord] = {}
    label_thresholds: tuple[LabelThreshold, ...] = ()
    # declared constituents of mixture ingredients, keyed by name_key of the mixture's INCI name
    constituents: dict[str, tuple[Constituent, ...]] = {}
    # the regulatory list snapshots in force (imported annex exports)
    lists: tuple[SnapshotInfo, ...] = ()
    # the entries in force that match an ingredient (by INCI name, synonym or CAS), keyed by
    # name_key of the ingredient's INCI name; filled for the formulas being checked
    list_entries: dict[str, tuple[ListEntry, ...]] = {}
    # the labels of those entries whose stored reading (made at the import, perhaps by an older
    # formdb) differs from this version's reading of the same export cells
    read_differently: frozenset[str] = frozenset()

    def covered_by_lists(self, jurisdiction: str, annex: str) -> bool:
        """True when an imported snapshot of the annex is in force: the seed's hand-written
        rows for that annex then give way to it (an entry the export no longer lists is no
        longer law)."""
        return any(s.jurisdiction.casefold() == jurisdiction.casefold() and s.annex == annex
                   for s in self.lists)
