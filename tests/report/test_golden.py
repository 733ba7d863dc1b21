"""Golden text and JSON reports of fixed formula files (tests/golden/README.md).

Set FORMDB_REGEN_GOLDEN=1 to rewrite the golden files from the current output instead of
comparing; the test then still fails on nothing, so read ``git diff tests/golden/`` before
committing the new files.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from tests.helpers import run_formdb

GOLDEN = Path(__file__).resolve().parent.parent / "golden"
FORMULAS = sorted((GOLDEN / "formulas").glob("*.toml"))
REGEN = os.environ.get("FORMDB_REGEN_GOLDEN") == "1"
SUFFIX = {"text": "txt", "json": "json"}


def test_there_are_golden_formulas() -> None:
    assert len(FORMULAS) >= 3


@pytest.mark.parametrize("fmt", ["text", "json"])
@pytest.mark.parametrize("formula", FORMULAS, ids=[p.stem for p in FORMULAS])
def test_report_matches_golden(formula: Path, fmt: str, seeded_sqlite_url: str,
                               monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(formula.parent)
    monkeypatch.delenv("NO_COLOR", raising=False)
    result = run_formdb(["--db", seeded_sqlite_url, "check", formula.name, "--format", fmt])
    assert result.exit_code in (0, 1), result.stderr
    assert result.stderr == ""
    golden = GOLDEN / f"{formula.stem}.{SUFFIX[fmt]}"
    if REGEN:
        golden.write_text(result.stdout, encoding="utf-8")
        return
    assert golden.exists(), f"no golden file {golden.name}: run with FORMDB_REGEN_GOLDEN=1"
    expected = golden.read_text(encoding="utf-8")
    assert result.stdout == expected, (
        f"{golden.name} differs from the report; if the change is intended, regenerate with "
        "FORMDB_REGEN_GOLDEN=1 and review the diff")
