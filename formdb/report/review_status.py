"""What ``formdb review run|sign|status`` and ``review report --out`` print (text, or the status
as JSON). Kept apart from report.review, whose HTML needs jinja2."""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import asdict
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.review import FiledRun, RunState, RunSummary, SignatureInfo


def run_stored(summary: RunSummary) -> str:
    """``review run``: the run's key, verdict, counts and hash, and the run it replaces."""
    lines = [f"Run {summary.run_key}: {summary.formula}: {summary.verdict} "
             f"({summary.errors} error, {summary.warnings} warning findings; "
             f"{summary.open_items} open item(s); {summary.records} library records hashed)",
             f"Run hash {summary.run_hash}"]
    if summary.supersedes:
        lines.append(f"Supersedes run {summary.supersedes}.")
    return "\n".join(lines) + "\n"


def run_signed(sig: SignatureInfo) -> str:
    """``review sign``: who signed which run, meaning what, when."""
    return (f"Signed run {sig.run_hash[:12]}: {sig.meaning} by {sig.signer} "
            f"(login {sig.signed_by}) at {sig.signed_at}; run hash {sig.run_hash}\n")


def review_status(states: Sequence[RunState], fmt: str) -> str:
    """``review status``: every run with its state, what changed and its signatures."""
    if fmt == "json":
        return json.dumps([asdict(s) for s in states], indent=2, ensure_ascii=False) + "\n"
    if not states:
        return "No review runs yet: `formdb review run FILE` makes one.\n"
    lines: list[str] = []
    for s in states:
        extra = f" by {s.superseded_by}" if s.superseded_by else ""
        lines.append(f"{s.run_key}  {s.state}{extra}  {s.formula}  ({s.profile}; "
                     f"{s.created_at}, {s.created_by})")
        lines += [f"    changed: {change}" for change in s.changes]
        lines += [f"    signed: {sig.meaning} by {sig.signer} ({sig.signed_by}) at "
                  f"{sig.signed_at}" for sig in s.signatures]
    return "\n".join(lines) + "\n"


def report_written(filed: FiledRun, out: Path) -> str:
    """``review report --out``: which run's report went where."""
    return f"Report of run {filed.state.run_key} ({filed.state.state}) written to {out}\n"
