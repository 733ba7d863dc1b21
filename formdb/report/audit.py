"""What ``formdb audit verify`` prints: each chain's length, state and head hash, and every
problem found (text or JSON); the first break gets a line of its own for stderr."""

from __future__ import annotations

import json
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.audit import AuditReport

KEEP_HEADS = ("Keep the head hashes with a filed report: a chain alone cannot show that its "
              "newest rows were removed.")


def audit_verify(report: AuditReport, fmt: str) -> str:
    if fmt == "json":
        return json.dumps({
            "intact": report.intact,
            "chains": [{"table": c.table, "rows": c.rows, "intact": c.intact,
                        "head": {"id": c.head_id, "hash": c.head_hash},
                        "problems": [{"row": p.row_id, "kind": p.kind, "detail": p.detail}
                                     for p in c.problems],
                        "more_problems": c.more_problems} for c in report.chains]},
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
    lines.append(KEEP_HEADS)
    return "\n".join(lines) + "\n"


def first_break(report: AuditReport) -> str | None:
    """The first altered, removed or slipped-in row, or None when every chain is intact."""
    first = report.first_problem
    if first is None:
        return None
    return f"First break: {first.table} row {first.row_id}: {first.detail}.\n"
