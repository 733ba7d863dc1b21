"""One measurement in a process of its own, so its peak memory (``ru_maxrss``) is its own.

``python -m formdb.bench.worker check URL`` streams every stored formula through
``iter_check_stored``; ``python -m formdb.bench.worker import URL CSV`` imports a table in one
transaction. Each prints one JSON object: the count, the wall and CPU seconds of the measured
part, the peak resident set size in MB. ``--profile N`` adds the N costliest functions (cProfile,
cumulative).
"""

from __future__ import annotations

import argparse
import cProfile
import io
import json
import pstats
import resource
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any


def peak_mb() -> float:
    """Peak resident set size of this process in MB (Linux reports ru_maxrss in KiB)."""
    scale = 1 if sys.platform == "darwin" else 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * scale / 1e6


def check_all(url: str) -> dict[str, Any]:
    from formdb.schemas.vocab import Severity
    from formdb.services.checking.flow import iter_check_stored
    from formdb.store.library import Library

    count = errors = findings = 0
    with Library.open(url) as library:
        for result in iter_check_stored(library):
            count += 1
            findings += len(result.findings)
            errors += any(f.severity == Severity.ERROR for f in result.findings)
    return {"formulas": count, "with_error_findings": errors, "findings": findings}


def import_csv(url: str, csv_path: str) -> dict[str, Any]:
    from formdb.services.library.ingredients import import_table
    from formdb.store.db import open_library, unit_of_work

    engine = open_library(url)
    try:
        with unit_of_work(engine, write=True) as session:
            report = import_table(session, Path(csv_path), user="formdb-bench",
                                  reason="benchmark import")
    finally:
        engine.dispose()
    return {"added": len(report.added), "changed": len(report.changed)}


def import_lists(url: str, files: list[str]) -> dict[str, Any]:
    from formdb.services.lists.importing import import_lists as run_import
    from formdb.store.library import Library

    with Library.open(url) as library:
        result = run_import(library, [Path(f) for f in files], user="formdb-bench")
    return {"entries": sum(a.snapshot.entries for a in result.annexes),
            "parts": result.parts, "structured_parts": result.structured_parts,
            "ingredients_created": sum(a.ingredients_created for a in result.annexes)}


def _profiled(work: Callable[[], dict[str, Any]], top: int) -> tuple[dict[str, Any], str]:
    profiler = cProfile.Profile()
    result = profiler.runcall(work)
    out = io.StringIO()
    stats = pstats.Stats(profiler, stream=out)
    stats.sort_stats("cumulative").print_stats(top)
    return result, out.getvalue()


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(prog="python -m formdb.bench.worker")
    parser.add_argument("task", choices=("check", "import", "lists"))
    parser.add_argument("url")
    parser.add_argument("csv", nargs="*", help="the CSV to import; the annex exports for lists")
    parser.add_argument("--profile", type=int, default=0)
    args = parser.parse_args(argv)
    # the libraries a task needs are imported before the clock starts
    import formdb.services.checking.flow
    if args.task == "import":
        import formdb.services.library.ingredients
        # the database dialect too: SQLAlchemy loads it when the first engine is made
        if args.url.startswith("postgresql"):
            import sqlalchemy.dialects.postgresql.psycopg
        else:
            import sqlalchemy.dialects.sqlite.pysqlite  # noqa: F401
    if args.task == "lists":
        import formdb.services.lists.importing  # noqa: F401

    def work() -> dict[str, Any]:
        if args.task == "check":
            return check_all(args.url)
        if args.task == "lists":
            return import_lists(args.url, args.csv)
        return import_csv(args.url, args.csv[0])

    started, cpu = time.perf_counter(), time.process_time()
    if args.profile:
        result, profile = _profiled(work, args.profile)
        result["profile"] = profile
    else:
        result = work()
    result["seconds"] = time.perf_counter() - started
    result["cpu_seconds"] = time.process_time() - cpu
    result["peak_mb"] = peak_mb()
    print(json.dumps(result))


if __name__ == "__main__":
    main()
