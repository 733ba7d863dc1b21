"""``formdb review run|sign|status|report``: parse, call formdb.services.review.runs, render."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from formdb.store.library import Library


@click.group("review")
def review_group() -> None:
    """Pre-trial review: stored check runs, sign-offs, their state, filed reports."""


@review_group.command("run")
@click.argument("source", metavar="FILE")
@click.option("--profile", default="strict", show_default=True,
              help="Rule profile: a packaged name (strict, default) or a profile TOML file.")
@with_library
def run_cmd(app: AppContext, library: Library, source: str, profile: str) -> None:
    """Check formula FILE (or stored:NAME) and store the run, immutable, with the hash of every
    library record it used."""
    from formdb.report.review_status import run_stored
    from formdb.services.review.runs import run_review

    summary = run_review(library, source, profile, user=app.user)
    click.echo(run_stored(summary), nl=False)


@review_group.command("sign")
@click.argument("run")
@click.option("--meaning", required=True, type=click.Choice(("approved", "reviewed",
                                                              "rejected")),
              help="What the signature means.")
@click.option("--as", "signer", required=True, metavar="NAME", help="The signer's printed name.")
@click.option("--comment", help="A note kept with the signature.")
@with_library
def sign_cmd(app: AppContext, library: Library, run: str, meaning: str, signer: str,
             comment: str | None) -> None:
    """Sign review RUN (its run key): refused if it is stale or superseded."""
    from formdb.report.review_status import run_signed
    from formdb.services.review.runs import sign_run

    sig = sign_run(library, run, meaning, signer, user=app.user, comment=comment)
    click.echo(run_signed(sig), nl=False)


@review_group.command("status")
@click.option("--format", "fmt", type=click.Choice(("table", "json")), default="table",
              show_default=True)
@with_library
def status_cmd(app: AppContext, library: Library, fmt: str) -> None:
    """Every review run: current, stale (what changed, old -> new) or superseded."""
    from formdb.report.review_status import review_status as status_text
    from formdb.services.review.runs import review_status

    click.echo(status_text(review_status(library), fmt), nl=False)


@review_group.command("report")
@click.argument("run")
@click.option("--format", "fmt", type=click.Choice(("html", "json")), default="html",
              show_default=True)
@click.option("--out", type=click.Path(path_type=Path, dir_okay=False),
              help="Write the report to this file.")
@with_library
def report_cmd(app: AppContext, library: Library, run: str, fmt: str, out: Path | None) -> None:
    """The filed report of review RUN: HTML (printable) or JSON."""
    from formdb.report.files import write_report
    from formdb.report.review import render_review
    from formdb.report.review_status import report_written
    from formdb.services.review.runs import filed_run

    filed = filed_run(library, run)
    text = render_review(filed, fmt)
    if out is None:
        click.echo(text, nl=False)
    else:
        write_report(out, text)
        click.echo(report_written(filed, out), nl=False)
