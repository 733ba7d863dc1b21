"""``formdb impact INGREDIENT``: which stored formulas and signed runs a library change touches."""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.command("impact")
@click.argument("ingredients", nargs=-1, required=True)
@click.option("--since", default=None, metavar="VERSION|RUN",
              help="Compare with the ingredient at this version, or as this review run used "
                   "it (default: each formula's latest review run, else the version before the "
                   "ingredient's latest change).")
@click.option("--profile", default=None, help="Profile for the re-check (default: default; a "
                                              "review run is re-checked with its own).")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@with_library
def impact_cmd(app: AppContext, library: Library, ingredients: tuple[str, ...], since: str | None,
               profile: str | None, fmt: str) -> None:
    """Re-check every stored formula that uses each INGREDIENT (by name, synonym or inside a
    mixture) and list those whose verdict or findings changed, and the signed review runs now
    stale. Give several names after an import (`formdb ingredient import --impact` does it).
    Exit 0 when nothing changed, 1 when something did, 2 when it could not be worked out."""
    touched = show_impacts(library, ingredients, since=since, profile=profile, fmt=fmt)
    click.get_current_context().exit(1 if touched else 0)


def show_impacts(library: Library, ingredients: Sequence[str], *, since: str | None = None,
                 profile: str | None = None, fmt: str = "text") -> bool:
    """Print the impact of each ingredient; True when any formula or signed run is touched."""
    from formdb.services.impact import impact_of

    with library.read():  # every ingredient's impact from one state of the library
        reports = [impact_of(library, name, since=since, profile=profile)
                   for name in ingredients]
    if fmt == "json":
        objects = [_json(report) for report in reports]
        payload = objects[0] if len(objects) == 1 else objects
        click.echo(json.dumps(payload, indent=2, ensure_ascii=False, default=str))
    else:
        for report in reports:
            _text(report)
    return any(report.changed or report.stale_runs for report in reports)


def _json(report: Any) -> dict[str, Any]:
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


def _text(report: object) -> None:
    from formdb.services.impact import ImpactReport

    assert isinstance(report, ImpactReport)
    click.echo(f"Impact of {report.ingredient} (now version {report.version})")
    if report.change is not None:
        click.echo(f"  latest change: version {report.change.version} by {report.change.user} "
                   f"at {report.change.at:%Y-%m-%d %H:%M}: " + "; ".join(report.change.fields))
    click.echo(f"Stored formulas using it: {len(report.formulas)}; changed: "
               f"{len(report.changed)}")
    for item in report.formulas:
        if item.verdict_before is None:
            state = f"now {item.verdict_now} (nothing to compare with)"
        elif item.verdict_changed:
            state = f"VERDICT CHANGED {item.verdict_before} -> {item.verdict_now}"
        else:
            state = ("findings changed" if item.changed else "unchanged") + \
                f", verdict {item.verdict_now}"
        click.echo(f"  {item.formula}: {state}; compared with {item.compared_with}; "
                   f"via {', '.join(item.via)}")
        for key in item.added:
            click.echo(f"    + {key.severity} {key.rule}: {key.message}")
        for key in item.gone:
            click.echo(f"    - {key.severity} {key.rule}: {key.message}")
    if report.stale_runs:
        click.echo("Signed review runs now stale:")
        for run in report.stale_runs:
            click.echo(f"  {run.run_key} ({run.formula}): used version {run.used_version}, now "
                       f"{run.current_version}; {'; '.join(run.signatures)}"
                       + (" (superseded)" if run.superseded else ""))
    else:
        click.echo("Signed review runs now stale: none")
    for note in report.notes:
        click.echo(f"Note: {note}")
    click.echo("A screening aid, not a safety assessment: defer to the current regulation and a "
               "qualified safety assessor.")
