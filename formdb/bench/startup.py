"""Start-up figures: whole ``formdb`` processes against ``python -c "import sqlalchemy, pydantic,
click"``, and where their import time goes.

Every process runs with a bytecode cache (``PYTHONPYCACHEPREFIX`` in the work folder, warmed
once), as an installed formdb has: pip compiles the ``.pyc`` files at install time, while an
editable checkout run under ``PYTHONDONTWRITEBYTECODE=1`` (as this project's container is)
compiles every formdb module on every start. The cost of that is measured on the side.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from formdb.bench.floors import STARTUP_FLOOR_CODE, startup_floor_argv

FLOOR_CODE = STARTUP_FLOOR_CODE  # re-exported: the run prints it as the floor's name
FLOOR_ARGV = tuple(startup_floor_argv())
# the packages whose import time the breakdown names; the rest is "other"
NAMED_GROUPS = ("sqlalchemy.orm", "sqlalchemy", "pydantic", "pydantic_core", "rich", "click",
                "psycopg")


@dataclass(frozen=True)
class Run:
    """One process: its wall seconds and the CPU seconds it used (user + system)."""

    seconds: float
    cpu_seconds: float


def bytecode_env(folder: Path) -> dict[str, str]:
    """The environment with a bytecode cache in ``folder`` (every module, floor's included)."""
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = str(folder)
    return env


def run_process(argv: Sequence[str], env: Mapping[str, str] | None = None) -> Run:
    """Wall and CPU time of one process (``os.wait4`` gives the child's own rusage)."""
    started = time.perf_counter()
    process = subprocess.Popen(list(argv), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                               env=None if env is None else dict(env))
    _pid, _status, usage = os.wait4(process.pid, 0)
    process.returncode = os.waitstatus_to_exitcode(_status)
    return Run(time.perf_counter() - started, usage.ru_utime + usage.ru_stime)


@dataclass
class Series:
    """Interleaved runs of several commands, so that drifting load hits each alike."""

    runs: dict[str, list[Run]] = field(default_factory=dict)

    def wall(self, label: str) -> float:
        return statistics.median(r.seconds for r in self.runs[label])

    def cpu(self, label: str) -> float:
        return statistics.median(r.cpu_seconds for r in self.runs[label])


def interleaved(commands: Mapping[str, Sequence[str]], runs: int,
                env: Mapping[str, str] | None = None) -> Series:
    """``runs`` rounds of every command in turn, after one warm-up round (file cache, .pyc)."""
    for argv in commands.values():
        run_process(argv, env)
    series = Series({label: [] for label in commands})
    for _ in range(runs):
        for label, argv in commands.items():
            series.runs[label].append(run_process(argv, env))
    return series


# --- where the import time goes ------------------------------------------------------------------

def import_lines(argv: Sequence[str], env: Mapping[str, str] | None = None
                 ) -> list[tuple[str, int]]:
    """(module, self microseconds) for every module one ``python -X importtime`` process loads
    (``argv`` starts with the Python interpreter)."""
    done = subprocess.run([argv[0], "-X", "importtime", *argv[1:]], capture_output=True,
                          text=True, check=False, env=None if env is None else dict(env))
    out = []
    for line in done.stderr.splitlines():
        if not line.startswith("import time:") or "self [us]" in line:
            continue
        self_us, _cumulative, name = line[len("import time:"):].split("|", 2)
        out.append((name.strip(), int(self_us)))
    return out


def group_of(module: str) -> str:
    if module == "formdb" or module.startswith("formdb."):
        return "formdb"
    for group in NAMED_GROUPS:
        if module == group or module.startswith(group + "."):
            return group
    return "other"


@dataclass(frozen=True)
class ImportProfile:
    """A command's import time (seconds of ``-X importtime`` self time), split by who pays it."""

    floor_total: float  # all the floor process imports
    total: float  # all the command imports
    beyond_floor: float  # modules the floor does not import
    by_group: dict[str, float]  # the part beyond the floor, by group of modules
    formdb_modules: int
    slowest_formdb: tuple[tuple[str, float], ...]  # its five slowest formdb modules


def import_profile(argv: Sequence[str], runs: int, env: Mapping[str, str] | None = None
                   ) -> ImportProfile:
    """Medians over ``runs`` pairs of ``-X importtime`` processes (the floor and the command).

    ``-X importtime`` adds its own overhead to every import, so these seconds are larger than
    the same imports in a plain run; the split between groups is what they are for."""
    floor_totals, totals, beyonds = [], [], []
    groups: dict[str, list[float]] = {}
    per_module: dict[str, list[float]] = {}
    count = 0
    for _ in range(runs):
        floor = import_lines(FLOOR_ARGV, env)
        floor_names = {name for name, _us in floor}
        command = import_lines(argv, env)
        floor_totals.append(sum(us for _n, us in floor) / 1e6)
        totals.append(sum(us for _n, us in command) / 1e6)
        extra = [(name, us / 1e6) for name, us in command if name not in floor_names]
        beyonds.append(sum(s for _n, s in extra))
        summed: dict[str, float] = dict.fromkeys((*NAMED_GROUPS, "formdb", "other"), 0.0)
        for name, seconds in extra:
            summed[group_of(name)] += seconds
            if group_of(name) == "formdb":
                per_module.setdefault(name, []).append(seconds)
        for group, seconds in summed.items():
            groups.setdefault(group, []).append(seconds)
        count = sum(group_of(name) == "formdb" for name, _s in extra)
    slowest = sorted(((name, statistics.median(v)) for name, v in per_module.items()),
                     key=lambda item: -item[1])[:5]
    return ImportProfile(
        statistics.median(floor_totals), statistics.median(totals), statistics.median(beyonds),
        {g: statistics.median(v) for g, v in groups.items() if statistics.median(v) > 0},
        count, tuple(slowest))


def describe_groups(profile: ImportProfile) -> str:
    parts = sorted(profile.by_group.items(), key=lambda item: -item[1])
    return ", ".join(f"{'formdb own modules' if g == 'formdb' else g} {s * 1000:.0f} ms"
                     for g, s in parts)
