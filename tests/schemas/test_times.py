"""Stored timestamps as aware UTC: naive values (SQLite) were written as UTC; aware ones convert."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta, timezone

from formdb.schemas.times import utc


def test_naive_is_taken_as_utc_and_aware_is_converted() -> None:
    naive = datetime(2026, 3, 1, 9, 30)
    assert utc(naive) == datetime(2026, 3, 1, 9, 30, tzinfo=UTC) and utc(naive).tzinfo is UTC
    paris = datetime(2026, 3, 1, 10, 30, tzinfo=timezone(timedelta(hours=1)))
    assert utc(paris).hour == 9 and utc(paris).tzinfo is UTC
    assert utc(utc(naive)) == utc(naive)
