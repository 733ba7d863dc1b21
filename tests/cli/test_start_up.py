"""The program's start-up and the cycle collector: while ``main`` runs as the program, the
collector's first threshold is raised until the command's library is about to open; then the
start-up's objects are frozen and the usual thresholds come back. Called with an argv (as every
in-process test does), ``main`` leaves the collector alone. No time is asserted (the benchmark
measures it)."""

from __future__ import annotations

import gc
import os
import subprocess
import sys

import pytest

from formdb.cli import main as cli_main
from formdb.store.library import Library


def test_on_open_runs_once_just_before_the_library_opens(seeded_sqlite_url: str) -> None:
    seen: list[int] = []
    library = Library.deferred(seeded_sqlite_url, on_open=lambda: seen.append(Library.opened))
    with library:
        assert seen == []  # deferred: nothing opened, nothing called
        opened_before = Library.opened
        with library.read():
            pass
        with library.read():
            pass
        _ = library.engine
    assert seen == [opened_before]  # once, and before the open counted itself


def test_a_library_never_used_never_calls_on_open(seeded_sqlite_url: str) -> None:
    seen: list[str] = []
    with Library.deferred(seeded_sqlite_url, on_open=lambda: seen.append("opened")):
        pass
    assert seen == []


def test_start_up_raises_the_threshold_then_freezes_once(monkeypatch: pytest.MonkeyPatch) -> None:
    frozen: list[int] = []
    monkeypatch.setattr(gc, "freeze", lambda: frozen.append(1))  # the test process is no program
    before = gc.get_threshold()
    try:
        cli_main._start_up_begins()
        assert gc.get_threshold()[0] == cli_main.START_UP_COLLECTION
        cli_main.start_up_over()
        assert gc.get_threshold() == before
        assert frozen == [1]
        cli_main.start_up_over()  # a second library in the same command changes nothing
        assert frozen == [1]
    finally:
        gc.set_threshold(*before)


def test_main_with_an_argv_leaves_the_collector_alone(seeded_sqlite_url: str,
                                                       monkeypatch: pytest.MonkeyPatch) -> None:
    frozen: list[int] = []
    monkeypatch.setattr(gc, "freeze", lambda: frozen.append(1))
    before = gc.get_threshold()
    with pytest.raises(SystemExit):
        cli_main.main(["--db", seeded_sqlite_url, "ingredient", "show", "Glycerin"])
    assert gc.get_threshold() == before
    assert frozen == []


PROBE = """
import gc, sys
from formdb.cli import main as m
from formdb.store import library as lib
seen = []
real = lib.open_library
def probe(url):
    seen.append(gc.get_threshold()[0])
    return real(url)
lib.open_library = probe
sys.argv = ["formdb", "--db", sys.argv[1], "ingredient", "show", "Glycerin"]
try:
    m.main()
finally:
    sys.__stderr__.write(f"threshold at open {seen} after {gc.get_threshold()[0]} "
                         f"frozen {gc.get_freeze_count() > 0}\\n")
"""


def test_the_program_opens_its_library_with_the_usual_collector(seeded_sqlite_url: str) -> None:
    """As the program (no argv), ``main`` restores the thresholds before the library opens
    and leaves the start-up's objects frozen."""
    env = {k: v for k, v in os.environ.items() if k != "FORMDB_DB"}
    done = subprocess.run([sys.executable, "-c", PROBE, seeded_sqlite_url], capture_output=True,
                          text=True, check=False, timeout=120, env=env)
    assert done.returncode == 0, done.stderr[-2000:]
    default = gc.get_threshold()[0]
    assert f"threshold at open [{default}] after {default} frozen True" in done.stderr
    assert "Glycerin" in done.stdout
