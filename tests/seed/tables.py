"""The repository's seed tables as the seed tests read them: rows of text cells by column."""

from __future__ import annotations

import csv
from pathlib import Path

SEED = Path(__file__).resolve().parents[2] / "seed_data"


def read_seed(name: str) -> list[dict[str, str]]:
    """Every row of ``seed_data/NAME`` as a dict of its cells."""
    with (SEED / name).open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))
