"""``formdb audit verify``: recompute the hash chains of the change log and the review records."""

from __future__ import annotations

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
    from formdb.report.audit import audit_verify, first_break
    from formdb.services.review.audit import verify_chains

    report = verify_chains(library)
    click.echo(audit_verify(report, fmt), nl=False)
    line = first_break(report)
    if line is not None:
        click.echo(line, nl=False, err=True)
    click.get_current_context().exit(0 if report.intact else 1)
