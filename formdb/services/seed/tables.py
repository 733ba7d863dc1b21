"""Reading the seed tables besides ingredients (sources, limits, incompatibilities, soap pairs).

Each row is validated with a pydantic row model; every problem of a file is collected and named by
file, row and column (row 1 is the header, as a spreadsheet numbers it) before anything is written.
The result is a list of dicts in the columns of the matching table of formdb.store.models.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable, Iterable, Sequence
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from typing import Any, Literal, TypeVar

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator
from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.schemas.ingredient import name_key, normalise_inci
from formdb.schemas.numbers import ascii_float
from formdb.schemas.suggest import did_you_mean
from formdb.schemas.vocab import (
    COMPAT_CLASSES,
    KIND_GRADE,
    Evidence,
    Severity,
    SourceKind,
    norm_token,
    parse_choice,
)
from formdb.store.queries import find_ingredients

Rows = list[dict[str, Any]]
Check = Callable[[Any], list[tuple[str, str]]]
_SHOWN_PROBLEMS = 5


class SeedProblems(InvalidData):
    """Every problem found in one seed file; ``problems`` holds them all, one line each."""

    def __init__(self, problems: Sequence[str]) -> None:
        shown = "; ".join(problems[:_SHOWN_PROBLEMS])
        more = len(problems) - _SHOWN_PROBLEMS
        if more > 0:
            shown += f"; and {more} more"
        shown = shown if shown.endswith(".") else shown + "."
        super().__init__(shown, hint="correct the seed file; nothing was written",
                         problems=problems)


def _where(label: str, row: int | None, column: str | None) -> str:
    return label + (f", row {row}" if row else "") + (f", column {column}" if column else "")


def read_rows(file: Path, label: str, columns: Sequence[str],
              required: Sequence[str]) -> list[tuple[int, dict[str, str]]]:
    """(row number, {column: stripped text}) for every non-blank data row of a CSV file."""
    try:
        text = file.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as exc:
        raise SeedProblems([f"{label}: not UTF-8 text ({exc.reason})"]) from exc
    records = [(n, [c.strip() for c in cells])
               for n, cells in enumerate(csv.reader(io.StringIO(text)), start=1)]
    records = [(n, cells) for n, cells in records if any(cells)]
    if not records:
        raise SeedProblems([f"{label}: the file is empty; it needs a header row"])
    (header_row, header), *data = records
    header = [h.casefold() for h in header]
    problems = [f"{_where(label, header_row, h or '(blank)')}: unknown column"
                f"{did_you_mean(h, columns)}; the columns are {', '.join(columns)}"
                for h in header if h not in columns]
    problems += [f"{_where(label, header_row, h)}: the column appears twice"
                 for i, h in enumerate(header) if h in header[:i]]
    problems += [f"{_where(label, header_row, None)}: the required column {c} is missing"
                 for c in required if c not in header]
    rows = []
    for number, cells in data:
        if len(cells) > len(header):
            problems.append(f"{_where(label, number, None)}: {len(cells)} cells but the header "
                            f"has {len(header)} columns")
            continue
        rows.append((number, dict(zip(header, cells, strict=False))))
    if problems:
        raise SeedProblems(problems)
    return rows


class _Row(BaseModel):
    """A seed row: surrounding spaces trimmed, an empty cell means no value."""

    model_config = ConfigDict(defer_build=True, extra="ignore", str_strip_whitespace=True)

    @model_validator(mode="before")
    @classmethod
    def _blank_is_missing(cls, data: Any) -> Any:
        if isinstance(data, dict):
            return {k: v for k, v in data.items() if not (isinstance(v, str) and not v.strip())}
        return data


R = TypeVar("R", bound=_Row)


def _validate(model: type[R], label: str, rows: list[tuple[int, dict[str, str]]],
              key: Callable[[R], Any], key_column: str, check: Check | None = None,
              ) -> tuple[list[R], list[str]]:
    """Parse every row; problems name file, row and column; duplicate keys are problems too."""
    parsed: list[R] = []
    problems: list[str] = []
    first_row: dict[Any, int] = {}
    for number, cells in rows:
        try:
            row = model.model_validate(cells)
        except ValidationError as exc:
            for err in exc.errors():
                column = str(err["loc"][0]) if err["loc"] else None
                given = cells.get(column or "", "")
                value = f" (given {given!r})" if given else ""
                message = str(err["msg"]).removeprefix("Value error, ")
                if err["type"] == "missing":
                    message = "is empty; a value is required"
                problems.append(f"{_where(label, number, column)}: {message}{value}")
            continue
        for column, message in (check(row) if check else []):
            problems.append(f"{_where(label, number, column)}: {message}")
        row_key = key(row)
        if row_key in first_row:
            problems.append(f"{_where(label, number, key_column)}: {row_key!r} repeats row "
                            f"{first_row[row_key]}")
        else:
            first_row[row_key] = number
        parsed.append(row)
    return parsed, problems


def _source_check(known: set[str]) -> Callable[[str], list[tuple[str, str]]]:
    def check(source: str) -> list[tuple[str, str]]:
        if source in known:
            return []
        return [("source", f"unknown source {source!r}{did_you_mean(source, known)}; add it to "
                           "sources.csv first")]
    return check


# --- sources ---------------------------------------------------------------------------------

SOURCE_COLUMNS = ("key", "citation", "kind", "evidence", "url", "seen", "note", "year",
                  "edition", "table_ref", "page", "supplier", "document", "lot", "issued",
                  "method", "measured_by", "checksum")
# what each kind of evidence must name so that a reader can find the value again
KIND_NEEDS: dict[SourceKind, tuple[tuple[str, ...], ...]] = {
    SourceKind.HANDBOOK: (("edition",), ("table_ref", "page")),
    SourceKind.SUPPLIER_DATA_SHEET: (("supplier",), ("document",), ("issued",)),
    SourceKind.CERTIFICATE_OF_ANALYSIS: (("supplier",), ("document",), ("lot",), ("issued",)),
    SourceKind.MEASUREMENT: (("method",), ("issued",), ("measured_by",)),
}


class SourceRow(_Row):
    """A source: the kind of evidence sets the grade (``evidence``) of every value citing it; a
    row that gives only a grade is read as before kinds existed."""

    key: str = Field(max_length=80, pattern=r"^[^\s@]+$")
    citation: str
    kind: SourceKind | None = None
    evidence: Evidence | None = None
    url: str | None = None
    seen: Literal["found", "found-secondary", "memory", "calc"] | None = None
    note: str | None = None
    year: int | None = Field(None, ge=1600, le=2100)
    edition: str | None = Field(None, max_length=40)
    table_ref: str | None = Field(None, max_length=80)
    page: str | None = Field(None, max_length=40)
    supplier: str | None = Field(None, max_length=200)
    document: str | None = Field(None, max_length=200)
    lot: str | None = Field(None, max_length=80)
    issued: date | None = None
    method: str | None = None
    measured_by: str | None = Field(None, max_length=100)
    checksum: str | None = Field(None, pattern=r"^sha256:[0-9a-f]{64}$")

    @field_validator("evidence", mode="before")
    @classmethod
    def _evidence(cls, value: Any) -> Any:
        return parse_choice(Evidence, str(value), "evidence")

    @field_validator("kind", mode="before")
    @classmethod
    def _kind(cls, value: Any) -> Any:
        return parse_choice(SourceKind, str(value), "kind")

    @field_validator("issued")
    @classmethod
    def _issued(cls, value: date | None) -> date | None:
        # a day of grace: a document issued today east of UTC is dated tomorrow in UTC
        if value is not None and value > datetime.now(UTC).date() + timedelta(days=1):
            raise ValueError("is in the future; give the date the document was issued (or the "
                             "measurement made)")
        return value

    @field_validator("year", mode="before")
    @classmethod
    def _year(cls, value: Any) -> Any:
        if isinstance(value, str) and not value.strip().isdigit():
            raise ValueError(f"{value!r} is not a year")
        return value

    @model_validator(mode="after")
    def _grade(self) -> SourceRow:
        if self.kind is None:
            if self.evidence is None:
                raise ValueError(f"kind is empty; a source needs its kind of evidence "
                                 f"({', '.join(k.value for k in SourceKind)})")
            return self
        grade = KIND_GRADE[self.kind]
        if self.evidence is not None and self.evidence != grade:
            raise ValueError(f"evidence {self.evidence.value!r} does not fit kind "
                             f"{self.kind.value!r}, whose values are graded {grade.value!r}")
        self.evidence = grade
        missing = [" or ".join(choices) for choices in KIND_NEEDS.get(self.kind, ())
                   if all(getattr(self, c) is None for c in choices)]
        if missing:  # every detail at once, not one per attempt
            raise ValueError(f"a source of kind {self.kind.value!r} needs "
                             f"{' and '.join(missing)}")
        return self


def read_sources(file: Path, label: str) -> Rows:
    rows = read_rows(file, label, SOURCE_COLUMNS, ("key", "citation"))
    parsed, problems = _validate(SourceRow, label, rows, lambda r: r.key, "key")
    if problems:
        raise SeedProblems(problems)
    return [source_values(row) for row in parsed]


def source_values(row: SourceRow) -> dict[str, Any]:
    """The columns of the sources table for one validated row."""
    values = row.model_dump()
    values["evidence"] = row.evidence.value if row.evidence else None
    values["kind"] = row.kind.value if row.kind else None
    return values


# --- limits ----------------------------------------------------------------------------------

LIMIT_COLUMNS = ("key", "jurisdiction", "list_name", "entry", "ingredients", "category",
                 "product", "max_percent", "aggregate", "basis", "acid_inci", "excludes",
                 "conditions", "source", "list_date", "purpose", "ph_min", "ph_max")
LIMIT_REQUIRED = ("key", "jurisdiction", "list_name", "entry", "ingredients", "category",
                  "source", "list_date")


def _names(text: str) -> tuple[str, ...]:
    return tuple(dict.fromkeys(normalise_inci(n) for n in text.split(";") if n.strip()))


def _lower_token(value: Any) -> Any:
    return norm_token(value) if isinstance(value, str) else value


class LimitRow(_Row):
    key: str = Field(max_length=80, pattern=r"^\S+$")
    jurisdiction: str = Field(max_length=20)
    list_name: str = Field(max_length=200)
    entry: str = Field(max_length=40)
    ingredients: tuple[str, ...] = Field(min_length=1)
    category: Literal["leave-on", "rinse-off", "any"]
    product: str | None = Field(None, max_length=100)
    max_percent: float | None = Field(None, ge=0, le=100)  # blank: a pH limit only
    ph_min: float | None = Field(None, ge=0, le=14)
    ph_max: float | None = Field(None, ge=0, le=14)
    aggregate: Literal["each", "sum"] = "each"
    basis: Literal["as-is", "as-acid"] = "as-is"
    acid_inci: str | None = Field(None, max_length=200)
    # preservative: the row binds preservative use only; not-preservative: any other use
    purpose: Literal["preservative", "not-preservative"] | None = None
    excludes: tuple[str, ...] = ()
    conditions: str | None = None
    source: str
    list_date: date

    @field_validator("ingredients", "excludes", mode="before")
    @classmethod
    def _lists(cls, value: Any) -> Any:
        return _names(value) if isinstance(value, str) else value

    @field_validator("category", "aggregate", "basis", mode="before")
    @classmethod
    def _tokens(cls, value: Any) -> Any:
        return _lower_token(value)

    @field_validator("max_percent", "ph_min", "ph_max", mode="before")
    @classmethod
    def _number(cls, value: Any) -> Any:
        if isinstance(value, str) and not value.strip():
            return None
        if isinstance(value, str):
            try:
                number = ascii_float(value)
            except ValueError:
                raise ValueError("is not a number; write a percentage such as 0.8") from None
            if not math.isfinite(number):
                raise ValueError("is not a finite number; write a percentage such as 0.8")
            return number
        return value

    @model_validator(mode="after")
    def _acid_for_as_acid(self) -> LimitRow:
        if self.basis == "as-acid" and not self.acid_inci:
            raise ValueError("basis as-acid needs acid_inci (the parent acid's INCI name)")
        if self.max_percent is None and self.ph_min is None and self.ph_max is None:
            raise ValueError("give max_percent, or a pH limit (ph_min, ph_max), or both")
        if self.ph_min is not None and self.ph_max is not None and self.ph_min > self.ph_max:
            raise ValueError(f"ph_min {self.ph_min:g} is above ph_max {self.ph_max:g}")
        return self


def read_limits(file: Path, label: str, known_sources: set[str]) -> Rows:
    rows = read_rows(file, label, LIMIT_COLUMNS, LIMIT_REQUIRED)
    source_check = _source_check(known_sources)
    parsed, problems = _validate(LimitRow, label, rows, lambda r: r.key, "key",
                                 lambda r: source_check(r.source))
    if problems:
        raise SeedProblems(problems)
    out: list[dict[str, object]] = []
    out.extend({
            "key": row.key, "jurisdiction": row.jurisdiction, "list_name": row.list_name,
            "entry": row.entry, "ingredients": "; ".join(row.ingredients),
            "category": row.category, "product": row.product, "max_percent": row.max_percent,
            "aggregate": row.aggregate, "basis": row.basis,
            "acid_inci": normalise_inci(row.acid_inci) if row.acid_inci else None,
            "excludes": "; ".join(row.excludes) or None, "conditions": row.conditions,
            "source_key": row.source, "list_date": row.list_date, "purpose": row.purpose,
            "ph_min": row.ph_min, "ph_max": row.ph_max}
        for row in parsed)
    return out


# --- incompatibilities -------------------------------------------------------------------------

INCOMPATIBILITY_COLUMNS = ("key", "class_a", "class_b", "severity", "reason", "advice", "source")


class IncompatibilityRow(_Row):
    key: str = Field(max_length=80, pattern=r"^\S+$")
    class_a: str = Field(max_length=60)
    class_b: str = Field(max_length=60)
    severity: Severity
    reason: str
    advice: str
    source: str

    @field_validator("severity", mode="before")
    @classmethod
    def _severity(cls, value: Any) -> Any:
        return parse_choice(Severity, str(value), "severity")


def _class_or_ingredient(session: Session, texts: Iterable[str]) -> dict[str, str | None]:
    """Each text -> its compatibility class, or the INCI name of the ingredient it names."""
    classes = {norm_token(c): c for c in COMPAT_CLASSES}
    out: dict[str, str | None] = {t: classes.get(norm_token(t)) for t in texts}
    unresolved = [t for t, c in out.items() if c is None]
    found = find_ingredients(session, unresolved)
    for text in unresolved:
        record = found.get(name_key(text))
        out[text] = record.inci_name if record else None
    return out


def read_incompatibilities(file: Path, label: str, known_sources: set[str],
                           session: Session) -> Rows:
    rows = read_rows(file, label, INCOMPATIBILITY_COLUMNS, INCOMPATIBILITY_COLUMNS)
    texts = {cells.get(c, "") for _, cells in rows for c in ("class_a", "class_b")} - {""}
    meaning = _class_or_ingredient(session, texts)
    source_check = _source_check(known_sources)

    def check(row: Any) -> list[tuple[str, str]]:
        problems = source_check(row.source)
        for column in ("class_a", "class_b"):
            text = getattr(row, column)
            if meaning.get(text) is None:
                problems.append((column, f"{text!r} is neither a compatibility class"
                                 f"{did_you_mean(text, COMPAT_CLASSES)} nor an ingredient in the "
                                 "library"))
        return problems

    parsed, problems = _validate(IncompatibilityRow, label, rows, lambda r: r.key, "key", check)
    if problems:
        raise SeedProblems(problems)
    return [{"key": r.key, "class_a": meaning[r.class_a], "class_b": meaning[r.class_b],
             "severity": r.severity.value, "reason": r.reason, "advice": r.advice,
             "source_key": r.source} for r in parsed]


# --- soap pairs ----------------------------------------------------------------------------

SOAP_COLUMNS = ("acid_inci", "base_inci", "soap_inci", "source")


class SoapPairRow(_Row):
    acid_inci: str = Field(max_length=200)
    base_inci: str = Field(max_length=200)
    soap_inci: str = Field(max_length=200)
    source: str


def read_soap_pairs(file: Path, label: str, known_sources: set[str], session: Session) -> Rows:
    """Soap pairs; the acid, the base and the soap must each be an ingredient of the library."""
    rows = read_rows(file, label, SOAP_COLUMNS, SOAP_COLUMNS)
    found = find_ingredients(session, [cells.get(c, "") for _, cells in rows
                                       for c in ("acid_inci", "base_inci", "soap_inci")])
    source_check = _source_check(known_sources)

    def inci(text: str) -> str | None:
        record = found.get(name_key(text))
        return record.inci_name if record else None

    def check(row: Any) -> list[tuple[str, str]]:
        problems = source_check(row.source)
        for column in ("acid_inci", "base_inci", "soap_inci"):
            text = getattr(row, column)
            if inci(text) is None:
                problems.append((column, f"{text!r} is not an ingredient in the library"))
        return problems

    def pair(row: SoapPairRow) -> tuple[str, str]:
        return (name_key(row.acid_inci), name_key(row.base_inci))

    parsed, problems = _validate(SoapPairRow, label, rows, pair, "base_inci", check)
    if problems:
        raise SeedProblems(problems)
    return [{"acid_inci": inci(r.acid_inci), "base_inci": inci(r.base_inci),
             "soap_inci": inci(r.soap_inci), "source_key": r.source} for r in parsed]
