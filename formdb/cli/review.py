"""``formdb review run|sign|status|report``: parse, call formdb.services.review.runs, render."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, force_option, library_files, with_library

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
@click.option("--reason", "--comment", "reason",
              help="Why (required for rejected); signed and printed with the signature.")
@click.option("--justify", "justifications", multiple=True, metavar="ITEM=TEXT",
              help="With approved: the written justification of open item ITEM (its number, "
                   "or a rule code for all its items). Repeat for each open item.")
@click.option("--key", "key_path", type=click.Path(path_type=Path, dir_okay=False),
              help="Your private signing key (default: ~/.config/formdb/signing-key.pem or "
                   "FORMDB_SIGNING_KEY); its passphrase is asked, or FORMDB_KEY_PASSPHRASE.")
@click.option("--as", "signer", metavar="NAME",
              help="Your printed name, checked against the name your key is enrolled under.")
@with_library
def sign_cmd(app: AppContext, library: Library, run: str, meaning: str, reason: str | None,
             justifications: tuple[str, ...], key_path: Path | None,
             signer: str | None) -> None:
    """Sign review RUN with your enrolled key: refused if it is a draft, stale or superseded.
    "approved" with open items needs --justify for each; "rejected" needs --reason."""
    from formdb.cli.keys import signing_key
    from formdb.report.review_status import run_signed
    from formdb.services.review.runs import sign_run

    key = signing_key(key_path)
    sig = sign_run(library, run, meaning, user=app.user, signing_key=key, reason=reason,
                   justifications=list(justifications), printed_name=signer)
    click.echo(run_signed(sig), nl=False)


@review_group.command("status")
@click.option("--format", "fmt", type=click.Choice(("table", "json")), default="table",
              show_default=True)
@with_library
def status_cmd(app: AppContext, library: Library, fmt: str) -> None:
    """Every review run: current, stale (what changed, old -> new) or superseded; draft or
    signable; each run and signature verified. Exit 1 when anything shown is BROKEN or
    INVALID."""
    from formdb.report.review_status import review_status as status_text
    from formdb.services.review.runs import review_status

    status = review_status(library)
    click.echo(status_text(status, fmt), nl=False)
    if not status.verified:
        click.echo("Error: a review record shown does not verify (BROKEN or INVALID above). "
                   "Next: formdb audit verify.", err=True)
        click.get_current_context().exit(1)


@review_group.group("policy")
def policy_group() -> None:
    """The review policy: which profile (by content hash) makes a run signable, which role
    each meaning needs, whether an author may approve their own run."""


@policy_group.command("show")
@click.option("--format", "fmt", type=click.Choice(("text", "json")), default="text",
              show_default=True)
@with_library
def policy_show_cmd(app: AppContext, library: Library, fmt: str) -> None:
    """The policy in force."""
    from formdb.report.review_keys import policy_text
    from formdb.services.review.policy import show_policy

    click.echo(policy_text(show_policy(library), fmt), nl=False)


@policy_group.command("set")
@click.option("--profile", required=True,
              help="The signable profile: a packaged name or a profile TOML file (its content "
                   "hash is what counts).")
@click.option("--role", "roles", multiple=True, metavar="MEANING=ROLE",
              help="The role a meaning needs (default reviewer for each), e.g. approved=admin.")
@click.option("--author-may-approve/--author-may-not-approve", default=False,
              show_default=True, help="Whether the author of a run may approve it.")
@with_library
def policy_set_cmd(app: AppContext, library: Library, profile: str, roles: tuple[str, ...],
                   author_may_approve: bool) -> None:
    """Set the review policy (admin only); recorded in every run from now on."""
    from formdb.report.review_keys import policy_text
    from formdb.services.review.policy import set_policy

    policy = set_policy(library, profile, list(roles), author_may_approve, user=app.user)
    click.echo(policy_text(policy), nl=False)


@review_group.command("report")
@click.argument("run")
@click.option("--format", "fmt", type=click.Choice(("html", "json")), default="html",
              show_default=True)
@click.option("--out", type=click.Path(path_type=Path, dir_okay=False),
              help="Write the report to this file.")
@force_option
@with_library
def report_cmd(app: AppContext, library: Library, run: str, fmt: str, out: Path | None,
               force: bool) -> None:
    """The filed report of review RUN: HTML (printable) or JSON. Exit 1 when the run, a
    signature on it or a chain the report reads (the change log, the review records, keys,
    policy) does not verify (the report says BROKEN or INVALID beside it)."""
    from formdb.report.files import check_output, write_report
    from formdb.report.review import render_review
    from formdb.report.review_status import report_written
    from formdb.services.review.runs import filed_run

    if out is not None:
        check_output(out, force=force, inputs=library_files(app))
    filed = filed_run(library, run)
    text = render_review(filed, fmt)
    if out is None:
        click.echo(text, nl=False)
    else:
        write_report(out, text, force=force, inputs=library_files(app))
        click.echo(report_written(filed, out), nl=False)
    if not filed.verified:
        click.echo(f"Error: run {filed.state.run_key} or a chain it relies on does not verify "
                   "(BROKEN or INVALID in the report). Next: formdb audit verify.", err=True)
        click.get_current_context().exit(1)
