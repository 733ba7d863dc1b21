"""``formdb audit verify`` and ``audit anchor``: recompute the hash chains and signatures, and
keep (or check) an anchor of the heads and record digests outside the library."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, Number, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("audit")
def audit_group() -> None:
    """The audit trail: the change log and the review records are append-only and hash-chained."""


@audit_group.command("verify")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format.")
@click.option("--anchor", type=click.Path(path_type=Path, dir_okay=False),
              help="An anchor file from `formdb audit anchor`: also find rows removed and "
                   "records changed around formdb since it was made.")
@with_library
def verify_cmd(app: AppContext, library: Library, fmt: str, anchor: Path | None) -> None:
    """Recompute every chain, check every signature against the enrolled keys, and name the
    first row that was altered, removed or slipped in (with --anchor: removed since the anchor,
    or a record changed without a change-log entry). Exit 0 when all is intact, 1 when not, 2
    when the library or the anchor cannot be read."""
    from formdb.report.audit import audit_verify, first_break
    from formdb.services.review.audit import verify_chains

    report = verify_chains(library, anchor=anchor)
    click.echo(audit_verify(report, fmt), nl=False)
    line = first_break(report)
    if line is not None:
        click.echo(line, nl=False, err=True)
    click.get_current_context().exit(0 if report.intact else 1)


@audit_group.command("anchor")
@click.argument("out", type=click.Path(path_type=Path, dir_okay=False))
@with_library
def anchor_cmd(app: AppContext, library: Library, out: Path) -> None:
    """Write the head of every chain and a digest of every library record to OUT (JSON): keep
    it with the filed report, outside the library; `formdb audit verify --anchor OUT` later
    finds rows removed since and records changed around formdb."""
    from formdb.report.audit import anchor_text, anchor_written
    from formdb.report.files import write_report
    from formdb.services.review.audit import write_anchor

    made = write_anchor(library, user=app.user)
    write_report(out, anchor_text(made))
    click.echo(anchor_written(made, out), nl=False)


@audit_group.command("changes")
@click.option("--table", default=None, help="Only changes to this table (e.g. property_values).")
@click.option("--login", default=None, help="Only changes made by this database login.")
@click.option("--limit", type=Number(int, 1, 100_000), default=50, show_default=True,
              help="How many of the newest changes to show.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="Output format (json includes the rows before and after).")
@with_library
def changes_cmd(app: AppContext, library: Library, table: str | None, login: str | None,
                limit: int, fmt: str) -> None:
    """The server's record of changes (PostgreSQL): every change to a library table, plain
    SQL included, with the database login that made it, newest first."""
    from formdb.report.audit import server_changes_text
    from formdb.services.review.server_changes import server_changes

    records = server_changes(library, table=table, login=login, limit=limit)
    click.echo(server_changes_text(records, library.dialect, fmt), nl=False)
