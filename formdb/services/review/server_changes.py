"""The server's record of changes (PostgreSQL's ``server_change_log``, written by triggers with
``session_user``; see formdb.store.server_audit): every change to a library table, plain SQL
included, with the login that made it. Read-only here: nothing in formdb writes it."""

from __future__ import annotations

import json

from sqlalchemy import select

from formdb.schemas.audit import ServerChangeRecord
from formdb.store.library import Library
from formdb.store.models import ServerChange


def _count(rows: str | None) -> int:
    try:
        found = json.loads(rows) if rows else []
    except ValueError:
        return 0
    return len(found) if isinstance(found, list) else 0


def server_changes(library: Library, *, table: str | None = None, login: str | None = None,
                   limit: int = 50) -> list[ServerChangeRecord]:
    """The newest ``limit`` changes, newest first, optionally of one table or one login."""
    stmt = select(ServerChange).order_by(ServerChange.id.desc()).limit(limit)
    if table:
        stmt = stmt.where(ServerChange.table_name == table)
    if login:
        stmt = stmt.where(ServerChange.login == login)
    with library.read() as session:
        return [ServerChangeRecord(c.id, c.at, c.login, c.table_name, c.operation,
                                   max(_count(c.old_rows), _count(c.new_rows)), c.old_rows,
                                   c.new_rows)
                for c in session.scalars(stmt)]
