"""Ingredient prices as text: one quote a line, or the history as a table."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.bench import PriceRecord


def price_line(p: PriceRecord) -> str:
    note = f" ({p.note})" if p.note else ""
    return (f"{p.inci}: {p.price_per_kg:,.2f} {p.currency}/kg from {p.supplier}, quoted "
            f"{p.quoted_on}, recorded by {p.recorded_by}{note}")


def price_table(prices: Sequence[PriceRecord]) -> str:
    if not prices:
        return "no prices recorded (formdb price add INCI --per-kg N --currency EUR --supplier S)\n"
    return "".join(price_line(p) + "\n" for p in prices)
