"""``formdb audit verify``: recompute the hash chains of the change log and the review records."""

from __future__ import annotations

import json
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("audit")
def audit_group() -> None:
    """The audit trail: the change log and the review records are append-only and hash-chained."""


@audit_group.command("verify")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@with_library
def verify_cmd(app: AppContext, library: Library, fmt: str) -> None:
    """Recompute every chain and name the first row that was altered, removed or slipped in.
    Exit 0 when every chain is intact, 1 when one is broken, 2 when the library cannot be read."""
    from formdb.services.audit import verify_chains

    report = verify_chains(library)
    if fmt == "json":
        click.echo(json.dumps({
            "intact": report.intact,
            "chains": [{"table": c.table, "rows": c.rows, "intact": c.intact,
                        "head": {"id": c.head_id, "hash": c.head_hash},
                        "problems": [{"row": p.row_id, "kind": p.kind, "detail": p.detail}
                                     for p in c.problems],
                        "more_problems": c.more_problems} for c in report.chains]},
            indent=2, ensure_ascii=False))
    else:
        for chain in report.chains:
            head = (f"head row {chain.head_id} {chain.head_hash}" if chain.head_id is not None
                    else "empty")
            state = "intact" if chain.intact else "BROKEN"
            click.echo(f"{chain.table}: {chain.rows} rows, {state}; {head}")
            for problem in chain.problems:
                click.echo(f"  {chain.table} row {problem.row_id} ({problem.kind}): "
                           f"{problem.detail}")
            if chain.more_problems:
                click.echo(f"  ... and {chain.more_problems} more problems")
        click.echo("Keep the head hashes with a filed report: a chain alone cannot show that "
                   "its newest rows were removed.")
    first = report.first_problem
    if first is not None:
        click.echo(f"First break: {first.table} row {first.row_id}: {first.detail}.", err=True)
    click.get_current_context().exit(0 if report.intact else 1)
