"""The demo: a throwaway library from the bundled seed, the invented lab's formulas checked.

Larkspur Bench Laboratories is invented; its formulas sit in ``seed_data/demo/``. Each shows one
thing the checker is for: a sound O/W cream, a W/O cold cream, a vanishing cream whose only
emulsifier is soap made in the batch, an anionic-cationic clash, a preservative over its limit,
and an emulsifier pair that misses the oil phase's required HLB.
"""

from __future__ import annotations

import shutil
import tempfile
from pathlib import Path

from formdb.errors import ConfigError
from formdb.resources import seed_data_dir
from formdb.schemas.demo import DemoRun
from formdb.services.checking.flow import check_inputs, input_from_text
from formdb.services.checking.report_context import limit_snapshots
from formdb.services.library.formulas import import_formulas
from formdb.services.seed.setup import init_library
from formdb.store.library import Library


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
    paths = demo_formula_paths()
    try:
        init_library(url, seed=True, user=user)
        with Library.open(url) as opened:
            import_formulas(opened, paths, user=user, reason="demo formulas of the invented lab")
            with opened.read():
                # labelled by their place in the repository, not by where pip installed them
                results = check_inputs(opened, [
                    input_from_text(p.read_text(encoding="utf-8"), f"seed_data/demo/{p.name}")
                    for p in paths])
                snapshots = limit_snapshots(opened)
    except BaseException:
        if keep is None:  # a failed demo leaves no library behind either
            shutil.rmtree(library.parent, ignore_errors=True)
        raise
    return DemoRun(library=library, results=results, files=paths,
                   purposes=[formula_purpose(p) for p in paths], snapshots=snapshots,
                   kept=keep is not None)


def remove_throwaway(run: DemoRun) -> None:
    """Remove a demo library made in a temporary folder (each run made one more: 1.1 MB left
    in the temporary folder per `formdb demo`, for good); a kept one stays."""
    if not run.kept:
        shutil.rmtree(run.library.parent, ignore_errors=True)
