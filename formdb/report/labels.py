"""What ``formdb label FILE`` prints: the ingredient declaration (text or JSON)."""

from __future__ import annotations

import json
from dataclasses import asdict
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.labels import LabelDeclaration

LABEL_CAUTION = ("A screening aid, not a label approval: check the current regulation and local "
                 "law before printing a label.")


def label_declaration(result: LabelDeclaration, fmt: str) -> str:
    if fmt == "json":
        data = asdict(result) | {"declaration": result.text}
        return json.dumps(data, indent=2, ensure_ascii=False) + "\n"
    lines = [f"{result.formula} ({result.category}, {result.jurisdiction})",
             f"Ingredients: {result.text}"]
    if result.allergens_named:
        lines.append(f"Allergens named (above the labelling threshold): "
                     f"{', '.join(result.allergens_named)}")
    lines.append(LABEL_CAUTION)
    return "\n".join(lines) + "\n"
