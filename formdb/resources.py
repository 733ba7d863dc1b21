"""Where the bundled seed data and migrations are, installed or in a checkout.

In a wheel they live in ``formdb/_bundled/``; in a source checkout (editable install or tests run
from the repository) they are the top-level ``seed_data/`` and ``migrations/`` folders.
"""

from __future__ import annotations

from pathlib import Path

_PACKAGE_DIR = Path(__file__).resolve().parent


def _locate(name: str) -> Path:
    bundled = _PACKAGE_DIR / "_bundled" / name
    if bundled.is_dir():
        return bundled
    checkout = _PACKAGE_DIR.parent / name
    if checkout.is_dir():
        return checkout
    raise FileNotFoundError(f"formdb cannot find its bundled {name}/ folder (looked in {bundled})")


def seed_data_dir() -> Path:
    return _locate("seed_data")


def migrations_dir() -> Path:
    return _locate("migrations")
