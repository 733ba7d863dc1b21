"""What ``formdb impact`` prints: per ingredient, the stored formulas whose verdict or findings
a library change moves, and the signed review runs it makes stale (text or JSON)."""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from formdb.schemas.impact import ImpactReport


def render_impacts(reports: Sequence[ImpactReport], fmt: str) -> str:
    if fmt == "json":
        objects = [impact_record(report) for report in reports]
        payload = objects[0] if len(objects) == 1 else objects
        return json.dumps(payload, indent=2, ensure_ascii=False, default=str) + "\n"
    return "".join(impact_text(report) for report in reports)


def impact_record(report: ImpactReport) -> dict[str, Any]:
    """The JSON object of one ingredient's impact."""
    return {
        "ingredient": report.ingredient, "version": report.version,
        "compared_version": report.baseline_version,
        "latest_change": None if report.change is None else {
            "version": report.change.version, "at": report.change.at.isoformat(),
            "user": report.change.user, "fields": list(report.change.fields)},
        "formulas": [{
            "formula": f.formula, "via": list(f.via), "compared_with": f.compared_with,
            "verdict_before": f.verdict_before, "verdict_now": f.verdict_now,
            "verdict_changed": f.verdict_changed, "changed": f.changed,
            "findings_added": [vars(k) for k in f.added],
            "findings_gone": [vars(k) for k in f.gone]} for f in report.formulas],
        "stale_runs": [{"run": r.run_key, "formula": r.formula,
                        "used_version": r.used_version, "current_version": r.current_version,
                        "signatures": list(r.signatures), "superseded": r.superseded}
                       for r in report.stale_runs],
        "notes": report.notes}


def impact_text(report: ImpactReport) -> str:
    """The text of one ingredient's impact: each formula's verdict before and now, the
    findings added and gone, and the signed runs gone stale."""
    lines: list[str] = []
    echo = lines.append
    echo(f"Impact of {report.ingredient} (now version {report.version})")
    if report.change is not None:
        echo(f"  latest change: version {report.change.version} by {report.change.user} "
             f"at {report.change.at:%Y-%m-%d %H:%M}: " + "; ".join(report.change.fields))
    echo(f"Stored formulas using it: {len(report.formulas)}; changed: "
         f"{len(report.changed)}")
    for item in report.formulas:
        if item.verdict_before is None:
            state = f"now {item.verdict_now} (nothing to compare with)"
        elif item.verdict_changed:
            state = f"VERDICT CHANGED {item.verdict_before} -> {item.verdict_now}"
        else:
            state = ("findings changed" if item.changed else "unchanged") + \
                f", verdict {item.verdict_now}"
        echo(f"  {item.formula}: {state}; compared with {item.compared_with}; "
             f"via {', '.join(item.via)}")
        for key in item.added:
            echo(f"    + {key.severity} {key.rule}: {key.message}")
        for key in item.gone:
            echo(f"    - {key.severity} {key.rule}: {key.message}")
    if report.stale_runs:
        echo("Signed review runs now stale:")
        for run in report.stale_runs:
            echo(f"  {run.run_key} ({run.formula}): used version {run.used_version}, now "
                 f"{run.current_version}; {'; '.join(run.signatures)}"
                 + (" (superseded)" if run.superseded else ""))
    else:
        echo("Signed review runs now stale: none")
    for note in report.notes:
        echo(f"Note: {note}")
    echo("A screening aid, not a safety assessment: defer to the current regulation and a "
         "qualified safety assessor.")
    return "\n".join(lines) + "\n"
