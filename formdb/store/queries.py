"""Reads of the library that services share: resolve names to frozen ingredient records in bulk,
"did you mean" suggestions, and the reference data (limits, incompatibilities, soap pairs).

Pure reads: nothing here writes or commits. Lookups are a few queries per call whatever the number
of names, never one query per formula line.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from formdb.errors import InvalidData
from formdb.schemas.ingredient import (
    PROPERTY_NAMES,
    IngredientProperties,
    IngredientRecord,
    Provenance,
    name_key,
)
from formdb.schemas.reference import (
    Constituent,
    ExposureRecord,
    Incompatibility,
    LabelThreshold,
    LimitRecord,
    MeasuredRequiredHlb,
    ReferenceData,
    SoapPair,
    ToxicologyRecord,
)
from formdb.schemas.suggest import close_matches
from formdb.schemas.vocab import Evidence, Role
from formdb.store.lists import snapshots_in_force
from formdb.store.models import (
    ExposureEntry,
    IncompatibilityEntry,
    Ingredient,
    IngredientName,
    LabelThresholdEntry,
    LimitEntry,
    MixtureConstituent,
    OilPhaseMeasurement,
    ScreeningSeries,
    SoapPairEntry,
    Source,
    ToxicologyEntry,
)

_CHUNK = 500  # names per IN (...) list: well under SQLite's and PostgreSQL's parameter limits
LIST_SEPARATOR = ";"


# --- how one property value sits in property_values -------------------------------------------

def property_columns(prop: str, value: Any) -> tuple[float | None, str | None]:
    """(value_num, value_text) for storing ``value`` of ``prop``: numbers in value_num, words
    (choices, and yes/no for true/false properties) in value_text."""
    if value is None:
        return None, None
    if isinstance(value, bool):
        return None, "yes" if value else "no"
    if isinstance(value, int | float):
        return float(value), None
    return None, str(getattr(value, "value", value))


def stored_value(value_num: float | None, value_text: str | None) -> Any:
    """The raw stored value; IngredientProperties turns it into the property's type."""
    return value_num if value_num is not None else value_text


def split_list(text: str | None) -> tuple[str, ...]:
    """A ``;``-separated cell (as the limits table stores its ingredient lists) as a tuple."""
    if not text:
        return ()
    return tuple(item.strip() for item in text.split(LIST_SEPARATOR) if item.strip())


# --- ingredient records -----------------------------------------------------------------------

def record_from_row(ingredient: Ingredient, citations: Mapping[str, str]) -> IngredientRecord:
    """The frozen record of one ORM ingredient (its names, CAS, roles, classes and values loaded);
    ``citations`` maps source keys to citations (see ``citations_for``)."""
    raw: dict[str, Any] = {}
    provenance: dict[str, Provenance] = {}
    try:
        for row in ingredient.values:
            if row.property not in PROPERTY_NAMES:
                continue  # a property this formdb no longer knows: kept in storage, not read
            raw[row.property] = stored_value(row.value_num, row.value_text)
            provenance[row.property] = Provenance(
                source=row.source_key, evidence=Evidence(row.evidence),
                citation=citations.get(row.source_key), note=row.note)
        properties = IngredientProperties.model_validate(raw)
        return IngredientRecord(
            id=ingredient.id,
            inci_name=ingredient.inci_name,
            version=ingredient.version,
            retired=ingredient.retired,
            synonyms=tuple(n.name for n in ingredient.names if not n.is_primary),
            cas_numbers=tuple(c.cas for c in ingredient.cas_numbers),
            roles=frozenset(Role(r.role) for r in ingredient.roles),
            classes=frozenset(c.class_name for c in ingredient.classes),
            properties=properties,
            provenance=provenance,
        )
    except (ValidationError, ValueError) as exc:
        detail = str(exc).splitlines()
        raise InvalidData(
            f"the library's record of {ingredient.inci_name!r} holds a value formdb cannot read "
            f"({' '.join(detail[:3])})",
            hint=f"correct it with `formdb ingredient edit {ingredient.inci_name!r} --set ...`",
        ) from exc


def citations_for(session: Session, keys: Iterable[str]) -> dict[str, str]:
    """Source key -> citation for the given keys (unknown keys are left out)."""
    wanted = sorted(set(keys))
    found: dict[str, str] = {}
    for start in range(0, len(wanted), _CHUNK):
        chunk = wanted[start:start + _CHUNK]
        found.update(session.execute(
            select(Source.key, Source.citation).where(Source.key.in_(chunk))).all())
    return found


def _loaded(session: Session, ids: Sequence[int]) -> list[Ingredient]:
    """Ingredients by id with every child collection loaded up front (a query per collection)."""
    rows: list[Ingredient] = []
    for start in range(0, len(ids), _CHUNK):
        chunk = ids[start:start + _CHUNK]
        rows.extend(session.scalars(
            select(Ingredient).where(Ingredient.id.in_(chunk)).options(
                selectinload(Ingredient.names), selectinload(Ingredient.cas_numbers),
                selectinload(Ingredient.roles), selectinload(Ingredient.classes),
                selectinload(Ingredient.values))))
    return rows


def records_by_id(session: Session, ids: Iterable[int]) -> dict[int, IngredientRecord]:
    """Frozen records for ingredient ids, built in bulk."""
    rows = _loaded(session, sorted(set(ids)))
    citations = citations_for(session, (v.source_key for row in rows for v in row.values))
    return {row.id: record_from_row(row, citations) for row in rows}


def find_ingredients(session: Session, names: Iterable[str]) -> dict[str, IngredientRecord]:
    """Resolve INCI names and synonyms (case and spacing ignored) to records.

    The result is keyed by ``name_key(given name)`` for every given name that resolves; names that
    do not resolve are absent. Retired ingredients are included (``retired=True``): the caller
    decides what a retired ingredient in a formula means.
    """
    keys = sorted({name_key(n) for n in names if str(n).strip()})
    key_to_id: dict[str, int] = {}
    for start in range(0, len(keys), _CHUNK):
        chunk = keys[start:start + _CHUNK]
        key_to_id.update(session.execute(
            select(IngredientName.name_key, IngredientName.ingredient_id)
            .where(IngredientName.name_key.in_(chunk))).all())
    records = records_by_id(session, key_to_id.values())
    return {key: records[ingredient_id] for key, ingredient_id in key_to_id.items()}


def find_ingredient(session: Session, name: str) -> IngredientRecord | None:
    """One ingredient by INCI name or synonym, or None."""
    return find_ingredients(session, [name]).get(name_key(name))


def suggest_names(session: Session, name: str, limit: int = 3) -> list[str]:
    """The library names (INCI names or synonyms of current ingredients) closest to ``name``."""
    choices = list(session.scalars(
        select(IngredientName.name).join(Ingredient)
        .where(Ingredient.retired.is_(False)).order_by(IngredientName.name_key)))
    seen: list[str] = []
    for match in close_matches(name, choices, limit=limit * 3):
        if match not in seen and name_key(match) != name_key(name):
            seen.append(match)
    return seen[:limit]


# --- reference data -------------------------------------------------------------------------------

def limit_record(row: LimitEntry) -> LimitRecord:
    return LimitRecord(
        key=row.key, jurisdiction=row.jurisdiction, list_name=row.list_name, entry=row.entry,
        ingredients=split_list(row.ingredients), category=row.category, product=row.product,
        max_percent=row.max_percent, aggregate=row.aggregate, basis=row.basis,
        acid_inci=row.acid_inci, excludes=split_list(row.excludes), conditions=row.conditions,
        source=row.source_key, list_date=row.list_date, purpose=row.purpose,
        ph_min=row.ph_min, ph_max=row.ph_max)


def incompatibility_record(row: IncompatibilityEntry) -> Incompatibility:
    return Incompatibility(key=row.key, class_a=row.class_a, class_b=row.class_b,
                           severity=row.severity, reason=row.reason, advice=row.advice,
                           source=row.source_key)


def soap_pair_record(row: SoapPairEntry) -> SoapPair:
    return SoapPair(acid_inci=row.acid_inci, base_inci=row.base_inci, soap_inci=row.soap_inci,
                    source=row.source_key)


def load_reference_data(session: Session) -> ReferenceData:
    """Limits, incompatibilities, soap pairs, the soaps and the parent acids of "as-acid" limits
    resolved to records, and every citation."""
    limits = tuple(limit_record(r) for r in session.scalars(
        select(LimitEntry).order_by(LimitEntry.key)))
    incompatibilities = tuple(incompatibility_record(r) for r in session.scalars(
        select(IncompatibilityEntry).order_by(IncompatibilityEntry.key)))
    pairs = tuple(soap_pair_record(r) for r in session.scalars(
        select(SoapPairEntry).order_by(SoapPairEntry.acid_inci, SoapPairEntry.base_inci)))
    soap_names = {p.soap_inci for p in pairs}
    acid_names = {lim.acid_inci for lim in limits if lim.basis == "as-acid" and lim.acid_inci}
    found = find_ingredients(session, soap_names | acid_names)  # one lookup for both
    soaps = {r.inci_name: r for n in soap_names if (r := found.get(name_key(n)))}
    acids = {r.inci_name: r for n in acid_names if (r := found.get(name_key(n)))}
    rows = session.execute(
        select(Source.key, Source.citation, Source.evidence).order_by(Source.key)).all()
    sources = {key: citation for key, citation, _evidence in rows}
    evidence = {key: Evidence(grade) for key, _citation, grade in rows}
    return ReferenceData(limits=limits, incompatibilities=incompatibilities, soap_pairs=pairs,
                         soaps=soaps, acids=acids, sources=sources, source_evidence=evidence,
                         exposure=exposure_records(session), toxicology=toxicology_records(session),
                         label_thresholds=label_thresholds(session),
                         constituents=constituents(session),
                         lists=snapshots_in_force(session),
                         measured_required_hlb=measured_required_hlb(session))


def measured_required_hlb(session: Session) -> tuple[MeasuredRequiredHlb, ...]:
    """The in-house required HLB of oil phases (newest first), each with its source."""
    import json

    rows = session.execute(
        select(OilPhaseMeasurement, ScreeningSeries.name, Source.citation)
        .join(ScreeningSeries, OilPhaseMeasurement.series_id == ScreeningSeries.id)
        .join(Source, OilPhaseMeasurement.source_key == Source.key)
        .order_by(OilPhaseMeasurement.measured_at.desc(), OilPhaseMeasurement.id.desc())).all()
    return tuple(MeasuredRequiredHlb(
        emulsion_type=m.emulsion_type,
        oils=tuple((str(n), float(f)) for n, f in json.loads(m.oil_phase)),
        value=m.required_hlb, uncertainty=m.uncertainty, series=series, source_key=m.source_key,
        citation=citation) for m, series, citation in rows)


def constituents(session: Session) -> dict[str, tuple[Constituent, ...]]:
    """Declared constituents of every mixture, keyed by name_key of the mixture's INCI name."""
    rows = list(session.scalars(select(MixtureConstituent).order_by(
        MixtureConstituent.mixture_id, MixtureConstituent.percent.desc(),
        MixtureConstituent.constituent_id)))
    if not rows:
        return {}
    records = records_by_id(session, {r.mixture_id for r in rows} | {r.constituent_id
                                                                       for r in rows})
    out: dict[str, list[Constituent]] = {}
    for row in rows:
        key = name_key(records[row.mixture_id].inci_name)
        out.setdefault(key, []).append(Constituent(
            record=records[row.constituent_id], percent=row.percent, source=row.source_key))
    return {key: tuple(parts) for key, parts in out.items()}


def label_thresholds(session: Session) -> tuple[LabelThreshold, ...]:
    return tuple(LabelThreshold(
        key=r.key, jurisdiction=r.jurisdiction, list_name=r.list_name, entry=r.entry,
        role=r.role, category=r.category, threshold_percent=r.threshold_percent,
        label_rule=r.label_rule, source=r.source_key, list_date=r.list_date)
        for r in session.scalars(select(LabelThresholdEntry).order_by(LabelThresholdEntry.key)))


def exposure_record(row: ExposureEntry) -> ExposureRecord:
    return ExposureRecord(
        product=row.product, category=row.category, amount_g_day=row.amount_g_day,
        amount_mg_kg_bw_day=row.amount_mg_kg_bw_day, retention_factor=row.retention_factor,
        exposure_g_day=row.exposure_g_day, exposure_mg_kg_bw_day=row.exposure_mg_kg_bw_day,
        source=row.source_key)


def exposure_records(session: Session) -> dict[str, ExposureRecord]:
    """The exposure table keyed by product type folded to lower case."""
    return {row.product.casefold(): exposure_record(row) for row in session.scalars(
        select(ExposureEntry).order_by(ExposureEntry.product))}


def toxicology_records(session: Session) -> dict[str, ToxicologyRecord]:
    """Toxicology records keyed by name_key of their substance's INCI name."""
    out: dict[str, ToxicologyRecord] = {}
    for row, inci in session.execute(
            select(ToxicologyEntry, Ingredient.inci_name)
            .join(Ingredient, Ingredient.id == ToxicologyEntry.ingredient_id)
            .order_by(ToxicologyEntry.key)):
        out[name_key(inci)] = ToxicologyRecord(
            key=row.key, inci=inci, pod_kind=row.pod_kind, pod_value=row.pod_value,
            pod_unit=row.pod_unit, route=row.route, species=row.species, study=row.study,
            duration=row.duration,
            source=row.source_key, dermal_absorption_percent=row.dermal_absorption_percent,
            dermal_absorption_source=row.dermal_absorption_source,
            oral_bioavailability_percent=row.oral_bioavailability_percent,
            oral_bioavailability_source=row.oral_bioavailability_source, note=row.note)
    return out
