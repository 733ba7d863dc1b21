"""``formdb check`` and ``formdb blend``: parse, call a service, render. Nothing else.

Exit codes of ``check`` (DESIGN.md section 3): 0 no error finding, 1 at least one, 2 the input
could not be checked. Input problems print one ``Error:`` line each and nothing is written.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

import click

from formdb.cli.main import AppContext, Number, force_option, library_files, with_library
from formdb.schemas.vocab import EmulsionType

if TYPE_CHECKING:
    from formdb.report.stream import Tally
    from formdb.store.library import Library

F = TypeVar("F", bound=Callable[..., Any])
REPORT_FORMATS = ("text", "json", "html", "jsonl")


def _wants_color(out: Path | None, fmt: str) -> bool:
    return (out is None and fmt == "text" and sys.stdout.isatty()
            and "NO_COLOR" not in os.environ)


def _echo_coloured(report: str, color: bool) -> None:
    """A report; a coloured one (its data escaped by report/ before the colours went in) goes
    past the terminal filter, which would print its colour codes as text."""
    if color:
        from formdb.report.terminal import raw_stdout

        click.echo(report, nl=False, file=raw_stdout(sys.stdout), color=True)
    else:
        click.echo(report, nl=False)


@click.command("check")
@click.argument("files", nargs=-1, type=click.Path(path_type=Path))
@click.option("--all", "all_stored", is_flag=True,
              help="Also check every formula stored in the library.")
@click.option("--profile", default="default", show_default=True,
              help="Rule profile: a packaged name (default, strict) or a profile TOML file.")
@click.option("--format", "fmt", type=click.Choice(REPORT_FORMATS), default=None,
              help="Report format (default: from --out's extension, .txt, .json, .html or "
                   ".jsonl, else text).")
@click.option("--out", type=click.Path(path_type=Path, dir_okay=False),
              help="Write the report to this file and print a one-line summary.")
@force_option
@with_library
def check_cmd(app: AppContext, library: Library, files: tuple[Path, ...], all_stored: bool,
              profile: str, fmt: str | None, out: Path | None, force: bool) -> None:
    """Check formula FILES (TOML) against the library.

    Exit 0: no error finding; 1: at least one; 2: the input could not be checked.
    """
    from formdb.report import ListSnapshot, render
    from formdb.report.files import check_output, report_format_for, summary_line, write_report
    from formdb.rules.profiles import load_profile
    from formdb.services.checking.flow import check_inputs, iter_check_stored, read_inputs
    from formdb.services.checking.report_context import limit_snapshots

    ctx = click.get_current_context()
    if not files and not all_stored:
        raise click.UsageError("give one or more formula FILEs, or --all")
    inputs = [*files, Path(profile), *library_files(app)]
    fmt = report_format_for(out, fmt)
    if out is not None:
        check_output(out, force=force, inputs=inputs)
    items = read_inputs(files)
    chosen = load_profile(profile)
    with library.read():  # the list dates and every finding from one state of the library
        snapshots = [ListSnapshot(*row) for row in limit_snapshots(library, chosen)]
        if fmt == "jsonl" or (all_stored and fmt != "html"):
            failing = _stream(library, items, chosen, all_stored, fmt, out, snapshots,
                              force, inputs)
            ctx.exit(1 if failing else 0)
        results = check_inputs(library, items, chosen) if items else []
        if all_stored:
            results += list(iter_check_stored(library, chosen))
    if not results:
        click.echo("No stored formulas to check: `formdb formula import FILE` stores one.")
        return
    color = _wants_color(out, fmt)
    report = render(results, fmt, snapshots=snapshots, color=color)
    if color:  # the data was escaped before the colours went in (report.text)
        from formdb.report.terminal import raw_stdout

        click.echo(report, nl=False, file=raw_stdout(sys.stdout), color=True)
        ctx.exit(1 if any(r.has_errors for r in results) else 0)
    if out is not None:
        write_report(out, report, force=force, inputs=inputs)
        click.echo(summary_line(results, out))
    else:
        click.echo(report, nl=False)
    ctx.exit(1 if any(r.has_errors for r in results) else 0)


def _stream(library: Library, items: list[Any], profile: Any, all_stored: bool, fmt: str,
            out: Path | None, snapshots: list[Any], force: bool, inputs: list[Path]) -> int:
    """Write each result as it is checked (``--all`` over thousands of formulas, or jsonl);
    a progress bar on stderr when it is a terminal. Returns how many formulas have errors."""
    import itertools

    from formdb.services.checking.flow import check_inputs, count_stored, iter_check_stored

    results = itertools.chain(check_inputs(library, items, profile) if items else [],
                              iter_check_stored(library, profile) if all_stored else [])
    total = len(items) + (count_stored(library) if all_stored else 0)
    if total == 0:
        click.echo("No stored formulas to check: `formdb formula import FILE` stores one.")
        return 0
    if out is None:
        tally = _write_stream(sys.stdout, results, total, fmt, snapshots)
        sys.stdout.flush()
        return tally.failing
    from formdb.report.files import output_file, written_line

    with output_file(out, force=force, inputs=inputs) as target, \
            open(target, "x", encoding="utf-8") as handle:
        tally = _write_stream(handle, results, total, fmt, snapshots)
    click.echo(written_line(tally, out))
    return tally.failing


def _write_stream(handle: Any, results: Any, total: int, fmt: str,
                  snapshots: list[Any]) -> Tally:
    from formdb.report.stream import StreamReport

    report = StreamReport(handle, "text" if fmt == "text" else fmt, snapshots)
    for result in _with_progress(results, total):
        report.write(result)
    return report.close()


def _with_progress(results: Any, total: int) -> Any:
    if not sys.stderr.isatty():
        yield from results
        return
    from rich.console import Console
    from rich.progress import Progress

    from formdb.report.terminal import raw_stdout

    # the bar's own cursor movements go to the terminal as they are (no data in them)
    with Progress(transient=True, console=Console(file=raw_stdout(sys.stderr))) as progress:
        task = progress.add_task("checking", total=total)
        for result in results:
            yield result
            progress.advance(task)


def _blend_mode(file: Path | None, target: float | None, using: tuple[str, ...],
                search: bool) -> str:
    """Which blend question is asked; a UsageError for a combination that means nothing."""
    if file is not None and using:
        raise click.UsageError("give either FILE or --using, not both")
    if search:
        if using:
            raise click.UsageError("--search looks through the whole library: leave out --using")
        if file is None and target is None:
            raise click.UsageError("--search needs --target HLB or a formula FILE")
        return "search-file" if file is not None else "search"
    if file is not None:
        return "file"
    if target is None or len(using) < 2:
        raise click.UsageError("give --target HLB and --using at least twice, or a formula FILE")
    return "named"


@click.command("blend")
@click.argument("file", required=False, type=click.Path(path_type=Path))
@click.option("--target", type=Number(float, 0, 60), help="The HLB the blend must have.")
@click.option("--using", multiple=True, metavar="INCI",
              help="An emulsifier of the blend (INCI name or synonym); repeat for each.")
@click.option("--search", is_flag=True,
              help="Rank compatible pairs from the whole library that reach the target.")
@click.option("--total", type=Number(float, 1e-6, 100), default=None,
              help="Emulsifier total in % w/w for the proportions (--search: default 5, or the "
                   "formula's own total with FILE).")
@click.option("--top", type=Number(int, 1, 100), default=10, show_default=True,
              help="How many pairs --search prints.")
@click.option("--type", "kind", type=click.Choice(("O/W", "W/O")), default=None,
              help="--search: the emulsion type the pair must suit (default: the formula's "
                   "type, else the target's HLB class).")
@click.option("--profile", default="default", show_default=True,
              help="Rule profile for FILE (its HLB tolerance and facts settings).")
@click.option("--format", "fmt", type=click.Choice(("text", "json")), default="text",
              show_default=True, help="Output format.")
@with_library
def blend_cmd(app: AppContext, library: Library, file: Path | None, target: float | None,
              using: tuple[str, ...], search: bool, total: float | None, top: int,
              kind: str | None, profile: str, fmt: str) -> None:
    """Emulsifier proportions for a target HLB: named emulsifiers, a formula FILE's own, or a
    --search of the library for compatible pairs."""
    from formdb.report.blend import render_plan, render_search
    from formdb.services.checking import blending

    mode = _blend_mode(file, target, using, search)
    color = _wants_color(None, fmt)
    with library.read():  # one snapshot for the check and the provenance it quotes
        if mode == "named":
            assert target is not None
            plan = blending.blend_for_target(library, target, using, total)
            _echo_coloured(render_plan(plan, fmt, color), color)
        elif mode == "file":
            assert file is not None
            plan = blending.blend_for_formula(library, file, profile, target)
            _echo_coloured(render_plan(plan, fmt, color), color)
        elif mode == "search":
            assert target is not None
            given = blending.DEFAULT_TOTAL_PERCENT if total is None else total
            found = blending.search_pairs(library, target, given, top,
                                          kind=EmulsionType(kind) if kind else None)
            _echo_coloured(render_search(found, fmt, color), color)
        else:
            assert file is not None
            found = blending.search_for_formula(library, file, profile, total, top, target,
                                                EmulsionType(kind) if kind else None)
            _echo_coloured(render_search(found, fmt, color), color)
