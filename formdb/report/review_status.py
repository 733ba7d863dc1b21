"""What ``formdb review run|sign|status`` and ``review report --out`` print (text, or the status
as JSON). Kept apart from report.review, whose HTML needs jinja2."""

from __future__ import annotations

import json
from dataclasses import asdict
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.review import (
        FiledRun,
        ReviewStatus,
        RunState,
        RunSummary,
        SignatureInfo,
    )


def waived(waivers: list[dict[str, object]]) -> list[str]:
    """Waived open items grouped by their justification: "items 1-12 (EVD01): why"."""
    groups: dict[str, list[dict[str, object]]] = {}
    for w in waivers:
        groups.setdefault(str(w["justification"]), []).append(w)
    lines = []
    for why, items in groups.items():
        numbers = [int(str(w["item"])) for w in items]
        rules = sorted({str(w["rule"]) for w in items})
        span = (f"item {numbers[0]}" if len(numbers) == 1 else
                f"items {numbers[0]}-{numbers[-1]}" if numbers == list(
                    range(numbers[0], numbers[-1] + 1)) else
                f"items {', '.join(map(str, numbers))}")
        lines.append(f"{span} ({', '.join(rules)}): {why}")
    return lines


def run_stored(summary: RunSummary) -> str:
    """``review run``: the run's key, verdict, counts and hash, its profile by hash and origin,
    whether it is signable or a draft, and the run it replaces."""
    lines = [f"Run {summary.run_key}: {summary.formula}: {summary.verdict} "
             f"({summary.errors} error, {summary.warnings} warning findings; "
             f"{summary.open_items} open item(s); {summary.records} library records hashed)",
             f"Run hash {summary.run_hash}",
             f"Profile {summary.profile}, hash {summary.profile_hash[:12]} "
             f"({summary.profile_origin})"]
    if summary.signable:
        lines.append("Signable: its profile is the one the review policy names.")
    else:
        lines.append(f"DRAFT: the review policy names profile {summary.policy_profile}; this "
                     "run cannot be signed and supersedes no signable run.")
    if summary.supersedes:
        lines.append(f"Supersedes {'draft ' if not summary.signable else ''}run "
                     f"{summary.supersedes}.")
    return "\n".join(lines) + "\n"


def run_signed(sig: SignatureInfo) -> str:
    """``review sign``: who signed which run with which key, meaning what, when, and why."""
    lines = [f"Signed run {sig.run_hash[:12]}: {sig.meaning} by {sig.signer} "
             f"(login {sig.signed_by}, key {sig.key_id}) at {sig.signed_at}; run hash "
             f"{sig.run_hash}"]
    if sig.comment:
        lines.append(f"Reason: {sig.comment}")
    lines += [f"Waived open {line}" for line in waived(sig.waivers)]
    if sig.supersedes:
        lines.append(f"This supersedes your earlier signature #{sig.supersedes} on the run "
                     "(it stays on record).")
    return "\n".join(lines) + "\n"


def _signature_line(sig: SignatureInfo) -> list[str]:
    mark = "" if sig.valid else f"  {sig.check}"
    later = f"  (superseded by #{sig.superseded_by})" if sig.superseded_by else ""
    lines = [f"    signed #{sig.number}: {sig.meaning} by {sig.signer} ({sig.signed_by}, key "
             f"{sig.key_id or 'none'}) at {sig.signed_at}{later}{mark}"]
    if sig.comment:
        lines.append(f"      reason: {sig.comment}")
    lines += [f"      waived {line}" for line in waived(sig.waivers)]
    return lines


def _state_json(state: RunState) -> dict[str, object]:
    data = asdict(state)
    data["verified"] = state.verified
    for sig, shown in zip(state.signatures, data["signatures"], strict=True):
        shown["valid"] = sig.valid
    return data


def review_status(status: ReviewStatus, fmt: str) -> str:
    """``review status``: every run with its state, kind, profile hash, what changed, its
    signatures, and BROKEN or INVALID beside whatever does not verify."""
    if fmt == "json":
        return json.dumps({"verified": status.verified, "problems": status.problems,
                           "policy": asdict(status.policy),
                           "runs": [_state_json(s) for s in status.runs]},
                          indent=2, ensure_ascii=False) + "\n"
    p = status.policy
    lines = [f"Review policy {p.policy_hash[:12]}: signable profile {p.profile_name} "
             f"{p.profile_version} ({p.profile_hash[:12]})"]
    lines += [f"BROKEN: {problem}" for problem in status.problems]
    if not status.runs:
        lines.append("No review runs yet: `formdb review run FILE` makes one.")
    for s in status.runs:
        extra = f" by {s.superseded_by}" if s.superseded_by else ""
        mark = "  BROKEN" if s.broken else ""
        lines.append(f"{s.run_key}  {s.state}{extra}  {s.kind}  {s.formula}  ({s.profile}, "
                     f"hash {(s.profile_hash or 'none')[:12]}, {s.profile_origin or 'unknown'}"
                     f"; {s.created_at}, {s.created_by}){mark}")
        lines += [f"    BROKEN: {why}" for why in s.broken]
        lines += [f"    changed: {change}" for change in s.changes]
        for sig in s.signatures:
            lines += _signature_line(sig)
    return "\n".join(lines) + "\n"


def report_written(filed: FiledRun, out: Path) -> str:
    """``review report --out``: which run's report went where."""
    return f"Report of run {filed.state.run_key} ({filed.state.state}) written to {out}\n"
