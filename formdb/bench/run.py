"""``python -m formdb.bench run``: every figure of the benchmark, measured in one run.

Each figure is printed with the raw floor it is divided by (``formdb.bench.floors``) and its
target. Libraries are generated first (the seed library, synthetic ingredients, then formulas
added size by size to copies, so the 10,000-formula library holds the 1,000 of the smaller one);
each ``check --all`` and the import run in a process of their own (``formdb.bench.worker``) so
their peak memory is theirs alone.
"""

from __future__ import annotations

import json
import math
import os
import platform
import shutil
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import ExitStack, contextmanager
from dataclasses import asdict, dataclass, field, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import click

from formdb.bench import floors, library, startup, synthetic
from formdb.resources import seed_data_dir
from formdb.services.seed.setup import init_library
from formdb.store.db import open_library, unit_of_work

CHECK_TARGET = 5.0
IMPORT_TARGET = 5.0  # issue 9: the import of 50,000 rows at most 5x its floor
STARTUP_TARGET = 1.5  # one check FILE process
SHOW_TARGET = 1.3  # one ingredient show NAME process
# import time beyond the floor's: the room each start-up target leaves (the work comes on top)
STARTUP_IMPORT_TARGET = STARTUP_TARGET - 1
SHOW_IMPORT_TARGET = SHOW_TARGET - 1
LISTS_TARGET_S = 20.0  # the five annex exports into an empty library (issue 11)
LISTS_ENV = "FORMDB_BENCH_LISTS"  # a folder holding the Commission's COSING_Annex_*.txt exports
MEMORY_TARGET_MB = 300.0
MEMORY_GROWTH_TARGET = 0.20
# "about 1.0": the time grows no faster than the number of formulas. An exponent below 1 is the
# fixed cost of opening the library and building its records, which weighs most on the smallest
# size (0.84 between 1,000 and 10,000 formulas); it is no shortfall, so only the upper end judges.
EXPONENT_MAX = 1.1
DEMO_FILE = "01-hand-cream.toml"
SHOW_NAME = "Glycerin"  # a seed ingredient


@dataclass(frozen=True)
class Sizes:
    ingredients: int
    formulas: tuple[int, ...]  # ascending; the last two are compared for memory growth
    import_rows: int
    startup_runs: int
    seed: int = 42
    check_repeats: int = 2  # runs of check --all up to the main size (the least counts)
    floor_repeats: int = 3
    import_profile_runs: int = 3  # -X importtime processes per command (median)


FULL = Sizes(ingredients=5000, formulas=(1000, 10_000, 100_000), import_rows=50_000,
             startup_runs=9)
QUICK = Sizes(ingredients=400, formulas=(100, 300, 1000), import_rows=2000, startup_runs=3,
              check_repeats=1, floor_repeats=2, import_profile_runs=1)


@dataclass
class Figure:
    """One line of the results: what was measured, against which floor, and the target.

    Times are wall seconds, the least of the repeats; ``cpu`` and ``floor_cpu`` are the same
    runs' CPU seconds in the measuring process (less disturbed by other load on the machine, but
    blind to a database server's own work)."""

    name: str
    measured: float
    unit: str
    floor: float | None = None
    floor_name: str = ""
    target: str = ""
    met: bool | None = None
    detail: str = ""
    cpu: float | None = None
    floor_cpu: float | None = None

    @property
    def ratio(self) -> float | None:
        return self.measured / self.floor if self.floor else None

    @property
    def cpu_ratio(self) -> float | None:
        return self.cpu / self.floor_cpu if self.cpu and self.floor_cpu else None


@dataclass
class BackendResult:
    backend: str
    figures: list[Figure] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


# --- where the libraries live -----------------------------------------------------------------

class SqliteLibraries:
    """Benchmark libraries as SQLite files in one folder."""

    name = "SQLite"

    def __init__(self, folder: Path) -> None:
        self.folder = folder

    def new(self, label: str) -> str:
        path = self.folder / f"{label}.sqlite"
        for leftover in (path, Path(f"{path}-wal"), Path(f"{path}-shm")):
            leftover.unlink(missing_ok=True)
        return str(path)

    def copy(self, source: str, label: str) -> str:
        library.checkpoint(source)
        target = self.new(label)
        shutil.copyfile(source, target)
        return target

    def close(self) -> None:
        pass


class PostgresLibraries:
    """Benchmark libraries as databases on one PostgreSQL server, dropped at the end."""

    name = "PostgreSQL"

    def __init__(self, base_url: str) -> None:
        self.base_url = base_url
        self.stack = ExitStack()
        self.prefix = f"formdb_bench_{os.getpid()}"

    def _database(self, label: str, template: str | None = None) -> str:
        return self.stack.enter_context(
            library.pg_database(self.base_url, f"{self.prefix}_{label}", template))

    def new(self, label: str) -> str:
        return self._database(label)

    def copy(self, source: str, label: str) -> str:
        from sqlalchemy.engine import make_url

        return self._database(label, template=make_url(source).database)

    def close(self) -> None:
        self.stack.close()


# --- measurements -------------------------------------------------------------------------------

def _worker(*args: str) -> dict[str, Any]:
    done = subprocess.run([sys.executable, "-m", "formdb.bench.worker", *args],
                          capture_output=True, text=True, check=False)
    if done.returncode != 0:
        raise RuntimeError(f"benchmark worker {' '.join(args[:1])} failed: "
                           f"{done.stderr.strip()[-2000:]}")
    return dict(json.loads(done.stdout.strip().splitlines()[-1]))


def fitted_exponent(points: Sequence[tuple[float, float]]) -> float:
    """The least-squares slope of log(time) against log(size)."""
    xs = [math.log(n) for n, _t in points]
    ys = [math.log(t) for _n, t in points]
    mx, my = statistics.fmean(xs), statistics.fmean(ys)
    return sum((x - mx) * (y - my) for x, y in zip(xs, ys, strict=True)) / \
        sum((x - mx) ** 2 for x in xs)


def _startup_command(url: str, formula: Path) -> tuple[list[str], str]:
    """The ``formdb check FILE`` command; the service behind it when the CLI lacks ``check``."""
    argv = [sys.executable, "-m", "formdb", "--db", url, "check", str(formula)]
    done = subprocess.run(argv, capture_output=True, text=True, check=False)
    if done.returncode in (0, 1):
        return argv, "python -m formdb check FILE"
    script = ("import sys; from pathlib import Path; "
              "from formdb.services.checking.flow import check_files; "
              "from formdb.report import render; from formdb.store.library import Library; "
              "print(render(check_files(Library.open(sys.argv[1]), [Path(sys.argv[2])]), "
              "'text'))")
    return ([sys.executable, "-c", script, url, str(formula)],
            "check_files + report.render (the check CLI failed: "
            f"{(done.stderr.strip().splitlines() or ['no message'])[-1][:120]})")


@dataclass
class Progress:
    echo: Callable[[str], None]
    started: float = field(default_factory=time.perf_counter)

    def __call__(self, text: str) -> None:
        self.echo(f"  [{time.perf_counter() - self.started:7.1f} s] {text}")


def _best(runs: Sequence[dict[str, Any]]) -> dict[str, Any]:
    """The fastest of repeated worker runs, with the highest peak memory of them all."""
    best = dict(min(runs, key=lambda r: r["seconds"]))
    best["cpu_seconds"] = min(r["cpu_seconds"] for r in runs)
    best["peak_mb"] = max(r["peak_mb"] for r in runs)
    return best


def _best_floor(measure: Callable[[], tuple[floors.Timing, Any]], repeats: int
                ) -> tuple[floors.Timing, Any]:
    results = [measure() for _ in range(repeats)]
    wall = min(t.seconds for t, _rest in results)
    cpu = min(t.cpu_seconds for t, _rest in results)
    return floors.Timing(wall, cpu), results[0][1]


def _make_library(libs: SqliteLibraries | PostgresLibraries, sizes: Sizes, say: Progress,
                  result: BackendResult) -> tuple[str, str]:
    """(seed library with the synthetic-bench source, the same plus the synthetic ingredients)."""
    say("seed library and the synthetic-bench source")
    seed_only = libs.new("seedonly")
    init_library(seed_only, seed=True, user=library.BENCH_USER)
    engine = open_library(seed_only)
    try:
        with unit_of_work(engine, write=True) as session:
            library.add_source(session, library.BENCH_USER)
    finally:
        engine.dispose()
    say(f"library of {sizes.ingredients:,} ingredients (synthetic ones via import_table)")
    base = libs.copy(seed_only, "base")
    started = time.perf_counter()
    added = library.add_ingredients(base, library.LibraryPlan(sizes.ingredients, 0, sizes.seed))
    result.notes.append(f"imported {added:,} synthetic ingredients (import_table) in "
                        f"{time.perf_counter() - started:.1f} s")
    return seed_only, base


def _check_series(libs: SqliteLibraries | PostgresLibraries, sizes: Sizes, base: str,
                  say: Progress, result: BackendResult) -> dict[int, str]:
    plan = library.LibraryPlan(sizes.ingredients, 0, sizes.seed)
    timings: list[tuple[int, float]] = []
    peaks: dict[int, float] = {}
    previous, previous_n = base, 0
    made: dict[int, str] = {}
    main_n = sizes.formulas[-2] if len(sizes.formulas) > 1 else sizes.formulas[-1]
    for n in sizes.formulas:
        say(f"{n:,} formulas: generating")
        current = libs.copy(previous, f"f{n}")
        started = time.perf_counter()
        library.add_formulas(current, replace(plan, formulas=n), start=previous_n + 1)
        result.notes.append(f"stored {n - previous_n:,} more formulas (total {n:,}) in "
                            f"{time.perf_counter() - started:.1f} s")
        library.checkpoint(current)
        repeats = sizes.check_repeats if n <= main_n else 1
        say(f"{n:,} formulas: check --all in its own process, {repeats} run(s)")
        run = _best([_worker("check", current) for _ in range(repeats)])
        if run["formulas"] != n:
            raise RuntimeError(f"check --all saw {run['formulas']} formulas, expected {n}")
        floor_repeats = sizes.floor_repeats if n <= main_n else 1
        say(f"{n:,} formulas: floor, {floor_repeats} run(s)")
        def floor_once(url: str = current) -> Any:
            return _floor_parts(floors.check_floor(url))

        floor, (_formulas, lines) = _best_floor(floor_once, floor_repeats)
        timings.append((n, run["seconds"]))
        peaks[n] = run["peak_mb"]
        figure = Figure(
            f"check --all, {n:,} formulas ({lines:,} lines)", run["seconds"], "s",
            floor.seconds, "plain driver read + tomllib + property tuples",
            f"<= {CHECK_TARGET:g}x" if n == main_n else "", None,
            f"{run['seconds'] / n * 1000:.2f} ms per formula; {run['with_error_findings']:,} "
            "formulas with an error finding", run["cpu_seconds"], floor.cpu_seconds)
        if n == main_n:
            figure.met = figure.ratio is not None and figure.ratio <= CHECK_TARGET
        result.figures.append(figure)
        previous, previous_n = current, n
        made[n] = current
    high_n = sizes.formulas[-1]
    for n in sorted({main_n, high_n}):
        result.figures.append(Figure(
            f"peak memory (ru_maxrss), check --all {n:,} formulas", peaks[n], "MB", None, "",
            f"<= {MEMORY_TARGET_MB:g} MB", peaks[n] <= MEMORY_TARGET_MB))
    if high_n != main_n:
        growth = peaks[high_n] / peaks[main_n] - 1
        result.figures.append(Figure(
            f"memory growth {main_n:,} -> {high_n:,} formulas", growth * 100, "%", None, "",
            f"< {MEMORY_GROWTH_TARGET * 100:g} %", growth < MEMORY_GROWTH_TARGET))
    if len(timings) >= 2:
        exponent = fitted_exponent(timings)
        last = fitted_exponent(timings[-2:])
        result.figures.append(Figure(
            "scaling exponent (log-log fit of check --all time)", exponent, "", None,
            ", ".join(f"{n:,}: {t:.2f} s" for n, t in timings),
            f"about 1.0 (at most {EXPONENT_MAX:g})", exponent <= EXPONENT_MAX,
            f"between the two largest sizes alone: {last:.3f} (below 1: the fixed cost of "
            "opening the library and building its records weighs on the smallest size)"))
    return made


def lists_folder() -> Path | None:
    """Where the annex exports are: $FORMDB_BENCH_LISTS, else ../shared/regulatory/... beside
    the working folder or the checkout; None when none holds the five files."""
    here = Path(__file__).resolve()
    candidates = [Path(os.environ[LISTS_ENV])] if os.environ.get(LISTS_ENV) else []
    relative = Path("shared") / "regulatory" / "eu-cosing-annexes-2025-10-31"
    candidates += [parent / relative for parent in (Path.cwd().parent, *here.parents)]
    for folder in candidates:
        if all((folder / f"COSING_Annex_{a}_v2.txt").is_file()
               for a in ("II", "III", "IV", "V", "VI")):
            return folder
    return None


def _lists_figures(libs: SqliteLibraries | PostgresLibraries, sizes: Sizes,
                   checked: dict[int, str], say: Progress, result: BackendResult) -> None:
    """The five annex exports into an empty library (<= 20 s), and check --all at the main size
    with them loaded (the check target, against the same floor)."""
    folder = lists_folder()
    if folder is None:
        result.notes.append(f"lists figures skipped: no annex exports found (set {LISTS_ENV} "
                            "to the folder of COSING_Annex_II_v2.txt ... VI)")
        return
    files = [str(folder / f"COSING_Annex_{a}_v2.txt") for a in ("II", "III", "IV", "V", "VI")]
    say("lists: the five annex exports into an empty library, in its own process")
    empty = libs.new("listsempty")
    init_library(empty, seed=False, user=library.BENCH_USER)
    run = _worker("lists", empty, *files)
    say("lists: floor (csv.reader of the five files)")
    floor, rows = _best_floor(lambda: floors.csv_floor(files), sizes.floor_repeats)
    result.figures.append(Figure(
        f"lists import, the five annex exports ({run['entries']:,} entries) into an empty "
        "library", run["seconds"], "s", floor.seconds, f"csv.reader of the files ({rows:,} rows)",
        f"<= {LISTS_TARGET_S:g} s", run["seconds"] <= LISTS_TARGET_S,
        f"{run['structured_parts']:,} of {run['parts']:,} parts structured; "
        f"{run['ingredients_created']:,} ingredient records created; peak "
        f"{run['peak_mb']:.0f} MB", run["cpu_seconds"], floor.cpu_seconds))
    main_n = sizes.formulas[-2] if len(sizes.formulas) > 1 else sizes.formulas[-1]
    if main_n not in checked:
        return
    say(f"lists: check --all, {main_n:,} formulas with the lists loaded")
    loaded = libs.copy(checked[main_n], f"f{main_n}lists")
    _worker("lists", loaded, *files)
    if isinstance(libs, SqliteLibraries):
        library.checkpoint(loaded)
    check = _best([_worker("check", loaded) for _ in range(sizes.check_repeats)])
    check_floor, (_n, lines) = _best_floor(lambda: _floor_parts(floors.check_floor(loaded)),
                                           sizes.floor_repeats)
    figure = Figure(
        f"check --all, {main_n:,} formulas ({lines:,} lines), lists loaded", check["seconds"],
        "s", check_floor.seconds, "plain driver read + tomllib + property tuples",
        f"<= {CHECK_TARGET:g}x", None,
        f"{check['seconds'] / main_n * 1000:.2f} ms per formula; peak {check['peak_mb']:.0f} MB",
        check["cpu_seconds"], check_floor.cpu_seconds)
    figure.met = figure.ratio is not None and figure.ratio <= CHECK_TARGET
    result.figures.append(figure)


def _floor_parts(measured: tuple[floors.Timing, int, int]) -> tuple[floors.Timing,
                                                                       tuple[int, int]]:
    timing, formulas, lines = measured
    return timing, (formulas, lines)


def _import_figure(libs: SqliteLibraries | PostgresLibraries, sizes: Sizes, seed_only: str,
                   work: Path, say: Progress, result: BackendResult) -> None:
    say(f"import of a {sizes.import_rows:,}-row CSV in its own process")
    csv_path = work / f"import-{sizes.import_rows}-{sizes.seed}.csv"
    if not csv_path.exists():
        synthetic.write_ingredient_csv(csv_path, synthetic.synthetic_ingredient_rows(
            sizes.import_rows, sizes.seed + 1))
    run = _worker("import", libs.copy(seed_only, "import"), str(csv_path))
    say(f"import floor, {sizes.floor_repeats} run(s)")
    counter = iter(range(sizes.floor_repeats))
    floor, rows = _best_floor(
        lambda: floors.import_floor(csv_path, libs.new(f"importfloor{next(counter)}")),
        sizes.floor_repeats)
    ratio = run["seconds"] / floor.seconds
    result.figures.append(Figure(
        f"import of a {rows:,}-row CSV (import_table, one transaction)", run["seconds"], "s",
        floor.seconds, "pandas.read_csv + plain executemany", f"<= {IMPORT_TARGET:g}x",
        ratio <= IMPORT_TARGET, f"{run['added']:,} added; peak {run['peak_mb']:.0f} MB",
        run["cpu_seconds"], floor.cpu_seconds))


def _console_script() -> Path | None:
    """The ``formdb`` console script beside this interpreter, when formdb is installed."""
    script = Path(sys.executable).with_name("formdb")
    return script if script.is_file() else None


def _startup_figures(base: str, sizes: Sizes, work: Path, say: Progress,
                     result: BackendResult) -> None:
    """Whole processes against the import floor (medians of interleaved runs, with a bytecode
    cache), then where their import time goes (``-X importtime``)."""
    formula = seed_data_dir() / "demo" / DEMO_FILE
    check_argv, what = _startup_command(base, formula)
    show_argv = [sys.executable, "-m", "formdb", "--db", base, "ingredient", "show", SHOW_NAME]
    done = subprocess.run(show_argv, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        raise RuntimeError(f"formdb ingredient show {SHOW_NAME} failed: {done.stderr[-2000:]}")
    commands: dict[str, list[str]] = {"floor": list(startup.FLOOR_ARGV), "check": check_argv,
                                      "show": show_argv}
    script = _console_script()
    if script is not None and check_argv[1:3] == ["-m", "formdb"]:
        commands["script"] = [str(script), *check_argv[3:]]
    env = startup.bytecode_env(work / "pycache")
    say(f"start-up: check FILE and ingredient show processes, median of {sizes.startup_runs} "
        "interleaved runs")
    series = startup.interleaved(commands, sizes.startup_runs, env)
    floor_wall, floor_cpu = series.wall("floor"), series.cpu("floor")
    extra = []
    if "script" in commands:
        extra.append(f"the console script `formdb check FILE`: {series.wall('script'):.3f} s "
                     f"({series.wall('script') / floor_wall:.2f}x)")
    if os.environ.get("PYTHONDONTWRITEBYTECODE"):
        raw_runs = max(1, sizes.startup_runs // 3)
        say(f"start-up as this environment runs it (PYTHONDONTWRITEBYTECODE), {raw_runs} runs")
        raw = startup.interleaved({"floor": commands["floor"], "check": check_argv}, raw_runs)
        extra.append("without a bytecode cache (PYTHONDONTWRITEBYTECODE=1, as this environment "
                     f"runs an editable checkout): {raw.wall('check'):.3f} s / "
                     f"{raw.wall('floor'):.3f} s = {raw.wall('check') / raw.wall('floor'):.2f}x")
    floor_name = f'python -c "{startup.FLOOR_CODE}"'
    result.figures.append(Figure(
        f"one check FILE process, wall time ({what})", series.wall("check"), "s", floor_wall,
        floor_name, f"<= {STARTUP_TARGET:g}x", series.wall("check") / floor_wall <= STARTUP_TARGET,
        "; ".join([f"medians of {sizes.startup_runs} interleaved runs, bytecode cached", *extra]),
        series.cpu("check"), floor_cpu))
    result.figures.append(Figure(
        f"one ingredient show NAME process, wall time (python -m formdb ingredient show "
        f"{SHOW_NAME})", series.wall("show"), "s", floor_wall, floor_name,
        f"<= {SHOW_TARGET:g}x", series.wall("show") / floor_wall <= SHOW_TARGET,
        f"medians of {sizes.startup_runs} interleaved runs, bytecode cached",
        series.cpu("show"), floor_cpu))
    say(f"import time (-X importtime), {sizes.import_profile_runs} run(s) per command")
    for label, argv, target in (("check FILE", check_argv, STARTUP_IMPORT_TARGET),
                                ("ingredient show", show_argv, SHOW_IMPORT_TARGET)):
        profile = startup.import_profile(argv, sizes.import_profile_runs, env)
        result.figures.append(Figure(
            f"import time of one {label} process beyond the floor's (-X importtime)",
            profile.beyond_floor, "s", profile.floor_total, "the floor process's import time",
            f"<= {target:.1f}x (the room the {1 + target:g}x start-up target leaves)",
            profile.beyond_floor / profile.floor_total <= target,
            f"all its imports {profile.total:.3f} s; beyond the floor: "
            f"{startup.describe_groups(profile)}"))
        if label == "check FILE":
            own = profile.by_group.get("formdb", 0.0)
            result.figures.append(Figure(
                "formdb's own modules, import time in one check FILE process (-X importtime)",
                own, "s", profile.floor_total, "the floor process's import time",
                f"inside the {STARTUP_IMPORT_TARGET:.1f}x above", None,
                f"{profile.formdb_modules} modules; slowest: " + ", ".join(
                    f"{name} {seconds * 1000:.1f} ms" for name, seconds in
                    profile.slowest_formdb)))


def measure_backend(libs: SqliteLibraries | PostgresLibraries, sizes: Sizes,
                    work: Path, say: Progress) -> BackendResult:
    result = BackendResult(libs.name)
    result.notes.append(f"load average at start: {_load()}")
    if isinstance(libs, PostgresLibraries):
        result.notes.append(f"server: {_server_version(libs.base_url)}")
    seed_only, base = _make_library(libs, sizes, say, result)
    checked = _check_series(libs, sizes, base, say, result)
    _lists_figures(libs, sizes, checked, say, result)
    _import_figure(libs, sizes, seed_only, work, say, result)
    _startup_figures(base, sizes, work, say, result)
    result.notes.append(f"load average at end: {_load()}")
    return result


def _server_version(url: str) -> str:
    with floors.raw_connection(url) as conn:
        cursor = conn.cursor()
        cursor.execute("SHOW server_version")
        return f"PostgreSQL {cursor.fetchone()[0]}"


def _load() -> str:
    try:
        return " ".join(f"{v:.2f}" for v in os.getloadavg())
    except OSError:
        return "unknown"


# --- printing -------------------------------------------------------------------------------

def machine() -> dict[str, str]:
    memory = ""
    try:
        with open("/proc/meminfo", encoding="ascii") as handle:
            kib = int(next(line for line in handle if line.startswith("MemTotal")).split()[1])
            memory = f"{kib / 1024 / 1024:.1f} GiB"
    except (OSError, StopIteration, ValueError):
        memory = "unknown"
    return {"date": datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC"),
            "cpus": str(os.cpu_count()), "memory": memory,
            "python": platform.python_version(), "platform": platform.platform(),
            "sqlite": sqlite3.sqlite_version}


def _number(value: float, unit: str) -> str:
    if unit == "s":
        return f"{value:.3f} s" if value < 10 else f"{value:.1f} s"
    if unit == "MB":
        return f"{value:.0f} MB"
    if unit == "%":
        return f"{value:+.1f} %"
    return f"{value:.3f}"


def render(results: Sequence[BackendResult], sizes: Sizes) -> list[str]:
    info = machine()
    lines = [f"formdb benchmark, {info['date']}: {info['cpus']} CPUs, {info['memory']}, "
             f"Python {info['python']}, SQLite {info['sqlite']}",
             f"library: {sizes.ingredients:,} ingredients (seed + synthetic), seed "
             f"{sizes.seed}; formulas {', '.join(f'{n:,}' for n in sizes.formulas)}"]
    for backend in results:
        lines.append("")
        lines.append(f"== {backend.backend} ==")
        for fig in backend.figures:
            met = {True: "MET", False: "MISSED", None: "-"}[fig.met]
            lines.append(f"{fig.name}")
            measured = _number(fig.measured, fig.unit)
            if fig.floor is not None:
                lines.append(f"    {measured}  vs floor {_number(fig.floor, 's')} "
                             f"({fig.floor_name})  ratio {fig.ratio:.2f}x  "
                             f"target {fig.target or '-'}  {met}")
                if fig.cpu_ratio is not None:
                    lines.append(f"    CPU time {_number(fig.cpu or 0, 's')} vs "
                                 f"{_number(fig.floor_cpu or 0, 's')}: ratio "
                                 f"{fig.cpu_ratio:.2f}x")
            else:
                extra = f"  ({fig.floor_name})" if fig.floor_name else ""
                lines.append(f"    {measured}{extra}  target {fig.target or '-'}  {met}")
            if fig.detail:
                lines.append(f"    {fig.detail}")
        lines.extend(f"  note: {note}" for note in backend.notes)
    return lines


@contextmanager
def _work_folder(work: Path | None) -> Iterator[Path]:
    if work is not None:
        work.mkdir(parents=True, exist_ok=True)
        yield work
        return
    with tempfile.TemporaryDirectory(prefix="formdb-bench-") as folder:
        yield Path(folder)


def run_benchmark(*, quick: bool = False, pg_url: str | None = None, work: Path | None = None,
                  sizes: Sizes | None = None, json_out: Path | None = None,
                  echo: Callable[[str], None] = click.echo) -> list[BackendResult]:
    """Measure every figure on SQLite (and PostgreSQL when ``pg_url`` is given), print them."""
    chosen = sizes or (QUICK if quick else FULL)
    results: list[BackendResult] = []
    say = Progress(echo)
    with _work_folder(work) as folder:
        echo(f"SQLite libraries in {folder}")
        results.append(measure_backend(SqliteLibraries(folder), chosen, folder, say))
        if pg_url:
            echo("PostgreSQL")
            libs = PostgresLibraries(pg_url)
            try:
                results.append(measure_backend(libs, chosen, folder, say))
            finally:
                libs.close()
    for line in render(results, chosen):
        echo(line)
    if json_out is not None:
        json_out.write_text(json.dumps(
            {"machine": machine(), "sizes": asdict(chosen),
             "results": [{"backend": r.backend, "notes": r.notes,
                          "figures": [{**asdict(f), "ratio": f.ratio, "cpu_ratio": f.cpu_ratio}
                                      for f in r.figures]}
                         for r in results]}, indent=2), encoding="utf-8")
    return results
