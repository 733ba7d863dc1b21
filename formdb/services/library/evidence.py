"""The kinds of evidence record (sources, toxicology, exposure) and what follows from a source.

Each kind validates cells with the row model the bundled seed is read with, so the seed, a
team's table and ``--set`` on the command line accept exactly the same values. A source's kind
sets the grade of every value citing it: when the grade changes, the values follow, and each
ingredient that moves is logged and gets a new version (so review status sees it).
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterable
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, TypeVar

from pydantic import BaseModel, ValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from formdb.errors import InvalidData
from formdb.schemas.ingredient import name_key
from formdb.schemas.vocab import KIND_GRADE, SourceKind, norm_token
from formdb.services.library.records import (
    Cells,
    RecordKind,
    RowProblem,
    blank_to_none,
    cell_text,
    unknown_key,
)
from formdb.services.seed.safety import (
    EXPOSURE_COLUMNS,
    TOXICOLOGY_COLUMNS,
    ExposureRow,
    ToxicologyRow,
    _consistency,
)
from formdb.services.seed.tables import SOURCE_COLUMNS, SourceRow, source_values
from formdb.store.change_log import log_entry
from formdb.store.models import (
    Base,
    ExposureEntry,
    Ingredient,
    PropertyValue,
    Source,
    ToxicologyEntry,
)
from formdb.store.queries import find_ingredients

M = TypeVar("M", bound=BaseModel)
Plan = tuple[int, tuple[Any, ...], dict[str, Any]]
_BUILTIN = {"rule-of-thumb", "from-memory"}


def _parse(model: type[M], rows: list[tuple[int, Cells]],
           check: Callable[[M], list[tuple[str, str]]]) -> tuple[list[tuple[int, M]],
                                                                list[RowProblem]]:
    """Validate every row with ``model`` then ``check``; problems name row and column."""
    parsed: list[tuple[int, M]] = []
    problems: list[RowProblem] = []
    for number, cells in rows:
        try:
            row = model.model_validate(blank_to_none(cells))
        except ValidationError as exc:
            for err in exc.errors():
                column = str(err["loc"][0]) if err["loc"] else None
                given = cells.get(column or "", "")
                message = str(err["msg"]).removeprefix("Value error, ")
                if err["type"] == "missing":
                    message = "is empty; a value is required"
                problems.append((number or None, column,
                                 message + (f" (given {given!r})" if given else "")))
            continue
        found = check(row)
        problems += [(number or None, column, text) for column, text in found]
        if not found:
            parsed.append((number, row))
    return parsed, problems


def _source_keys(session: Session) -> set[str]:
    return set(session.scalars(select(Source.key))) | _BUILTIN


def _plain(session: Session, obj: Base, columns: Iterable[str]) -> Cells:
    return {c: cell_text(getattr(obj, c, None)) for c in columns}


# --- sources ---------------------------------------------------------------------------------

def _validate_sources(session: Session, rows: list[tuple[int, Cells]],
                      ) -> tuple[list[Plan], list[RowProblem]]:
    parsed, problems = _parse(SourceRow, rows, lambda _r: [])
    return [(n, (r.key,), source_values(r)) for n, r in parsed], problems


SOURCES = RecordKind(
    entity="source", model=Source, columns=SOURCE_COLUMNS, key_columns=("key",),
    validate=_validate_sources,
    cells_of=lambda session, obj: _plain(session, obj, SOURCE_COLUMNS),
    orm_key=lambda _s, cells: (cells.get("key", "").strip(),),
    after_write=lambda session, user: _sync(session, user), derived={"evidence": "kind"})


def _sync(session: Session, user: str) -> None:
    sync_value_grades(session, user=user)


def file_checksum(path: Path) -> str:
    """``sha256:<hex>`` of a cited file, so the document can be recognised later."""
    digest = hashlib.sha256()
    try:
        if path.exists() and not path.is_file():  # a device such as /dev/zero never ends
            raise InvalidData(f"{path}: is not a regular file (a folder, device, pipe or "
                              "socket).", hint="name the cited document's file")
        with path.open("rb") as handle:
            for block in iter(lambda: handle.read(1 << 16), b""):
                digest.update(block)
    except OSError as exc:
        raise InvalidData(f"{path}: cannot be read ({exc.strerror or exc}).",
                          hint="name the cited document's file") from None
    return f"sha256:{digest.hexdigest()}"


def sources_with_checksum(session: Session, path: Path) -> list[str]:
    """The keys of the sources whose recorded checksum is this file's."""
    checksum = file_checksum(path)
    return list(session.scalars(select(Source.key).where(Source.checksum == checksum)
                                .order_by(Source.key)))


def citing_values(session: Session, key: str) -> list[str]:
    """One line per ingredient value that cites source ``key``."""
    rows = session.execute(
        select(Ingredient.inci_name, PropertyValue.property, PropertyValue.evidence)
        .join(Ingredient, Ingredient.id == PropertyValue.ingredient_id)
        .where(PropertyValue.source_key == key)
        .order_by(Ingredient.inci_name, PropertyValue.property)).all()
    if not rows:
        return ["no ingredient value cites it."]
    return [f"cited by {len(rows)} value(s):",
            *(f"  {name}: {prop} ({grade})" for name, prop, grade in rows)]


def _grade_sources(session: Session, *, user: str, reason: str | None) -> None:
    """A source's grade is the one its kind sets (a kind filled in later wins over an older
    grade); each correction is logged on the source."""
    now = datetime.now(UTC)
    for source in session.scalars(select(Source).where(Source.kind.is_not(None))):
        try:
            grade = KIND_GRADE[SourceKind(source.kind or "")].value
        except ValueError:
            continue
        if source.evidence != grade:
            session.add(log_entry(
                at=now, user=user, entity="source", entity_key=source.key, entity_version=None,
                action="grade", reason=reason or f"the grade of kind {source.kind!r}",
                changes=[{"field": "evidence", "old": source.evidence, "new": grade}]))
            source.evidence = grade
    session.flush()


def sync_value_grades(session: Session, *, user: str, reason: str | None = None) -> int:
    """Give every value the grade of the source it cites; log and version each ingredient whose
    values move. Returns the number of values changed."""
    _grade_sources(session, user=user, reason=reason)
    grades = dict(session.execute(select(Source.key, Source.evidence)).all())
    stale = list(session.execute(
        select(PropertyValue.ingredient_id, PropertyValue.property, PropertyValue.source_key,
               PropertyValue.evidence)))
    moving: dict[int, list[tuple[str, str, str]]] = {}
    for ingredient_id, prop, key, evidence in stale:
        grade = grades.get(key)
        if grade is not None and grade != evidence:
            moving.setdefault(ingredient_id, []).append((prop, evidence, grade))
    if not moving:
        return 0
    now = datetime.now(UTC)
    changed = 0
    for ing in session.scalars(select(Ingredient).where(Ingredient.id.in_(sorted(moving)))
                               .options(selectinload(Ingredient.values))):
        by_prop = {p: (old, new) for p, old, new in moving[ing.id]}
        for value in ing.values:
            if value.property in by_prop:
                value.evidence = by_prop[value.property][1]
                changed += 1
        ing.updated_at, ing.updated_by = now, user
        session.flush()
        session.add(log_entry(
            at=now, user=user, entity="ingredient", entity_key=ing.inci_name,
            entity_version=ing.version, action="grade",
            changes=[{"field": prop, "old_evidence": old, "new_evidence": new}
                     for prop, (old, new) in sorted(by_prop.items())],
            reason=reason or "the grade of the source it cites changed"))
    session.flush()
    return changed


# --- toxicology ------------------------------------------------------------------------------

TOX_COLUMNS = TOXICOLOGY_COLUMNS  # the seed file's columns, duration included


class ToxicologyInput(ToxicologyRow):
    """A toxicology row from the CLI or a table import (the seed file's row)."""


def _validate_toxicology(session: Session, rows: list[tuple[int, Cells]],
                         ) -> tuple[list[Plan], list[RowProblem]]:
    known = _source_keys(session)
    found = find_ingredients(session, [c.get("inci", "") for _n, c in rows])
    held = dict(session.execute(select(ToxicologyEntry.ingredient_id, ToxicologyEntry.key)).all())
    claimed: dict[int, str] = {}

    def check(row: ToxicologyInput) -> list[tuple[str, str]]:
        problems = []
        for column in ("source", "dermal_absorption_source", "oral_bioavailability_source"):
            key = getattr(row, column)
            if key is not None and (text := unknown_key(known, key, column)):
                problems.append((column, text))
        record = found.get(name_key(row.inci))
        if record is None:
            problems.append(("inci", f"{row.inci!r} is not an ingredient in the library"))
            return problems
        other = claimed.get(record.id) or held.get(record.id)
        if other is not None and other != row.key:
            problems.append(("inci", f"{record.inci_name} already has the toxicology record "
                                     f"{other!r}; one point of departure per substance (edit "
                                     "that record instead)"))
        claimed[record.id] = row.key
        return problems

    parsed, problems = _parse(ToxicologyInput, rows, check)
    plans = [(n, (r.key,), {**r.model_dump(exclude={"inci", "source"}), "source_key": r.source,
                            "ingredient_id": found[name_key(r.inci)].id}) for n, r in parsed]
    return plans, problems


def _toxicology_cells(session: Session, obj: Base) -> Cells:
    assert isinstance(obj, ToxicologyEntry)
    ing = session.get(Ingredient, obj.ingredient_id)
    cells = _plain(session, obj, [c for c in TOX_COLUMNS if c not in ("inci", "source")])
    cells["inci"] = ing.inci_name if ing is not None else ""
    cells["source"] = obj.source_key or ""
    return {c: cells.get(c, "") for c in TOX_COLUMNS}


TOXICOLOGY = RecordKind(
    entity="toxicology", model=ToxicologyEntry, columns=TOX_COLUMNS, key_columns=("key",),
    validate=_validate_toxicology, cells_of=_toxicology_cells,
    orm_key=lambda _s, cells: (cells.get("key", "").strip(),), plural="toxicology")


# --- exposure --------------------------------------------------------------------------------

def _validate_exposure(session: Session, rows: list[tuple[int, Cells]],
                       ) -> tuple[list[Plan], list[RowProblem]]:
    known = _source_keys(session)

    def check(row: ExposureRow) -> list[tuple[str, str]]:
        problems = _consistency(row)
        if text := unknown_key(known, row.source, "source"):
            problems.append(("source", text))
        return problems

    parsed, problems = _parse(ExposureRow, rows, check)
    plans = [(n, (r.product,), {**r.model_dump(exclude={"source"}), "source_key": r.source})
             for n, r in parsed]
    return plans, problems


def _exposure_cells(session: Session, obj: Base) -> Cells:
    assert isinstance(obj, ExposureEntry)
    cells = _plain(session, obj, [c for c in EXPOSURE_COLUMNS if c != "source"])
    cells["source"] = obj.source_key or ""
    return {c: cells.get(c, "") for c in EXPOSURE_COLUMNS}


EXPOSURE = RecordKind(
    entity="exposure", model=ExposureEntry, columns=EXPOSURE_COLUMNS, key_columns=("product",),
    validate=_validate_exposure, cells_of=_exposure_cells,
    orm_key=lambda _s, cells: (norm_token(cells.get("product", "")),), plural="exposure")

KINDS: dict[str, RecordKind] = {k.entity: k for k in (SOURCES, TOXICOLOGY, EXPOSURE)}
