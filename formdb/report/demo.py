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


def demo_summary(run: DemoRun) -> str:
    """One line per formula: type, HLB balance, dispersed fraction and what was found."""
    lines = ["", "Summary (default profile):"]
    for purpose, result in zip(run.purposes, run.results, strict=True):
        counts = result.severity_counts()
        facts = result.facts
        blend = "-" if facts.blend_hlb is None else f"{facts.blend_hlb:.1f}"
        need = "-" if facts.required_hlb is None else f"{facts.required_hlb:.1f}"
        phi = "-" if facts.dispersed_fraction is None else f"{facts.dispersed_fraction:.2f}"
        kind = facts.predicted_type.value if facts.predicted_type else "?"
        verdict = "needs work" if result.has_errors else "no errors"
        lines.append(
            f"  {result.formula}: {kind}, blend HLB {blend} vs required {need}, "
            f"dispersed volume fraction {phi}; {counts['error']} error(s), "
            f"{counts['warning']} warning(s), {counts['info']} note(s): {verdict}")
        lines.append(f"      ({purpose})")
    lines.append(f"Demo library: {run.library} (throwaway; rerun `formdb demo` any time).")
    lines.append("Next: `formdb init --seed` makes your own library here; write a formula file "
                 "as in the README and run `formdb check FILE`.")
    return "\n".join(lines)
