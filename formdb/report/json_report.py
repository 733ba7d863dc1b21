"""The JSON report: DESIGN.md section 3 exactly (one formula, one object; several, an array).

``CheckResult.to_contract_json`` gives the contract keys and everything the text report shows;
this adds only the cautions, under their own key, so no contract key changes meaning.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

from formdb.report.cautions import ListSnapshot, cautions
from formdb.schemas.result import CheckResult

CAUTIONS_KEY = "cautions"


def report_objects(results: Sequence[CheckResult],
                   snapshots: Sequence[ListSnapshot] | None = None) -> list[dict[str, Any]]:
    """One JSON object per result, cautions included."""
    notes = cautions(results, snapshots)
    return [{**result.to_contract_json(), CAUTIONS_KEY: list(notes)} for result in results]


def render_json(results: Sequence[CheckResult], *,
                snapshots: Sequence[ListSnapshot] | None = None, color: bool = False) -> str:
    objects = report_objects(results, snapshots)
    payload: Any = objects[0] if len(objects) == 1 else objects
    return json.dumps(payload, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
