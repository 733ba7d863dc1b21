"""The audit trail: append sealed rows, and verify every hash chain.

The sealing itself (canonical form, hashes, the session hooks that seal every new row of the
change log and the review tables) is formdb.store.sealing. ``verify_chains`` walks each table in
id order and recomputes: a row whose content no longer matches its hash was altered; a row whose
``prev_hash`` is not the previous row's hash means rows were removed, slipped in, or altered and
resealed. A gap in ids alone is not a break: PostgreSQL spends ids of rolled-back writes, and the
chain (not the id sequence) says what was committed.

What a chain cannot show on its own: removing the newest rows (the head moves back), or a writer
with the table's UPDATE right who recomputes every later hash. Record ``head`` (the last id and
hash printed by ``formdb audit verify``) with a filed report to anchor it; on PostgreSQL, writers
get INSERT only on the change log (``formdb db grant-setup``).
"""

from __future__ import annotations

import json
from collections import deque
from pathlib import Path
from typing import Any

from sqlalchemy import inspect, select, text
from sqlalchemy.orm import Session

from formdb.schemas.audit import AuditReport, ChainProblem, ChainReport
from formdb.store.change_log import LEGACY_FORM, legacy_payload
from formdb.store.library import Library
from formdb.store.models import Base
from formdb.store.sealing import GENESIS, SEALED_COLUMNS, canonical, row_hash, seal

_WINDOW = 64  # recent hashes kept to recognise rows slipped in between two sealed rows
_MAX_PROBLEMS = 20  # per table; the first is what matters, the rest show the extent


def append_sealed(session: Session, row: Any) -> Any:
    """Add a change-log or review row and flush it: the session hook gives it its id and seals
    it onto the end of its table's chain (under the write lock). Returns the row."""
    session.add(row)
    session.flush()
    return row


def seal_values(table: str, rows: list[dict[str, Any]], first_id: int, prev_hash: str) -> str:
    """Seal plain dicts as rows ``first_id``... after ``prev_hash``; returns the new head."""
    return seal(table, rows, first_id, prev_hash)


def _short(value: str | None) -> str:
    return "(none)" if value is None else value[:12]


def verify_table(session: Session, table: str) -> ChainReport:
    """Recompute one chain, oldest row first."""
    report = ChainReport(table)
    model = Base.metadata.tables[table]
    columns = [model.c[name] for name in (*SEALED_COLUMNS[table], "row_hash")]
    recent: deque[tuple[int, str]] = deque(maxlen=_WINDOW)  # (id, stored row_hash)
    prev_id: int | None = None
    prev_stored: str = GENESIS

    def problem(row_id: int, kind: str, detail: str) -> None:
        if len(report.problems) < _MAX_PROBLEMS:
            report.problems.append(ChainProblem(table, row_id, kind, detail))
        else:
            report.more_problems += 1

    stmt = select(*columns).order_by(model.c.id).execution_options(yield_per=1000)
    for row in session.execute(stmt).mappings():
        report.rows += 1
        row_id, linked, stored = int(row["id"]), row["prev_hash"], row["row_hash"]
        if stored is None:
            problem(row_id, "unsealed", f"row {row_id} has no hash: it was written outside "
                    "formdb (plain SQL) or never sealed")
        elif row_hash(linked or "", canonical(table, dict(row))) != stored:
            problem(row_id, "altered", f"row {row_id} was altered: its content no longer "
                    f"matches its hash {_short(stored)}")
        elif table == "change_log" and row["form"] == LEGACY_FORM and not _typed_matches(row):
            problem(row_id, "altered", f"row {row_id} was altered: its typed changes no longer "
                    "say what its sealed text says")
        if linked != prev_stored:
            earlier = next((i for i, h in recent if h == linked and i != prev_id), None)
            if prev_id is None:
                problem(row_id, "removed", f"the chain does not start at row {row_id}: "
                        "earlier rows were removed")
            elif earlier is not None:
                first_in = next(i for i, _h in recent if i > earlier)
                problem(first_in, "inserted", f"row {first_in} was inserted out of order: row "
                        f"{row_id} links to row {earlier}, not to the rows after it")
            elif row_id > prev_id + 1:
                gone = (f"row {prev_id + 1} was" if row_id == prev_id + 2
                        else f"rows {prev_id + 1}..{row_id - 1} were")
                problem(prev_id + 1, "removed", f"{gone} removed: row {row_id} does not link "
                        f"to row {prev_id}")
            else:
                problem(row_id, "broken-link", f"row {row_id} does not link to row {prev_id}: "
                        f"a row between them was removed, or row {prev_id} was altered and "
                        "resealed")
        recent.append((row_id, stored or ""))
        prev_id, prev_stored = row_id, stored or ""
    report.head_id = prev_id
    report.head_hash = prev_stored if prev_id is not None else None
    for row_id in _server_seal_failures(session, table):
        problem(row_id, "server-seal", f"row {row_id} does not carry the server's seal: it was "
                "rewritten, or removed and put back, by someone without the server's key")
    return report


def _server_seal_failures(session: Session, table: str) -> list[int]:
    """On PostgreSQL (migration 0019), the rows whose keyed seal the server does not confirm;
    elsewhere, or before that migration, none."""
    connection = session.connection()
    if connection.dialect.name != "postgresql":
        return []
    checker = connection.execute(text(
        "SELECT to_regprocedure(current_schema() || "
        "'.formdb_seal_ok(text, bigint, text, text, text)')")).scalar()
    if checker is None:
        return []
    rows = connection.execute(text(
        f"SELECT id FROM (SELECT id, row_hash, server_seal, lag(server_seal) OVER (ORDER BY id) "
        f'AS before FROM "{table}") s WHERE NOT formdb_seal_ok(:t, id, row_hash, before, '
        "server_seal) ORDER BY id"), {"t": table}).scalars().all()
    return [int(r) for r in rows]

def _typed_matches(row: Any) -> bool:
    """A migrated (form 1) entry's typed payload is what its sealed text converts to: the hash
    covers that text only, so the typed part is checked against it."""
    try:
        payload = json.loads(row["payload"])
        sealed = payload["sealed"]
        expected = legacy_payload(row["entity"], row["action"], sealed["field"],
                                  sealed["old_value"], sealed["new_value"])
    except (ValueError, KeyError, TypeError):
        return False
    return bool(json.loads(expected) == payload)


def verify_signatures(session: Session, report: ChainReport) -> None:
    """Check every signature against the key enrolled for its signer (Ed25519): a row written
    or edited without the signer's private key is a problem even when its seal is intact."""
    from formdb.services.review import keys
    from formdb.store.models import ReviewRun, ReviewSignature

    enrolled = keys.enrolments(session)
    runs = {int(i): (str(h), at) for i, h, at in
            session.execute(select(ReviewRun.id, ReviewRun.run_hash, ReviewRun.created_at))}
    for sig in session.scalars(select(ReviewSignature).order_by(ReviewSignature.id)):
        run_hash, made = runs.get(sig.run_id, ("", None))
        check = keys.check_signature(sig, run_hash, enrolled, made)
        if check != "valid":
            detail = f"signature {sig.id} ({sig.meaning} by {sig.signer}) is {check}"
            if len(report.problems) < _MAX_PROBLEMS:
                report.problems.append(ChainProblem(report.table, sig.id, "invalid-signature",
                                                    detail))
            else:
                report.more_problems += 1


def verify_run_hashes(session: Session, report: ChainReport) -> None:
    """Check every run against its own run hash and formula hash: a run rewritten and resealed
    with the public chain hash passes the chain, not this (its hash is what signatures sign)."""
    from formdb.services.review.runs import run_record_problems
    from formdb.store.models import ReviewRun

    hashes = {int(i): str(h) for i, h in
              session.execute(select(ReviewRun.id, ReviewRun.run_hash)).all()}
    for run in session.scalars(select(ReviewRun).order_by(ReviewRun.id)):
        for why in run_record_problems(run, hashes):
            if len(report.problems) < _MAX_PROBLEMS:
                report.problems.append(ChainProblem(report.table, run.id, "run-hash",
                                                    f"run {run.run_key} (row {run.id}): {why}"))
            else:
                report.more_problems += 1


def _chains(session: Session, tables: list[str] | None) -> list[ChainReport]:
    present = set(inspect(session.connection()).get_table_names())
    wanted = [t for t in (tables or list(SEALED_COLUMNS)) if t in present]
    chains = [verify_table(session, t) for t in wanted]
    for chain in chains:
        if chain.table == "review_signatures" and "key_enrolments" in present:
            verify_signatures(session, chain)
        if chain.table == "review_runs":
            verify_run_hashes(session, chain)
    return chains


def verify_chains(library: Library, tables: list[str] | None = None,
                  anchor: Path | None = None) -> AuditReport:
    """Verify every sealed table present in the library (or the ones named), every signature
    against the enrolled keys, and, given an anchor file, what changed since it."""
    from formdb.services.review import anchors

    kept = anchors.read_anchor(anchor) if anchor is not None else None
    with library.read() as session:
        chains = _chains(session, tables)
        if kept is None:
            return AuditReport(chains)
        problems, notes = anchors.check_anchor(session, kept, {c.table: c for c in chains})
        return AuditReport(chains, f"{anchor} (made {anchors.anchor_time(kept)} by "
                                   f"{kept.get('made_by', '?')})", problems, notes)


def write_anchor(library: Library, *, user: str) -> dict[str, Any]:
    """``formdb audit anchor``: the heads and record digests to keep outside the library. The
    chains are verified first: anchoring a broken chain would vouch for it."""
    from formdb.errors import Conflict
    from formdb.services.review import anchors

    with library.read() as session:
        chains = _chains(session, None)
        broken = next((p for c in chains for p in c.problems), None)
        if broken is not None:
            raise Conflict(f"{broken.table} row {broken.row_id}: {broken.detail}; an anchor "
                           "would vouch for a broken chain.", hint="formdb audit verify")
        return anchors.make_anchor(session, chains, user=user,
                                   database=library.url)


__all__ = ["AuditReport", "ChainProblem", "ChainReport", "append_sealed", "canonical",
           "row_hash", "seal_values", "verify_chains", "verify_table"]
