"""Queries over stored formulas."""

from __future__ import annotations

from collections.abc import Iterator

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.schemas.ingredient import name_key
from formdb.store.models import StoredFormula


def iter_stored_formulas(session: Session, chunk: int = 500) -> Iterator[StoredFormula]:
    """Every stored formula in name order, fetched in chunks so memory stays flat."""
    stmt = select(StoredFormula).order_by(StoredFormula.name_key).execution_options(
        yield_per=chunk)
    yield from session.scalars(stmt)


def get_formula(session: Session, name: str) -> StoredFormula | None:
    return session.scalar(select(StoredFormula).where(StoredFormula.name_key == name_key(name)))


def formula_names(session: Session) -> list[str]:
    return list(session.scalars(select(StoredFormula.name).order_by(StoredFormula.name_key)))
