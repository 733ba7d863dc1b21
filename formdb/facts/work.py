"""Scratch state while one formula's facts are worked out: what is left of each line, the soap
formed in place, the data gaps and notes in the order they were found (reports keep it), and
the library values the verdicts read (so EVD01 names only those)."""

from __future__ import annotations

from dataclasses import dataclass, field

from formdb.schemas.result import DataGap, SoapFacts, ValueRead
from formdb.schemas.vocab import IonicCharacter, Solubility


@dataclass
class SoapMember:
    """Soap formed in the batch with what the phase and emulsifier sums need."""

    facts: SoapFacts
    solubility: Solubility | None
    ionic_character: IonicCharacter | None
    side: str | None
    density: float | None


@dataclass
class Work:
    """Scratch state while the facts are being worked out."""

    remaining: dict[int, float]
    soaps: list[SoapMember] = field(default_factory=list)
    water_formed: float = 0.0
    gaps: dict[tuple[str, str], tuple[list[str], str]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    reads: dict[ValueRead, None] = field(default_factory=dict)  # ordered, no repeats

    def gap(self, prop: str, ingredient: str, blocks: str, detail: str = "") -> None:
        names, old = self.gaps.setdefault((prop, blocks), ([], detail))
        if ingredient not in names:
            names.append(ingredient)
        if detail and not old:
            self.gaps[(prop, blocks)] = (names, detail)

    def drop_gaps(self, blocks: str) -> None:
        """Forget the gaps that block a number this formula does not get (its kind has none)."""
        for key in [k for k in self.gaps if k[1] == blocks]:
            del self.gaps[key]

    def note(self, text: str) -> None:
        if text not in self.notes:
            self.notes.append(text)

    def read(self, prop: str, ingredient: str) -> None:
        """Record that a verdict rests on ``ingredient``'s library value of ``prop``."""
        self.reads.setdefault(ValueRead(ingredient=ingredient, property=prop), None)

    def values_read(self) -> tuple[ValueRead, ...]:
        return tuple(self.reads)

    def data_gaps(self) -> tuple[DataGap, ...]:
        return tuple(DataGap(property=prop, ingredients=tuple(names), blocks=blocks,
                             detail=detail)
                     for (prop, blocks), (names, detail) in self.gaps.items())
