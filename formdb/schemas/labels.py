"""The label declaration of one formula (built by services.labelling)."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class LabelEntry:
    name: str
    percent: float
    group: str  # "above 1 %", "1 % or less", "colourant"
    allergen: bool
    given_as: tuple[str, ...]  # the names the formula used for it


@dataclass(frozen=True)
class LabelDeclaration:
    formula: str
    category: str
    jurisdiction: str
    entries: tuple[LabelEntry, ...]
    allergens_named: tuple[str, ...]

    @property
    def text(self) -> str:
        return ", ".join(entry.name for entry in self.entries)
