"""Ingredient prices as library data: each quote (per kg, currency, supplier, date) is a row that
is only ever added, so an ingredient's rows are its price history and every quote is logged.

A weigh sheet costs a line with the latest quote from the line's supplier, else the latest quote.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from datetime import UTC, date, datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData, NotFound, quoted
from formdb.schemas.admin import Action
from formdb.schemas.bench import PriceRecord
from formdb.services.admin.access import require
from formdb.store import queries
from formdb.store.change_log import log_entry
from formdb.store.library import Library
from formdb.store.models import Ingredient, IngredientPrice

_CURRENCY = re.compile(r"[A-Z]{3}")
MAX_PRICE_PER_KG = 1e7


def _record(row: IngredientPrice, inci: str) -> PriceRecord:
    return PriceRecord(inci=inci, price_per_kg=row.price_per_kg, currency=row.currency,
                       supplier=row.supplier, quoted_on=row.quoted_on,
                       recorded_by=row.recorded_by, recorded_at=row.recorded_at,
                       note=row.note, id=row.id)


def validate_quote(price_per_kg: float, currency: str, supplier: str,
                   quoted_on: date | None) -> tuple[str, str]:
    """The currency and supplier as stored; a bad value is one input error naming the option."""
    if not (math.isfinite(price_per_kg) and 0 < price_per_kg <= MAX_PRICE_PER_KG):
        raise InvalidData(f"--per-kg {price_per_kg:g}: a price must be above 0 and at most "
                          f"{MAX_PRICE_PER_KG:g} per kg")
    code = currency.strip().upper()
    if not _CURRENCY.fullmatch(code):
        raise InvalidData(f"--currency {currency!r}: write a three-letter ISO 4217 code "
                          "such as EUR, USD or GBP")
    name = " ".join(supplier.split())
    if not name or len(name) > 200:
        raise InvalidData("--supplier: give the supplier's name (at most 200 characters)")
    if quoted_on is not None and quoted_on > datetime.now(UTC).date():
        raise InvalidData(f"--date {quoted_on}: a quote cannot be dated in the future")
    return code, name


def add_price(library: Library, inci: str, price_per_kg: float, currency: str, supplier: str,
              *, user: str, quoted_on: date | None = None,
              note: str | None = None) -> PriceRecord:
    """Record one quote for an ingredient (one transaction, logged in the change log)."""
    code, name = validate_quote(price_per_kg, currency, supplier, quoted_on)
    with library.write() as session:
        require(session, user, Action.CHANGE_LIBRARY)
        record = queries.find_ingredient(session, inci)
        if record is None:
            hint = ", ".join(queries.suggest_names(session, inci))
            raise NotFound(f"no ingredient named {quoted(inci)}",
                           hint=f"did you mean {hint}?" if hint else "check the INCI name")
        now = datetime.now(UTC)
        row = IngredientPrice(ingredient_id=record.id, price_per_kg=price_per_kg, currency=code,
                              supplier=name, quoted_on=quoted_on or now.date(),
                              recorded_at=now, recorded_by=user, note=note)
        session.add(row)
        session.flush()
        session.add(log_entry(
            at=now, user=user, entity="price", entity_key=record.inci_name,
            entity_version=None, action="add", reason=note or "price quote recorded",
            changes=[{"field": f, "old": None, "new": v} for f, v in (
                ("price_per_kg", price_per_kg), ("currency", code), ("supplier", name),
                ("quoted_on", row.quoted_on))]))
        return _record(row, record.inci_name)


def prices_for(session: Session, names: Iterable[str]) -> dict[str, list[PriceRecord]]:
    """Every quote of the ingredients named (INCI names), oldest first, in one query."""
    wanted = sorted(set(names))
    out: dict[str, list[PriceRecord]] = {}
    if not wanted:
        return out
    rows = session.execute(
        select(IngredientPrice, Ingredient.inci_name).join(Ingredient)
        .where(Ingredient.inci_name.in_(wanted))
        .order_by(IngredientPrice.quoted_on, IngredientPrice.id)).all()
    for row, inci in rows:
        out.setdefault(inci, []).append(_record(row, inci))
    return out


def price_history(library: Library, inci: str | None = None) -> list[PriceRecord]:
    """Every quote of one ingredient, or of every ingredient, oldest first."""
    with library.read() as session:
        stmt = select(IngredientPrice, Ingredient.inci_name).join(Ingredient)
        if inci is not None:
            record = queries.find_ingredient(session, inci)
            if record is None:
                raise NotFound(f"no ingredient named {quoted(inci)}", hint="check the INCI name")
            stmt = stmt.where(IngredientPrice.ingredient_id == record.id)
        rows = session.execute(stmt.order_by(Ingredient.inci_name, IngredientPrice.quoted_on,
                                             IngredientPrice.id)).all()
        return [_record(row, name) for row, name in rows]
