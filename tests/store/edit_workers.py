"""Worker processes for the concurrency and crash tests (importable by name, so ``spawn`` and
``python -m`` can run them).

``edit_rounds``: one editor reading an ingredient's version and editing it with that version, over
and over, on ingredients other workers edit too. Each edit sets two fields at once (``hlb`` and
its note) so a partial write would show as a value whose note names a different edit.
"""

from __future__ import annotations

import multiprocessing
import random
import sys
import time
from dataclasses import dataclass
from multiprocessing.context import BaseContext
from typing import Any

from formdb.errors import Conflict
from formdb.services.library.ingredients import edit_ingredient, show_ingredient
from formdb.store.db import make_engine, unit_of_work

STRESS_NAMES = ("Cetyl Alcohol", "Glyceryl Stearate", "Sorbitan Stearate")


@dataclass(frozen=True)
class Attempt:
    worker: int
    round: int
    name: str
    read_version: int
    value: str              # the hlb this attempt tried to write
    accepted_version: int | None
    conflict: str | None    # the Conflict message when refused
    other_error: str | None


def edit_workers_context() -> BaseContext:
    """Fresh processes for the concurrency tests, forked from a server process that imported
    this module once (per test worker): a ``spawn`` child imported formdb again, about 1.5
    CPU-s each, 14 children a run. The children share nothing with the test process (no engine,
    no connection), as spawned ones did not."""
    ctx = multiprocessing.get_context("forkserver")
    # first_add's command and its runner, loaded once as well
    ctx.set_forkserver_preload([__name__, "formdb.cli.ingredients", "tests.helpers"])
    return ctx


def stress_value(worker: int, round_: int) -> str:
    """A value unique to (worker, round) and inside the HLB bounds."""
    return f"{worker + round_ / 100:.2f}"


def user_of(worker: int) -> str:
    return f"larkspur-editor-{worker}"


def edit_rounds(url: str, worker: int, rounds: int, start: Any) -> list[Attempt]:
    """``rounds`` edits by ``worker``, begun when every worker has its engine (``start``, a
    barrier of the workers and the test)."""
    rng = random.Random(worker * 7919)
    engine = make_engine(url)
    out: list[Attempt] = []
    try:
        start.wait(60)  # every worker starts together
        for r in range(rounds):
            name = rng.choice(STRESS_NAMES)
            with unit_of_work(engine) as session:
                version = show_ingredient(session, name).record.version
            time.sleep(rng.random() * 0.01)  # the user thinking; lets others slip in
            value = stress_value(worker, r)
            accepted = conflict = other = None
            try:
                with unit_of_work(engine, write=True) as session:
                    report = edit_ingredient(
                        session, name, [("hlb", value), ("hlb_note", f"w{worker} r{r}")],
                        user=user_of(worker), source="rule-of-thumb",
                        reason=f"stress round {r}", expect_version=version)
                    accepted = report.version
            except Conflict as exc:
                conflict = exc.message
            except Exception as exc:  # reported, and the test fails on it
                other = f"{type(exc).__name__}: {exc}"
            out.append(Attempt(worker, r, name, version, value, accepted, conflict, other))
    finally:
        engine.dispose()
    return out


def _edit_rounds_into(done: Any, url: str, worker: int, rounds: int, start: Any) -> None:
    done.put((worker, edit_rounds(url, worker, rounds, start)))


def editors_together(url: str, workers: int, rounds: int) -> list[Attempt]:
    """``edit_rounds`` by ``workers`` editors, each in a process of its own, released together
    as soon as all are ready (a barrier, not a fixed wait for interpreters to start); every
    worker must be done within a minute (a deadlock would hang here)."""
    ctx = edit_workers_context()
    start, done = ctx.Barrier(workers + 1), ctx.Queue()
    procs = [ctx.Process(target=_edit_rounds_into, args=(done, url, w, rounds, start))
             for w in range(workers)]
    for proc in procs:
        proc.start()
    try:
        start.wait(60)
        results = dict(done.get(timeout=60) for _ in procs)
    finally:
        for proc in procs:
            proc.join(timeout=10)
            if proc.is_alive():
                proc.kill()
    assert [proc.exitcode for proc in procs] == [0] * workers
    return [a for w in range(workers) for a in results[w]]


def first_add(url: str, name: str, go: Any, results: Any) -> None:
    """``formdb ingredient add NAME`` in this process once ``go`` is set, its (exit code,
    stderr) put on ``results``: one of several users adding the same new name at once. The
    command module is imported by the fork server, so the children race from the first
    statement instead of spending a second each importing formdb."""
    from tests.helpers import run_formdb

    go.wait(60)
    done = run_formdb(["--db", url, "ingredient", "add", name, "--set", "hlb=9", "--source",
                       "rule-of-thumb"])
    results.put((done.exit_code, done.stderr))


def edit_forever(url: str) -> None:
    """Edit one ingredient in a loop, printing each committed version (the kill test's victim)."""
    engine = make_engine(url)
    r = 0
    while True:
        with unit_of_work(engine, write=True) as session:
            report = edit_ingredient(session, STRESS_NAMES[0],
                                     [("hlb", stress_value(9, r % 100)), ("hlb_note", f"kill {r}")],
                                     user="larkspur-victim", source="rule-of-thumb",
                                     reason="kill test")
        print(report.version, flush=True)
        r += 1


def edit_then_hang(url: str) -> None:
    """Make one edit, flush it (rows written, not committed), say so, and wait to be killed."""
    engine = make_engine(url)
    with unit_of_work(engine, write=True) as session:
        edit_ingredient(session, STRESS_NAMES[0], [("hlb", "7.5"), ("hlb_note", "never kept")],
                        user="larkspur-victim", source="rule-of-thumb", reason="kill test")
        session.flush()
        print("flushed", flush=True)
        time.sleep(600)


if __name__ == "__main__":  # python -m tests.store.edit_workers forever|hang URL
    {"forever": edit_forever, "hang": edit_then_hang}[sys.argv[1]](sys.argv[2])
