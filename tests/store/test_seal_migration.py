"""Migration 0012 seals a library's existing log once: rows written before sealing become one
intact chain; a library that already has a chain is left alone (an unsealed row slipped in
later is reported by ``audit verify``, never sealed by re-running the migration)."""

from __future__ import annotations

import json
from datetime import UTC, datetime

import pytest
from sqlalchemy import text

from formdb.store.db import downgrade, make_engine, upgrade
from tests.helpers import run_formdb

pytestmark = pytest.mark.slow  # left out of the fast lane

AT = datetime(2026, 3, 2, 9, 30, 15, 250000, tzinfo=UTC)


def _log_rows(url: str, count: int, start: int) -> None:
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            for number in range(start, start + count):
                conn.execute(text(
                    'INSERT INTO change_log (id, at, "user", entity, entity_key, entity_version, '
                    "action, field, old_value, new_value, reason) VALUES (:id, :at, 'ana', "
                    "'ingredient', 'Glycerin', :v, 'edit', 'density', '1.25', '1.26', NULL)"),
                    {"id": number, "at": AT if "postgresql" in url else AT.replace(tzinfo=None),
                     "v": number})
    finally:
        engine.dispose()


def _chain(url: str) -> dict[str, object]:
    result = run_formdb(["--db", url, "audit", "verify", "--format", "json"])
    assert result.exit_code in (0, 1), result.stderr
    return next(c for c in json.loads(result.stdout)["chains"] if c["table"] == "change_log")


def _step(url: str, action: str, revision: str) -> None:
    engine = make_engine(url)
    try:
        (upgrade if action == "upgrade" else downgrade)(engine, revision)
    finally:
        engine.dispose()


def test_existing_rows_are_sealed_once(empty_library_url: str) -> None:
    url = empty_library_url
    _step(url, "upgrade", "0011_review_runs")
    _log_rows(url, 5, start=1)
    _step(url, "upgrade", "head")
    chain = _chain(url)
    assert chain["intact"] and chain["rows"] == 5
    # an unsealed row slipped in after sealing stays unsealed through a step down and up
    _step(url, "downgrade", "0012_seal_audit_rows")
    _log_rows(url, 1, start=6)
    _step(url, "downgrade", "0011_review_runs")
    _step(url, "upgrade", "head")
    chain = _chain(url)
    assert not chain["intact"]
    assert chain["problems"][0]["row"] == 6 and chain["problems"][0]["kind"] == "unsealed"
