"""``python -m formdb.bench generate ...`` and ``python -m formdb.bench run``.

A tool for developers, not a ``formdb`` sub-command: it builds libraries of invented data.
"""

from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path

import click

from formdb.errors import FormdbError


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
def bench() -> None:
    """formdb's benchmark: a synthetic library, and figures measured against raw floors."""


@bench.command("generate")
@click.option("--ingredients", type=click.IntRange(min=0), default=5000, show_default=True,
              help="Ingredients in the library, the bundled seed ones included.")
@click.option("--formulas", type=click.IntRange(min=0), default=10_000, show_default=True,
              help="Synthetic formulas to store.")
@click.option("--seed", type=int, default=42, show_default=True,
              help="Random seed: the same seed gives the same library.")
@click.option("--db", "db", required=True,
              help="Where to build the library: a new SQLite file or a postgresql+psycopg:// URL.")
@click.option("--files", type=click.Path(file_okay=False, path_type=Path), default=None,
              help="Also write every formula as a TOML file into this folder.")
def generate_cmd(ingredients: int, formulas: int, seed: int, db: str,
                 files: Path | None) -> None:
    """Build a synthetic library of invented ingredients and formulas (marked as synthetic)."""
    from formdb.bench.library import LibraryPlan, generate

    if files is not None:
        files.mkdir(parents=True, exist_ok=True)
    started = time.perf_counter()
    added, stored = generate(db, LibraryPlan(ingredients, formulas, seed), files=files)
    click.echo(f"{db}: seed library + {added} synthetic ingredients, {stored} synthetic formulas "
               f"(seed {seed}) in {time.perf_counter() - started:.1f} s")


@bench.command("run")
@click.option("--quick", is_flag=True, help="Small sizes: a smoke test of every figure.")
@click.option("--pg", "pg_url", envvar="FORMDB_BENCH_PG_URL", default=None,
              help="Also run on this PostgreSQL server (env FORMDB_BENCH_PG_URL), e.g. "
                   "postgresql+psycopg://postgres@127.0.0.1:5432/test")
@click.option("--work", type=click.Path(file_okay=False, path_type=Path), default=None,
              help="Folder for the generated libraries (default: a temporary folder).")
@click.option("--ingredients", type=click.IntRange(min=0), default=None,
              help="Library size (default 5000; 400 with --quick).")
@click.option("--sizes", default=None,
              help="Formula counts of the scaling series, ascending, e.g. 1000,10000,100000.")
@click.option("--import-rows", type=click.IntRange(min=1), default=None,
              help="Rows of the imported CSV (default 50000; 2000 with --quick).")
@click.option("--startup-runs", type=click.IntRange(min=1), default=None,
              help="Processes timed for the start-up figure (median).")
@click.option("--seed", type=int, default=42, show_default=True)
@click.option("--json", "json_out", type=click.Path(dir_okay=False, path_type=Path),
              default=None, help="Also write the figures as JSON to this file.")
def run_cmd(quick: bool, pg_url: str | None, work: Path | None, ingredients: int | None,
            sizes: str | None, import_rows: int | None, startup_runs: int | None, seed: int,
            json_out: Path | None) -> None:
    """Measure every figure in one run and print it with its floor, ratio and target."""
    from formdb.bench.run import FULL, QUICK, run_benchmark

    base = QUICK if quick else FULL
    try:
        counts = tuple(sorted(int(s) for s in sizes.split(","))) if sizes else base.formulas
    except ValueError:
        raise click.BadParameter("give formula counts such as 1000,10000",
                                 param_hint="--sizes") from None
    if not counts or min(counts) < 1:
        raise click.BadParameter("every formula count must be at least 1", param_hint="--sizes")
    chosen = replace(base, ingredients=base.ingredients if ingredients is None else ingredients,
                     formulas=counts, import_rows=import_rows or base.import_rows,
                     startup_runs=startup_runs or base.startup_runs, seed=seed)
    run_benchmark(pg_url=pg_url, work=work, sizes=chosen, json_out=json_out)


def main() -> None:
    try:
        bench.main(standalone_mode=False)
    except FormdbError as exc:
        click.echo(f"Error: {exc.message}" + (f" Next: {exc.hint}" if exc.hint else ""),
                   err=True)
        sys.exit(2)
    except click.ClickException as exc:
        exc.show()
        sys.exit(2)


if __name__ == "__main__":
    main()
