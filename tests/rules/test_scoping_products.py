"""Every product type a formula may name (the exposure table, seed_data/exposure.csv) is known to
the scoping of list entries: an unknown one would leave every annex part undecided."""

from __future__ import annotations

import csv
from pathlib import Path

from formdb.rules.scoping import PRODUCTS

EXPOSURE = Path(__file__).resolve().parents[2] / "seed_data" / "exposure.csv"


def test_every_exposure_product_type_is_scoped() -> None:
    with EXPOSURE.open(newline="", encoding="utf-8") as handle:
        products = {row["product"].casefold() for row in csv.DictReader(handle)}
    assert products - set(PRODUCTS) == set()
