"""What ``formdb demo`` prints: an introduction, the report of each demo formula, and one
summary line per formula with what it is there to show."""

from __future__ import annotations

import re
from typing import TYPE_CHECKING

from formdb.report import SUFFIXES, ListSnapshot, render

if TYPE_CHECKING:
    from formdb.schemas.demo import DemoRun
    from formdb.schemas.result import CheckResult

INTRO = (
    "formdb demo: a throwaway library from the bundled seed data, then the formulas of\n"
    "Larkspur Bench Laboratories (an invented lab) checked with the default profile.\n"
)


def demo_report(run: DemoRun, fmt: str, results: list[CheckResult] | None = None) -> str:
    chosen = run.results if results is None else results
    return render(chosen, fmt, snapshots=[ListSnapshot(*row) for row in run.snapshots])


def demo_report_files(run: DemoRun, fmt: str) -> dict[str, str]:
    """File name -> the report of one demo formula, for ``demo --out FOLDER``."""
    return {f"{re.sub(r'[^A-Za-z0-9_-]+', '-', path.stem)}.{SUFFIXES[fmt]}":
            demo_report(run, fmt, [result])
            for path, result in zip(run.files, run.results, strict=True)}


def _what_it_is(result: CheckResult) -> str:
    """The product kind and only the numbers that kind gets (an emulsion its type, HLB balance
    and dispersed fraction; a soap cream its type and fraction; other kinds their kind alone)."""
    facts = result.facts
    kind = facts.kind.kind if facts.kind else "emulsion"
    if kind not in ("emulsion", "soap cream"):
        return kind
    phi = "-" if facts.dispersed_fraction is None else f"{facts.dispersed_fraction:.2f}"
    typed = facts.working_type.value if facts.working_type else "type not known"
    if kind == "soap cream":
        by_soap = facts.predicted_type.value if facts.predicted_type else "no type"
        return (f"soap cream, {by_soap} by its soap (no HLB balance), dispersed volume fraction "
                f"{phi}")
    high = " (high internal phase)" if facts.kind and facts.kind.high_internal_phase else ""
    blend = "-" if facts.blend_hlb is None else f"{facts.blend_hlb:.1f}"
    need = "-" if facts.required_hlb is None else f"{facts.required_hlb:.1f}"
    return (f"{typed} emulsion{high}, blend HLB {blend} vs required {need}, dispersed volume "
            f"fraction {phi}")


def demo_summary(run: DemoRun) -> str:
    """One line per formula: its kind and that kind's numbers, and what was found."""
    lines = ["", "Summary (default profile):"]
    for purpose, result in zip(run.purposes, run.results, strict=True):
        counts = result.severity_counts()
        verdict = "needs work" if result.has_errors else "no errors"
        lines.append(
            f"  {result.formula}: {_what_it_is(result)}; {counts['error']} error(s), "
            f"{counts['warning']} warning(s), {counts['info']} note(s): {verdict}")
        lines.append(f"      ({purpose})")
    lines.append(
        f"Demo library: {run.library} (kept; `formdb --db {run.library} ...` opens it)."
        if run.kept else "Demo library: a throwaway file, removed when the demo ends (`formdb "
        "demo --keep PATH` keeps one to explore; rerun `formdb demo` any time).")
    lines.append("Next: `formdb init --seed` makes your own library here; write a formula file "
                 "as in the README and run `formdb check FILE`.")
    return "\n".join(lines)
