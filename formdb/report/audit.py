"""What ``formdb audit verify`` prints: each chain's length, state and head hash, and every
problem found (text or JSON); the first break gets a line of its own for stderr."""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING, Any

from formdb.schemas.times import utc

if TYPE_CHECKING:
    from formdb.schemas.audit import AuditReport, ServerChangeRecord

KEEP_HEADS = ("Keep the head hashes with a filed report (`formdb audit anchor FILE` writes them "
              "with a digest of every library record): a chain alone cannot show that its "
              "newest rows were removed.")


def audit_verify(report: AuditReport, fmt: str) -> str:
    if fmt == "json":
        return json.dumps({
            "intact": report.intact,
            "chains": [{"table": c.table, "rows": c.rows, "intact": c.intact,
                        "head": {"id": c.head_id, "hash": c.head_hash},
                        "problems": [{"row": p.row_id, "kind": p.kind, "detail": p.detail}
                                     for p in c.problems],
                        "more_problems": c.more_problems} for c in report.chains],
            "anchor": None if report.anchor is None else {
                "file": report.anchor,
                "problems": [{"table": p.table, "row": p.row_id, "kind": p.kind,
                              "detail": p.detail} for p in report.anchor_problems],
                "changed_logged": report.anchor_notes}},
            indent=2, ensure_ascii=False) + "\n"
    lines: list[str] = []
    for chain in report.chains:
        head = (f"head row {chain.head_id} {chain.head_hash}" if chain.head_id is not None
                else "empty")
        state = "intact" if chain.intact else "BROKEN"
        lines.append(f"{chain.table}: {chain.rows} rows, {state}; {head}")
        lines += [f"  {chain.table} row {problem.row_id} ({problem.kind}): {problem.detail}"
                  for problem in chain.problems]
        if chain.more_problems:
            lines.append(f"  ... and {chain.more_problems} more problems")
    if report.anchor is not None:
        state = "BROKEN" if report.anchor_problems else "nothing removed or changed around formdb"
        lines.append(f"Against anchor {report.anchor}: {state}")
        lines += [f"  {p.detail}" for p in report.anchor_problems]
        lines += [f"  {note}" for note in report.anchor_notes]
    lines.append(KEEP_HEADS)
    return "\n".join(lines) + "\n"


def first_break(report: AuditReport) -> str | None:
    """The first altered, removed or slipped-in row, or None when every chain is intact."""
    first = report.first_problem
    if first is None:
        return None
    return f"First break: {first.table} row {first.row_id}: {first.detail}.\n"


def anchor_text(anchor: dict[str, Any]) -> str:
    """The anchor file's text (JSON, one record per line for a readable diff)."""
    return json.dumps(anchor, indent=1, sort_keys=True, ensure_ascii=False) + "\n"


def anchor_written(anchor: dict[str, Any], out: Path) -> str:
    records = sum(len(v) for v in anchor["records"].values())
    heads = "; ".join(f"{table} row {head['head_id']}" for table, head in anchor["chains"].items()
                      if head["head_id"] is not None)
    return (f"Anchor written to {out}: heads {heads}; {records} library records digested. "
            "Keep it with the filed report, outside the library; check it with "
            f"`formdb audit verify --anchor {out}`.\n")


def server_changes_text(records: list[ServerChangeRecord], dialect: str, fmt: str) -> str:
    """``audit changes``: who changed which table, as the server saw it."""
    if fmt == "json":
        return json.dumps([{"id": r.id, "at": utc(r.at).isoformat(), "login": r.login,
                            "table": r.table, "operation": r.operation, "rows": r.rows,
                            "old_rows": json.loads(r.old_rows) if r.old_rows else None,
                            "new_rows": json.loads(r.new_rows) if r.new_rows else None}
                           for r in records], indent=1, ensure_ascii=False) + "\n"
    if dialect != "postgresql":
        return ("This is a SQLite library: there is no server to record changes. formdb's own "
                "change log is `formdb ingredient history`; `formdb audit verify` checks it.\n")
    if not records:
        return ("No change recorded by the server (run `formdb db grant-setup` to install its "
                "triggers).\n")
    lines = [f"{utc(r.at):%Y-%m-%d %H:%M:%S} UTC  {r.login:<20} {r.operation:<6} {r.table} "
             f"({r.rows} row{'s' if r.rows != 1 else ''})" for r in records]
    return "".join(f"{line}\n" for line in lines)
