"""Reports written one formula at a time, for ``formdb check --all`` over thousands of formulas.

Nothing here keeps the results: each is written as it arrives and only counts are kept, so memory
stays flat however many formulas the library holds.
- ``json``: the DESIGN.md contract (one formula: one object; several: an array), streamed.
- ``jsonl``: one compact contract object per line.
- ``text``: a summary table, a line per formula, then the totals and the cautions.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, TextIO

from formdb.report.cautions import ListSnapshot, cautions
from formdb.report.json_report import CAUTIONS_KEY
from formdb.schemas.result import CheckResult

STREAM_FORMATS = ("text", "json", "jsonl")


@dataclass
class Tally:
    formulas: int = 0
    failing: int = 0
    counts: dict[str, int] = field(default_factory=lambda: {"error": 0, "warning": 0, "info": 0})

    def add(self, result: CheckResult) -> None:
        self.formulas += 1
        self.failing += result.has_errors
        for severity, count in result.severity_counts().items():
            self.counts[severity] += count

    def line(self) -> str:
        return (f"{self.formulas} formula(s) checked, {self.failing} with errors "
                f"({self.counts['error']} error, {self.counts['warning']} warning, "
                f"{self.counts['info']} info findings)")


def _number(value: float | None, digits: int) -> str:
    return "-" if value is None else f"{value:.{digits}f}"


class StreamReport:
    """Write results as they come; ``close`` ends the document and returns the tally."""

    def __init__(self, out: TextIO, fmt: str, snapshots: Sequence[ListSnapshot] | None) -> None:
        if fmt not in STREAM_FORMATS:
            raise ValueError(f"{fmt!r} cannot be streamed; use one of {STREAM_FORMATS}")
        self.out, self.fmt, self.snapshots = out, fmt, list(snapshots or [])
        self.tally = Tally()
        self._held: dict[str, Any] | None = None  # json: the first object, until a second comes
        if fmt == "text":
            out.write(f"{'formula':<48} {'type':<4} {'blend':>6} {'needed':>6} {'phi':>6} "
                      f"{'err':>4} {'warn':>4} {'info':>4}\n")

    def _object(self, result: CheckResult) -> dict[str, Any]:
        return {**result.to_contract_json(),
                CAUTIONS_KEY: list(cautions([result], self.snapshots))}

    def write(self, result: CheckResult) -> None:
        self.tally.add(result)
        if self.fmt == "jsonl":
            self.out.write(json.dumps(self._object(result), ensure_ascii=False,
                                      allow_nan=False) + "\n")
        elif self.fmt == "json":
            self._write_json(self._object(result))
        else:
            self._write_text(result)

    def _write_json(self, obj: dict[str, Any]) -> None:
        text = json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False)
        if self.tally.formulas == 1:
            self._held = obj
            return
        if self._held is not None:
            held = json.dumps(self._held, indent=2, ensure_ascii=False, allow_nan=False)
            self.out.write("[\n" + held)
            self._held = None
        self.out.write(",\n" + text)

    def _write_text(self, result: CheckResult) -> None:
        facts = result.facts
        per = result.severity_counts()
        kind = facts.predicted_type.value if facts.predicted_type else "?"
        name = result.formula if len(result.formula) <= 48 else result.formula[:45] + "..."
        self.out.write(f"{name:<48} {kind:<4} {_number(facts.blend_hlb, 1):>6} "
                       f"{_number(facts.required_hlb, 1):>6} "
                       f"{_number(facts.dispersed_fraction, 3):>6} "
                       f"{per['error']:>4} {per['warning']:>4} {per['info']:>4}\n")

    def close(self) -> Tally:
        if self.fmt == "json":
            if self._held is not None:
                self.out.write(json.dumps(self._held, indent=2, ensure_ascii=False,
                                          allow_nan=False) + "\n")
            elif self.tally.formulas > 1:
                self.out.write("\n]\n")
            else:
                self.out.write("[]\n")
        elif self.fmt == "text":
            self.out.write(self.tally.line() + "\n\n")
            for number, note in enumerate(cautions([], self.snapshots), start=1):
                self.out.write(f"{number}. {note}\n")
        return self.tally
