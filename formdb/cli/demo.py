"""``formdb demo``: the main job on a throwaway library, start to finish, exit 0."""

from __future__ import annotations

from pathlib import Path

import click

from formdb.cli.main import AppContext, force_option
from formdb.schemas.demo import DemoRun


@click.command("demo")
@click.option("--format", "fmt", type=click.Choice(["text", "json", "html"]), default="text",
              show_default=True, help="Report format for the demo formulas.")
@click.option("--out", type=click.Path(path_type=Path), default=None,
              help="Also write each formula's report into this folder.")
@click.option("--keep", type=click.Path(path_type=Path), default=None,
              help="Keep the demo library at this SQLite path instead of a temporary file.")
@force_option
@click.pass_obj
def demo_cmd(app: AppContext, fmt: str, out: Path | None, keep: Path | None,
             force: bool) -> None:
    """Build a throwaway library from the seed data and check the demo lab's formulas.

    The formulas belong to Larkspur Bench Laboratories, an invented lab; the findings are real
    output of the checker on the bundled seed library. Always exits 0.
    """
    from formdb.services.checking.demo import remove_throwaway, run_demo
    from formdb.store.identity import accept_claim, os_account

    # the demo library is a throwaway SQLite file: the operating-system account acts
    demo = run_demo(keep=keep, user=accept_claim(os_account(), app.claimed, "sqlite"))
    try:
        _show(demo, app, fmt, out, force)
    finally:
        remove_throwaway(demo)


def _show(demo: DemoRun, app: AppContext, fmt: str, out: Path | None, force: bool) -> None:
    from formdb.report.demo import INTRO, demo_report, demo_report_files, demo_summary
    from formdb.report.files import check_output, write_report

    click.echo(INTRO)
    click.echo(demo_report(demo, fmt))
    if out is not None:
        out.mkdir(parents=True, exist_ok=True)
        written = []
        files = demo_report_files(demo, fmt)
        # every name refused or accepted before the first is written (the weigh sheet too)
        for name in [*files, WEIGH_SHEET]:
            check_output(out / name, force=force)
        for name, text in files.items():
            write_report(out / name, text, force=force)
            written.append(out / name)
        click.echo(f"Reports written: {', '.join(str(p) for p in written)}")
    click.echo(demo_summary(demo))
    _bench(demo.library, app, out, force)


WEIGH_SHEET = "weigh-sheet-LB-110-20kg.html"


def _bench(library_path: Path, app: AppContext, out: Path | None, force: bool) -> None:
    """From a formula to a 20 kg weigh sheet; from a screening series to a stored required HLB
    that the next check uses."""
    from formdb.report.files import write_report
    from formdb.report.screening import bench_demo_text, fit_text, series_text
    from formdb.report.weigh_sheet import render_html, render_text
    from formdb.resources import seed_data_dir
    from formdb.services.bench_work.demo import run_bench_demo
    from formdb.store.identity import accept_claim, os_account
    from formdb.store.library import Library

    with Library.open(str(library_path)) as library:
        bench = run_bench_demo(library, seed_data_dir() / "demo",
                               user=accept_claim(os_account(), app.claimed, "sqlite"))
    measured = bench.after.facts.required_hlb_ow
    click.echo(bench_demo_text(
        render_text(bench.sheet), series_text(bench.series),
        fit_text(bench.series.name, bench.fit, stored=True), bench.after.formula,
        bench.before.facts.required_hlb, bench.after.facts.required_hlb,
        measured.measured_source if measured else None))
    if out is not None:
        target = out / WEIGH_SHEET
        write_report(target, render_html(bench.sheet), force=force)
        click.echo(f"Weigh sheet written: {target}")
