"""Fixtures the seed tests share."""

from __future__ import annotations

import pytest

from tests.seed.tables import read_seed


@pytest.fixture(scope="session")
def sources() -> dict[str, dict[str, str]]:
    """seed_data/sources.csv by source key."""
    return {row["key"]: row for row in read_seed("sources.csv")}
