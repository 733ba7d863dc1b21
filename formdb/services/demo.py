"""The demo: a throwaway library from the bundled seed, the invented lab's formulas checked.

Larkspur Bench Laboratories is invented; its formulas sit in ``seed_data/demo/``. Each shows one
thing the checker is for: a sound O/W cream, a W/O cold cream, a vanishing cream whose only
emulsifier is soap made in the batch, an anionic-cationic clash, a preservative over its limit,
and an emulsifier pair that misses the oil phase's required HLB.
"""

from __future__ import annotations

import re
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from formdb.errors import ConfigError
from formdb.resources import seed_data_dir
from formdb.schemas.result import CheckResult
from formdb.services.checking import check_files
from formdb.services.formulas import import_formulas
from formdb.services.report_context import limit_snapshots
from formdb.services.setup import init_library
from formdb.store.library import Library

INTRO = (
    "formdb demo: a throwaway library from the bundled seed data, then the formulas of\n"
    "Larkspur Bench Laboratories (an invented lab) checked with the default profile.\n"
)


def demo_formula_paths() -> list[Path]:
    return sorted((seed_data_dir() / "demo").glob("*.toml"))


def formula_purpose(path: Path) -> str:
    """The leading comment of a demo formula file: what the formula is there to show."""
    words = []
    for line in path.read_text(encoding="utf-8").splitlines():
        if not line.startswith("#"):
            break
        words.append(line.lstrip("#").strip())
    text = " ".join(words)
    return text.split(": ", 1)[1] if ": " in text else text


@dataclass
class DemoRun:
    library: Path
    results: list[CheckResult]
    intro: str = INTRO
    _files: list[Path] = field(default_factory=list)
    snapshots: list = field(default_factory=list)  # the limit lists' dates, for the cautions

    def render(self, fmt: str, results: list[CheckResult] | None = None) -> str:
        from formdb.report import ListSnapshot, render

        chosen = self.results if results is None else results
        return render(chosen, fmt, snapshots=[ListSnapshot(*row) for row in self.snapshots])

    def summary(self) -> str:
        """One line per formula: type, HLB balance, dispersed fraction and what was found."""
        lines = ["", "Summary (default profile):"]
        for path, result in zip(self._files, self.results, strict=True):
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
            lines.append(f"      ({formula_purpose(path)})")
        lines.append(f"Demo library: {self.library} (throwaway; rerun `formdb demo` any time).")
        lines.append("Next: `formdb init --seed` makes your own library here; write a formula file "
                     "as in the README and run `formdb check FILE`.")
        return "\n".join(lines)

    def write_reports(self, folder: Path, fmt: str) -> list[Path]:
        folder.mkdir(parents=True, exist_ok=True)
        suffix = {"text": "txt", "json": "json", "html": "html"}[fmt]
        written = []
        for path, result in zip(self._files, self.results, strict=True):
            target = folder / f"{re.sub(r'[^A-Za-z0-9_-]+', '-', path.stem)}.{suffix}"
            target.write_text(self.render(fmt, [result]), encoding="utf-8")
            written.append(target)
        return written


def run_demo(*, keep: Path | None = None, user: str = "demo") -> DemoRun:
    """Seed a fresh library (temporary unless ``keep``), store and check the demo formulas."""
    if keep is not None:
        library = keep
        if library.exists():
            raise ConfigError(f"{library} already exists; the demo only writes a new library",
                              hint="give --keep a path that does not exist yet")
    else:
        library = Path(tempfile.mkdtemp(prefix="formdb-demo-")) / "demo-library.sqlite"
    url = str(library)
    init_library(url, seed=True, user=user)
    paths = demo_formula_paths()
    with Library.open(url) as opened:
        import_formulas(opened, paths, user=user, reason="demo formulas of the invented lab")
        with opened.read():
            results = check_files(opened, paths)
            snapshots = limit_snapshots(opened)
    return DemoRun(library=library, results=results, _files=paths, snapshots=snapshots)
