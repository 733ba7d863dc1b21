"""The library's tables as typed SQLAlchemy 2 models.

Alembic owns the schema (``migrations/``); ``tests/store/test_migrations.py`` fails when these
models and the migrations drift apart. Every name an ingredient answers to (its INCI name and its
synonyms) is one row of ``ingredient_names``, so one unique index keeps names unique across both.
"""

from __future__ import annotations

from datetime import date, datetime

from sqlalchemy import (
    Boolean,
    Date,
    DateTime,
    Float,
    ForeignKey,
    Integer,
    MetaData,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)


class Source(Base):
    """A citation that values point to; ``evidence`` is the grade of every value citing it, set
    by ``kind`` (formdb.schemas.vocab.KIND_GRADE) where the kind is recorded. The detail columns
    locate the evidence as the trade cites it (handbook edition and table, a supplier's document
    and lot, a measurement's method, date and analyst); ``checksum`` identifies a cited file."""

    __tablename__ = "sources"

    key: Mapped[str] = mapped_column(String(80), primary_key=True)
    citation: Mapped[str] = mapped_column(Text)
    evidence: Mapped[str] = mapped_column(String(20))
    url: Mapped[str | None] = mapped_column(Text)
    seen: Mapped[str | None] = mapped_column(String(20))  # found / found-secondary / memory / calc
    note: Mapped[str | None] = mapped_column(Text)
    kind: Mapped[str | None] = mapped_column(String(30))
    year: Mapped[int | None] = mapped_column(Integer)
    edition: Mapped[str | None] = mapped_column(String(40))
    table_ref: Mapped[str | None] = mapped_column(String(80))
    page: Mapped[str | None] = mapped_column(String(40))
    supplier: Mapped[str | None] = mapped_column(String(200))
    document: Mapped[str | None] = mapped_column(String(200))
    lot: Mapped[str | None] = mapped_column(String(80))
    issued: Mapped[date | None] = mapped_column(Date)
    method: Mapped[str | None] = mapped_column(Text)
    measured_by: Mapped[str | None] = mapped_column(String(100))
    checksum: Mapped[str | None] = mapped_column(String(80))


class Ingredient(Base):
    __tablename__ = "ingredients"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    inci_name: Mapped[str] = mapped_column(String(200))
    retired: Mapped[bool] = mapped_column(Boolean, default=False)
    version: Mapped[int] = mapped_column(Integer, default=1)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    updated_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    updated_by: Mapped[str] = mapped_column(String(100))

    names: Mapped[list[IngredientName]] = relationship(
        back_populates="ingredient", cascade="all, delete-orphan", order_by="IngredientName.id")
    cas_numbers: Mapped[list[IngredientCas]] = relationship(
        cascade="all, delete-orphan", order_by="IngredientCas.cas")
    roles: Mapped[list[IngredientRole]] = relationship(
        cascade="all, delete-orphan", order_by="IngredientRole.role")
    classes: Mapped[list[IngredientClass]] = relationship(
        cascade="all, delete-orphan", order_by="IngredientClass.class_name")
    values: Mapped[list[PropertyValue]] = relationship(
        cascade="all, delete-orphan", order_by="PropertyValue.property")

    __mapper_args__ = {"version_id_col": version}  # noqa: RUF012 - SQLAlchemy reads it


class IngredientName(Base):
    """The INCI name (``is_primary``) and every synonym; ``name_key`` is unique across all."""

    __tablename__ = "ingredient_names"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    ingredient_id: Mapped[int] = mapped_column(ForeignKey("ingredients.id", ondelete="CASCADE"),
                                               index=True)
    name: Mapped[str] = mapped_column(String(200))
    name_key: Mapped[str] = mapped_column(String(200), unique=True)
    is_primary: Mapped[bool] = mapped_column(Boolean, default=False)

    ingredient: Mapped[Ingredient] = relationship(back_populates="names")


class IngredientCas(Base):
    __tablename__ = "ingredient_cas"

    ingredient_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    cas: Mapped[str] = mapped_column(String(20), primary_key=True)


class IngredientRole(Base):
    __tablename__ = "ingredient_roles"

    ingredient_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    role: Mapped[str] = mapped_column(String(40), primary_key=True)


class IngredientClass(Base):
    """Membership of a compatibility class (formdb.schemas.vocab.COMPAT_CLASSES)."""

    __tablename__ = "ingredient_classes"

    ingredient_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    class_name: Mapped[str] = mapped_column(String(60), primary_key=True)


class PropertyValue(Base):
    """One property of one ingredient with its provenance. Numbers in ``value_num``, words in
    ``value_text`` (the property catalogue in formdb.schemas.ingredient says which)."""

    __tablename__ = "property_values"

    ingredient_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    property: Mapped[str] = mapped_column(String(40), primary_key=True)
    value_num: Mapped[float | None] = mapped_column(Float)
    value_text: Mapped[str | None] = mapped_column(String(200))
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))
    evidence: Mapped[str] = mapped_column(String(20))
    note: Mapped[str | None] = mapped_column(Text)


class ChangeLogEntry(Base):
    """One change of one record (add, edit, retire, import, seed...): who, when (UTC), which
    record at which version, why; what changed is ``payload``, typed JSON described in
    formdb.schemas.change_log. ``form`` is the canonical form the row was sealed in
    (formdb.store.sealing.FORMS): 1 for rows migrated from the per-column log, 2 since."""

    __tablename__ = "change_log"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    at: Mapped[datetime] = mapped_column(DateTime(timezone=True), index=True)
    user: Mapped[str] = mapped_column(String(100))
    entity: Mapped[str] = mapped_column(String(20))  # ingredient | formula | limit | ...
    entity_key: Mapped[str] = mapped_column(String(200), index=True)
    entity_version: Mapped[int | None] = mapped_column(Integer)
    action: Mapped[str] = mapped_column(String(20))  # add | edit | retire | restore | import | seed
    form: Mapped[int] = mapped_column(Integer, default=2)
    payload: Mapped[str] = mapped_column(Text)
    reason: Mapped[str | None] = mapped_column(Text)
    prev_hash: Mapped[str | None] = mapped_column(String(64))  # hash chain (formdb audit verify)
    row_hash: Mapped[str | None] = mapped_column(String(64))
    server_seal: Mapped[str | None] = mapped_column(String(64))  # see sealing.NOT_CANONICAL


class LimitEntry(Base):
    """A concentration limit from a regulatory list (see formdb.schemas.reference.LimitRecord)."""

    __tablename__ = "limits"

    key: Mapped[str] = mapped_column(String(80), primary_key=True)
    jurisdiction: Mapped[str] = mapped_column(String(20))
    list_name: Mapped[str] = mapped_column(String(200))
    entry: Mapped[str] = mapped_column(String(40))
    ingredients: Mapped[str] = mapped_column(Text)  # INCI names joined by "; "
    category: Mapped[str] = mapped_column(String(20))
    product: Mapped[str | None] = mapped_column(String(100))
    max_percent: Mapped[float | None] = mapped_column(Float)  # None: a pH limit only
    aggregate: Mapped[str] = mapped_column(String(10))
    basis: Mapped[str] = mapped_column(String(10))
    acid_inci: Mapped[str | None] = mapped_column(String(200))
    excludes: Mapped[str | None] = mapped_column(Text)
    conditions: Mapped[str | None] = mapped_column(Text)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))
    list_date: Mapped[date] = mapped_column(Date)
    purpose: Mapped[str | None] = mapped_column(String(20))  # preservative | not-preservative
    ph_min: Mapped[float | None] = mapped_column(Float)
    ph_max: Mapped[float | None] = mapped_column(Float)


class IncompatibilityEntry(Base):
    __tablename__ = "incompatibilities"

    key: Mapped[str] = mapped_column(String(80), primary_key=True)
    class_a: Mapped[str] = mapped_column(String(60))
    class_b: Mapped[str] = mapped_column(String(60))
    severity: Mapped[str] = mapped_column(String(10))
    reason: Mapped[str] = mapped_column(Text)
    advice: Mapped[str] = mapped_column(Text)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))


class SoapPairEntry(Base):
    """Fatty acid + base -> the soap they form in the batch (a library ingredient)."""

    __tablename__ = "soap_pairs"

    acid_inci: Mapped[str] = mapped_column(String(200), primary_key=True)
    base_inci: Mapped[str] = mapped_column(String(200), primary_key=True)
    soap_inci: Mapped[str] = mapped_column(String(200))
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))


class StoredFormula(Base):
    """A formula kept in the library: its TOML text as given, and a hash of it."""

    __tablename__ = "formulas"
    __table_args__ = (UniqueConstraint("name_key"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(300))
    name_key: Mapped[str] = mapped_column(String(300))
    content: Mapped[str] = mapped_column(Text)
    content_hash: Mapped[str] = mapped_column(String(64))
    version: Mapped[int] = mapped_column(Integer, default=1)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    updated_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    updated_by: Mapped[str] = mapped_column(String(100))

    __mapper_args__ = {"version_id_col": version}  # noqa: RUF012 - SQLAlchemy reads it


class ExposureEntry(Base):
    """Daily exposure to one product type (SCCS Notes of Guidance, Table 3A/3B), per kg bw."""

    __tablename__ = "exposure"

    product: Mapped[str] = mapped_column(String(100), primary_key=True)
    category: Mapped[str] = mapped_column(String(20))
    amount_g_day: Mapped[float | None] = mapped_column(Float)
    amount_mg_kg_bw_day: Mapped[float | None] = mapped_column(Float)
    retention_factor: Mapped[float] = mapped_column(Float)
    exposure_g_day: Mapped[float | None] = mapped_column(Float)
    exposure_mg_kg_bw_day: Mapped[float | None] = mapped_column(Float)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))


class ToxicologyEntry(Base):
    """A substance's point of departure (mg/kg bw/day) with its study and source, and its dermal
    absorption and oral bioavailability where known (each with a source)."""

    __tablename__ = "toxicology"
    __table_args__ = (UniqueConstraint("ingredient_id"),)

    key: Mapped[str] = mapped_column(String(80), primary_key=True)
    ingredient_id: Mapped[int] = mapped_column(ForeignKey("ingredients.id", ondelete="CASCADE"))
    pod_kind: Mapped[str] = mapped_column(String(20))
    pod_value: Mapped[float] = mapped_column(Float)
    pod_unit: Mapped[str] = mapped_column(String(30))
    route: Mapped[str] = mapped_column(String(20))
    species: Mapped[str] = mapped_column(String(60))
    duration: Mapped[str | None] = mapped_column(String(60))
    study: Mapped[str] = mapped_column(Text)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))
    dermal_absorption_percent: Mapped[float | None] = mapped_column(Float)
    dermal_absorption_source: Mapped[str | None] = mapped_column(ForeignKey("sources.key"))
    oral_bioavailability_percent: Mapped[float | None] = mapped_column(Float)
    oral_bioavailability_source: Mapped[str | None] = mapped_column(ForeignKey("sources.key"))
    note: Mapped[str | None] = mapped_column(Text)


class User(Base):
    """A person who works on the library; what they may do is their rows in ``user_roles``."""

    __tablename__ = "users"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(100), unique=True)
    active: Mapped[bool] = mapped_column(Boolean, default=True)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(100))

    roles: Mapped[list[UserRole]] = relationship(
        cascade="all, delete-orphan", order_by="UserRole.role")


class UserRole(Base):
    """One duty of one user: admin, editor, formulator or reviewer (services.admin.access)."""

    __tablename__ = "user_roles"

    user_id: Mapped[int] = mapped_column(ForeignKey("users.id", ondelete="CASCADE"),
                                         primary_key=True)
    role: Mapped[str] = mapped_column(String(20), primary_key=True)


class LabelThresholdEntry(Base):
    """Above this % in a product of the category, substances with the role must be labelled."""

    __tablename__ = "label_thresholds"

    key: Mapped[str] = mapped_column(String(80), primary_key=True)
    jurisdiction: Mapped[str] = mapped_column(String(20))
    list_name: Mapped[str] = mapped_column(String(200))
    entry: Mapped[str] = mapped_column(String(40))
    role: Mapped[str] = mapped_column(String(40))
    category: Mapped[str] = mapped_column(String(20))
    threshold_percent: Mapped[float] = mapped_column(Float)
    label_rule: Mapped[str] = mapped_column(Text)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))
    list_date: Mapped[date] = mapped_column(Date)


class MixtureConstituent(Base):
    """A declared constituent of a mixture ingredient: its % in the mixture, with its source
    (a supplier's composition or allergen certificate)."""

    __tablename__ = "mixture_constituents"

    mixture_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    constituent_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    percent: Mapped[float] = mapped_column(Float)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))


class ReviewRun(Base):
    """One review check run, stored once and never updated: the formula as checked, the hash of
    every library record it used, the profile, the findings and the full result. A later run of
    the same formula name supersedes it (``supersedes_run_id`` on the newer run)."""

    __tablename__ = "review_runs"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    run_key: Mapped[str] = mapped_column(String(20), unique=True)
    run_hash: Mapped[str] = mapped_column(String(64))
    formula_name: Mapped[str] = mapped_column(String(300), index=True)
    formula_source: Mapped[str] = mapped_column(Text)  # a file path or "stored:NAME"
    formula_hash: Mapped[str] = mapped_column(String(64))
    formula_text: Mapped[str] = mapped_column(Text)
    library_hash: Mapped[str] = mapped_column(String(64))
    records_json: Mapped[str] = mapped_column(Text)
    profile_name: Mapped[str] = mapped_column(String(60))
    profile_version: Mapped[str] = mapped_column(String(40))
    formdb_version: Mapped[str] = mapped_column(String(40))
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(100))
    findings_json: Mapped[str] = mapped_column(Text)
    result_json: Mapped[str] = mapped_column(Text)
    supersedes_run_id: Mapped[int | None] = mapped_column(ForeignKey("review_runs.id"))
    prev_hash: Mapped[str | None] = mapped_column(String(64))
    row_hash: Mapped[str | None] = mapped_column(String(64))
    server_seal: Mapped[str | None] = mapped_column(String(64))  # see sealing.NOT_CANONICAL
    # since 0013 (None on older runs): the profile by content hash and origin, the review
    # policy in force, and whether the run may be signed under it (else a draft)
    profile_hash: Mapped[str | None] = mapped_column(String(64))
    profile_origin: Mapped[str | None] = mapped_column(Text)
    policy_json: Mapped[str | None] = mapped_column(Text)
    signable: Mapped[bool | None] = mapped_column(Boolean)


class ReviewSignature(Base):
    """A sign-off on one run: printed name, login, UTC time and meaning, bound to the run hash
    (21 CFR 11.50 / 11.70)."""

    __tablename__ = "review_signatures"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("review_runs.id"), index=True)
    run_hash: Mapped[str] = mapped_column(String(64))
    signer: Mapped[str] = mapped_column(String(200))
    signed_by: Mapped[str] = mapped_column(String(100))
    meaning: Mapped[str] = mapped_column(String(20))  # approved | reviewed | rejected
    signed_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    comment: Mapped[str | None] = mapped_column(Text)  # the reason given
    prev_hash: Mapped[str | None] = mapped_column(String(64))
    row_hash: Mapped[str | None] = mapped_column(String(64))
    server_seal: Mapped[str | None] = mapped_column(String(64))  # see sealing.NOT_CANONICAL
    # since 0013: the justification of each open item an approval waives, and the signer's
    # Ed25519 signature (key id, base64) over run hash, meaning, reasons, signer and time
    waivers_json: Mapped[str | None] = mapped_column(Text)
    key_id: Mapped[str | None] = mapped_column(String(32))
    signature: Mapped[str | None] = mapped_column(String(100))


class PolicyVersion(Base):
    """The review policy an admin set, one row per setting (append-only, sealed): the newest
    row is in force. ``policy_json`` names the signable profile by content hash, the role each
    meaning needs and whether an author may approve their own run."""

    __tablename__ = "policy_versions"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    set_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    set_by: Mapped[str] = mapped_column(String(100))
    policy_json: Mapped[str] = mapped_column(Text)
    policy_hash: Mapped[str] = mapped_column(String(64))
    prev_hash: Mapped[str | None] = mapped_column(String(64))
    row_hash: Mapped[str | None] = mapped_column(String(64))
    server_seal: Mapped[str | None] = mapped_column(String(64))  # see sealing.NOT_CANONICAL


class KeyEnrolment(Base):
    """A signer's public key enrolled by an admin, or its revocation (append-only, sealed).
    Revoked keys stay here, so signatures made before the revocation still verify."""

    __tablename__ = "key_enrolments"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    by_user: Mapped[str] = mapped_column(String(100))
    action: Mapped[str] = mapped_column(String(10))  # enrol | revoke
    login: Mapped[str] = mapped_column(String(100), index=True)
    printed_name: Mapped[str] = mapped_column(String(200))
    key_id: Mapped[str] = mapped_column(String(32), index=True)
    public_key: Mapped[str] = mapped_column(String(100))
    reason: Mapped[str | None] = mapped_column(Text)
    prev_hash: Mapped[str | None] = mapped_column(String(64))
    row_hash: Mapped[str | None] = mapped_column(String(64))
    server_seal: Mapped[str | None] = mapped_column(String(64))  # see sealing.NOT_CANONICAL


class ListSnapshot(Base):
    """One imported annex export of a regulatory list: its annex, the export's two dates and the
    file's hash. The newest import of an annex is the one in force (``in_force``)."""

    __tablename__ = "list_snapshots"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    jurisdiction: Mapped[str] = mapped_column(String(20))
    annex: Mapped[str] = mapped_column(String(10))
    file_name: Mapped[str] = mapped_column(String(300))
    file_created: Mapped[date] = mapped_column(Date)
    last_update: Mapped[date] = mapped_column(Date)
    file_hash: Mapped[str] = mapped_column(String(64))
    entry_count: Mapped[int] = mapped_column(Integer)
    imported_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    imported_by: Mapped[str] = mapped_column(String(100))
    in_force: Mapped[bool] = mapped_column(Boolean, default=True, index=True)


class ListEntryRow(Base):
    """One entry of a snapshot: the structured entry as JSON (formdb.schemas.lists.ListEntry)."""

    __tablename__ = "list_entries"
    __table_args__ = (UniqueConstraint("snapshot_id", "key"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    snapshot_id: Mapped[int] = mapped_column(
        ForeignKey("list_snapshots.id", ondelete="CASCADE"), index=True)
    key: Mapped[str] = mapped_column(String(300))
    ref: Mapped[str] = mapped_column(String(40))
    names: Mapped[str] = mapped_column(Text)  # INCI names joined by "; "
    body: Mapped[str] = mapped_column(Text)


class ListEntryMatch(Base):
    """How a library ingredient finds an entry: ``name:<name key>`` or ``cas:<CAS>``, indexed."""

    __tablename__ = "list_entry_matches"

    entry_id: Mapped[int] = mapped_column(
        ForeignKey("list_entries.id", ondelete="CASCADE"), primary_key=True)
    match_key: Mapped[str] = mapped_column(String(250), primary_key=True, index=True)


class ListIngredient(Base):
    """An ingredient record created because a list names it (no physical data until added)."""

    __tablename__ = "list_ingredients"

    ingredient_id: Mapped[int] = mapped_column(
        ForeignKey("ingredients.id", ondelete="CASCADE"), primary_key=True)
    jurisdiction: Mapped[str] = mapped_column(String(20))
    annex: Mapped[str] = mapped_column(String(10))
    entry_key: Mapped[str] = mapped_column(String(300))
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))


class IngredientPrice(Base):
    """A quoted price of an ingredient (per kg, currency, supplier, date). Rows are only added:
    the rows of an ingredient are its price history; a weigh sheet uses the latest quote."""

    __tablename__ = "ingredient_prices"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    ingredient_id: Mapped[int] = mapped_column(ForeignKey("ingredients.id"), index=True)
    price_per_kg: Mapped[float] = mapped_column(Float)
    currency: Mapped[str] = mapped_column(String(3))
    supplier: Mapped[str] = mapped_column(String(200))
    quoted_on: Mapped[date] = mapped_column(Date)
    recorded_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    recorded_by: Mapped[str] = mapped_column(String(100))
    note: Mapped[str | None] = mapped_column(Text)


class ScreeningSeries(Base):
    """A planned screening series: an oil phase emulsified with a pair of emulsifiers whose
    blend HLB steps across a range (one ``ScreeningBlend`` a step)."""

    __tablename__ = "screening_series"
    __table_args__ = (UniqueConstraint("name_key"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200))
    name_key: Mapped[str] = mapped_column(String(200))
    emulsion_type: Mapped[str] = mapped_column(String(3))
    oil_phase: Mapped[str] = mapped_column(Text)  # JSON [[inci, fraction], ...]
    oil_percent: Mapped[float] = mapped_column(Float)
    emulsifier_percent: Mapped[float] = mapped_column(Float)
    low_inci: Mapped[str] = mapped_column(String(200))
    high_inci: Mapped[str] = mapped_column(String(200))
    low_hlb: Mapped[float] = mapped_column(Float)
    high_hlb: Mapped[float] = mapped_column(Float)
    water_inci: Mapped[str] = mapped_column(String(200))
    batch_g: Mapped[float] = mapped_column(Float)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(100))

    blends: Mapped[list[ScreeningBlendRow]] = relationship(
        cascade="all, delete-orphan", order_by="ScreeningBlendRow.number")


class ScreeningBlendRow(Base):
    """One emulsion of a series: its blend HLB and the % of each emulsifier in it."""

    __tablename__ = "screening_blends"
    __table_args__ = (UniqueConstraint("series_id", "number"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    series_id: Mapped[int] = mapped_column(ForeignKey("screening_series.id", ondelete="CASCADE"),
                                           index=True)
    number: Mapped[int] = mapped_column(Integer)
    hlb: Mapped[float] = mapped_column(Float)
    low_percent: Mapped[float] = mapped_column(Float)
    high_percent: Mapped[float] = mapped_column(Float)

    observations: Mapped[list[ScreeningObservation]] = relationship(
        cascade="all, delete-orphan", order_by="ScreeningObservation.id")


class ScreeningObservation(Base):
    """What the lab saw of one blend: a measure (stability score, separated layer, droplet
    size) and its value. Rows are only added; the latest of a measure counts."""

    __tablename__ = "screening_observations"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    blend_id: Mapped[int] = mapped_column(ForeignKey("screening_blends.id", ondelete="CASCADE"),
                                          index=True)
    measure: Mapped[str] = mapped_column(String(40))
    value: Mapped[float] = mapped_column(Float)
    after_hours: Mapped[float | None] = mapped_column(Float)
    observed_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    observed_by: Mapped[str] = mapped_column(String(100))
    note: Mapped[str | None] = mapped_column(Text)


class OilPhaseMeasurement(Base):
    """An in-house required HLB of an oil phase (its members and their shares), fitted to a
    screening series; the check uses it for a formula whose oil phase matches."""

    __tablename__ = "oil_phase_measurements"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    series_id: Mapped[int] = mapped_column(ForeignKey("screening_series.id"), index=True)
    emulsion_type: Mapped[str] = mapped_column(String(3))
    oil_phase: Mapped[str] = mapped_column(Text)  # JSON [[inci, fraction], ...]
    required_hlb: Mapped[float] = mapped_column(Float)
    uncertainty: Mapped[float] = mapped_column(Float)  # expanded, about 95 %
    measure: Mapped[str] = mapped_column(String(40))
    method: Mapped[str] = mapped_column(Text)
    source_key: Mapped[str] = mapped_column(ForeignKey("sources.key"))
    measured_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    measured_by: Mapped[str] = mapped_column(String(100))


class ServerChange(Base):
    """A change to a library table as the PostgreSQL server saw it: which login (session_user),
    when (the server's clock), which table, and the rows before and after as JSON. Written only
    by the statement triggers `formdb db grant-setup` installs (services.admin.server), so plain
    SQL is recorded as well as formdb's own writes; no login but the owner may write it. Empty
    on SQLite, which has no server to vouch for anything."""

    __tablename__ = "server_change_log"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    login: Mapped[str] = mapped_column(String(100), index=True)
    table_name: Mapped[str] = mapped_column(String(63), index=True)
    operation: Mapped[str] = mapped_column(String(10))  # insert | update | delete
    old_rows: Mapped[str | None] = mapped_column(Text)  # JSON array of the rows before
    new_rows: Mapped[str | None] = mapped_column(Text)  # JSON array of the rows after
