"""Reading the safety seed tables: exposure per product type, toxicology records, and the
labelling thresholds (fragrance allergens).

Same conventions as ``seed_tables``: each row validated by a pydantic row model, every problem
of a file named by file, row and column before anything is written.
"""

from __future__ import annotations

import math
from datetime import date
from pathlib import Path
from typing import Any, Literal

from pydantic import Field, field_validator, model_validator
from sqlalchemy.orm import Session

from formdb.schemas.ingredient import name_key
from formdb.schemas.numbers import ascii_float
from formdb.schemas.vocab import Role, norm_token, parse_choice
from formdb.services.seed.tables import (
    Rows,
    SeedProblems,
    _Row,
    _source_check,
    _validate,
    read_rows,
)
from formdb.store.queries import find_ingredients

POD_UNIT = "mg/kg bw/day"
# E_product per kg is a table figure rounded to a few digits; a row whose figures disagree by
# more than this (relative; shampoo: 0.11 against 10.46 x 0.01) is a typing error, not rounding
_CONSISTENCY = 0.10

EXPOSURE_COLUMNS = ("product", "category", "amount_g_day", "amount_mg_kg_bw_day",
                    "retention_factor", "exposure_g_day", "exposure_mg_kg_bw_day", "source")
EXPOSURE_REQUIRED = ("product", "category", "retention_factor", "source")


def _number(value: Any) -> Any:
    """A number cell or ``--set`` value: ASCII digits and finite (``float()`` alone read '١٢'
    as 12, and 'inf' or '1e309' as a point of departure every margin of safety passes)."""
    if isinstance(value, str):
        try:
            number = ascii_float(value)
        except ValueError:
            raise ValueError("is not a number written in ASCII digits" if not value.isascii()
                             else "is not a number") from None
        if not math.isfinite(number):
            raise ValueError("is not a finite number")
        return number
    return value


class ExposureRow(_Row):
    product: str = Field(max_length=100)
    category: Literal["leave-on", "rinse-off"]
    amount_g_day: float | None = Field(None, ge=0)
    amount_mg_kg_bw_day: float | None = Field(None, ge=0)
    retention_factor: float = Field(gt=0, le=1)
    exposure_g_day: float | None = Field(None, ge=0)
    exposure_mg_kg_bw_day: float | None = Field(None, ge=0)
    source: str

    @field_validator("amount_g_day", "amount_mg_kg_bw_day", "retention_factor",
                     "exposure_g_day", "exposure_mg_kg_bw_day", mode="before")
    @classmethod
    def _numbers(cls, value: Any) -> Any:
        return _number(value)

    @field_validator("category", "product", mode="before")
    @classmethod
    def _tokens(cls, value: Any) -> Any:
        return norm_token(value) if isinstance(value, str) else value

    @model_validator(mode="after")
    def _an_exposure(self) -> ExposureRow:
        if self.exposure_mg_kg_bw_day is None and self.exposure_g_day is None:
            raise ValueError("exposure_mg_kg_bw_day or exposure_g_day must be given")
        return self


def _consistency(row: ExposureRow) -> list[tuple[str, str]]:
    problems = []
    for amount, exposure, column in (
            (row.amount_g_day, row.exposure_g_day, "exposure_g_day"),
            (row.amount_mg_kg_bw_day, row.exposure_mg_kg_bw_day, "exposure_mg_kg_bw_day")):
        if amount is None or exposure is None:
            continue
        expected = amount * row.retention_factor
        if abs(exposure - expected) > _CONSISTENCY * max(expected, 1e-9):
            problems.append((column, f"{exposure:g} is not the amount {amount:g} x retention "
                                     f"factor {row.retention_factor:g} = {expected:.4g}"))
    return problems


def read_exposure(file: Path, label: str, known_sources: set[str]) -> Rows:
    """The exposure table; a row without a retention factor or an exposure figure is refused."""
    rows = read_rows(file, label, EXPOSURE_COLUMNS, EXPOSURE_REQUIRED)
    source_check = _source_check(known_sources)
    parsed, problems = _validate(ExposureRow, label, rows, lambda r: r.product, "product",
                                 lambda r: source_check(r.source) + _consistency(r))
    if problems:
        raise SeedProblems(problems)
    return [{**r.model_dump(exclude={"source"}), "source_key": r.source} for r in parsed]


TOXICOLOGY_COLUMNS = ("key", "inci", "pod_kind", "pod_value", "pod_unit", "route", "species",
                      "duration", "study", "source", "dermal_absorption_percent",
                      "dermal_absorption_source", "oral_bioavailability_percent",
                      "oral_bioavailability_source", "note")
TOXICOLOGY_REQUIRED = ("key", "inci", "pod_kind", "pod_value", "pod_unit", "route", "species",
                       "study", "source")


class ToxicologyRow(_Row):
    key: str = Field(max_length=80, pattern=r"^\S+$")
    inci: str = Field(max_length=200)
    pod_kind: Literal["NOAEL", "LOAEL", "BMDL"]
    pod_value: float = Field(gt=0)
    pod_unit: str
    route: Literal["oral", "dermal"]
    species: str = Field(max_length=60)
    duration: str | None = Field(None, max_length=60)  # of the study, e.g. "90 days"
    study: str
    source: str
    dermal_absorption_percent: float | None = Field(None, ge=0, le=100)
    dermal_absorption_source: str | None = None
    oral_bioavailability_percent: float | None = Field(None, gt=0, le=100)
    oral_bioavailability_source: str | None = None
    note: str | None = None

    @field_validator("pod_value", "dermal_absorption_percent", "oral_bioavailability_percent",
                     mode="before")
    @classmethod
    def _numbers(cls, value: Any) -> Any:
        return _number(value)

    @field_validator("pod_kind", mode="before")
    @classmethod
    def _kind(cls, value: Any) -> Any:
        return value.strip().upper() if isinstance(value, str) else value

    @field_validator("route", mode="before")
    @classmethod
    def _route(cls, value: Any) -> Any:
        return norm_token(value) if isinstance(value, str) else value

    @field_validator("pod_unit")
    @classmethod
    def _unit(cls, value: str) -> str:
        if " ".join(value.split()).casefold() != POD_UNIT:
            raise ValueError(f"{value!r} is not a unit formdb reads; write {POD_UNIT}")
        return POD_UNIT

    @model_validator(mode="after")
    def _sources_with_values(self) -> ToxicologyRow:
        for prop in ("dermal_absorption", "oral_bioavailability"):
            if getattr(self, f"{prop}_percent") is not None and not getattr(self,
                                                                            f"{prop}_source"):
                raise ValueError(f"{prop}_percent needs {prop}_source")
        return self


def read_toxicology(file: Path, label: str, known_sources: set[str], session: Session) -> Rows:
    """Toxicology records; the substance must be an ingredient of the library (one record each)."""
    rows = read_rows(file, label, TOXICOLOGY_COLUMNS, TOXICOLOGY_REQUIRED)
    found = find_ingredients(session, [cells.get("inci", "") for _, cells in rows])
    source_check = _source_check(known_sources)
    seen: dict[int, str] = {}

    def check(row: ToxicologyRow) -> list[tuple[str, str]]:
        problems = source_check(row.source)
        for column in ("dermal_absorption_source", "oral_bioavailability_source"):
            key = getattr(row, column)
            if key is not None:
                problems += [(column, msg) for _, msg in source_check(key)]
        record = found.get(name_key(row.inci))
        if record is None:
            problems.append(("inci", f"{row.inci!r} is not an ingredient in the library"))
        elif record.id in seen:
            problems.append(("inci", f"{record.inci_name} already has the record {seen[record.id]}"
                                     "; one point of departure per substance"))
        else:
            seen[record.id] = row.key
        return problems

    parsed, problems = _validate(ToxicologyRow, label, rows, lambda r: r.key, "key", check)
    if problems:
        raise SeedProblems(problems)
    return [{**r.model_dump(exclude={"inci", "source"}), "source_key": r.source,
             "ingredient_id": found[name_key(r.inci)].id} for r in parsed]


LABEL_COLUMNS = ("key", "jurisdiction", "list_name", "entry", "role", "category",
                 "threshold_percent", "label_rule", "source", "list_date")


class LabelThresholdRow(_Row):
    key: str = Field(max_length=80, pattern=r"^\S+$")
    jurisdiction: str = Field(max_length=20)
    list_name: str = Field(max_length=200)
    entry: str = Field(max_length=40)
    role: str = Field(max_length=40)
    category: Literal["leave-on", "rinse-off"]
    threshold_percent: float = Field(ge=0, le=100)
    label_rule: str
    source: str
    list_date: date

    @field_validator("threshold_percent", mode="before")
    @classmethod
    def _numbers(cls, value: Any) -> Any:
        return _number(value)

    @field_validator("role", mode="before")
    @classmethod
    def _role(cls, value: Any) -> Any:
        return parse_choice(Role, str(value), "role").value

    @field_validator("category", mode="before")
    @classmethod
    def _category(cls, value: Any) -> Any:
        return norm_token(value) if isinstance(value, str) else value


def read_label_thresholds(file: Path, label: str, known_sources: set[str]) -> Rows:
    rows = read_rows(file, label, LABEL_COLUMNS, LABEL_COLUMNS)
    source_check = _source_check(known_sources)
    parsed, problems = _validate(LabelThresholdRow, label, rows, lambda r: r.key, "key",
                                 lambda r: source_check(r.source))
    if problems:
        raise SeedProblems(problems)
    return [{**r.model_dump(exclude={"source"}), "source_key": r.source} for r in parsed]


CONSTITUENT_COLUMNS = ("mixture_inci", "constituent_inci", "percent", "source")


class ConstituentRow(_Row):
    mixture_inci: str = Field(max_length=200)
    constituent_inci: str = Field(max_length=200)
    percent: float = Field(gt=0, le=100)
    source: str

    @field_validator("percent", mode="before")
    @classmethod
    def _numbers(cls, value: Any) -> Any:
        return _number(value)


def read_constituents(file: Path, label: str, known_sources: set[str],
                      session: Session) -> Rows:
    """Declared constituents; both names must be library ingredients, a mixture's constituents
    may not add up to more than 100 %, and a mixture may not contain itself."""
    rows = read_rows(file, label, CONSTITUENT_COLUMNS, CONSTITUENT_COLUMNS)
    found = find_ingredients(session, [cells.get(c, "") for _, cells in rows
                                       for c in ("mixture_inci", "constituent_inci")])
    source_check = _source_check(known_sources)
    totals: dict[int, float] = {}

    def check(row: ConstituentRow) -> list[tuple[str, str]]:
        problems = source_check(row.source)
        ids = []
        for column in ("mixture_inci", "constituent_inci"):
            record = found.get(name_key(getattr(row, column)))
            if record is None:
                problems.append((column, f"{getattr(row, column)!r} is not an ingredient in "
                                         "the library"))
            ids.append(record.id if record else None)
        if ids[0] is not None and ids[0] == ids[1]:
            problems.append(("constituent_inci", "a mixture cannot contain itself"))
        if ids[0] is not None:
            totals[ids[0]] = totals.get(ids[0], 0.0) + row.percent
            if totals[ids[0]] > 100.0 + 1e-9:
                problems.append(("percent", f"the constituents of {row.mixture_inci} add up "
                                            f"to {totals[ids[0]]:g} %, more than 100 %"))
        return problems

    def pair(row: ConstituentRow) -> tuple[str, str]:
        return (name_key(row.mixture_inci), name_key(row.constituent_inci))

    parsed, problems = _validate(ConstituentRow, label, rows, pair, "constituent_inci", check)
    if problems:
        raise SeedProblems(problems)
    return [{"mixture_id": found[name_key(r.mixture_inci)].id,
             "constituent_id": found[name_key(r.constituent_inci)].id,
             "percent": r.percent, "source_key": r.source} for r in parsed]
