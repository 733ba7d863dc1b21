"""Stored timestamps as aware UTC, in one place for every layer.

formdb writes every timestamp in UTC. PostgreSQL hands them back aware (in the session's time
zone), SQLite naive; ``utc`` makes both the same aware UTC value.
"""

from __future__ import annotations

from datetime import UTC, datetime


def utc(value: datetime) -> datetime:
    """Aware UTC; a naive value (SQLite hands those back) was written as UTC."""
    return value.replace(tzinfo=UTC) if value.tzinfo is None else value.astimezone(UTC)
