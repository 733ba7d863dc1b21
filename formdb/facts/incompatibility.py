"""Which incompatibility rows pair two ingredients: the one matcher of ION01 and the blend search.

A row's side names a compatibility class or an ingredient. A class is compared as a vocabulary
word (``norm_token``: case, spaces and ``_`` ignored), a name by ``name_key`` against the INCI
name and every synonym, so both users agree on what a row pairs.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import Incompatibility
from formdb.schemas.vocab import norm_token


@dataclass(frozen=True)
class Sides:
    """What a row's side can name of one ingredient: its classes and its names, normalised."""

    classes: frozenset[str]
    names: frozenset[str]

    @classmethod
    def of(cls, inci: str, synonyms: Iterable[str] = (), classes: Iterable[str] = ()) -> Sides:
        return cls(frozenset(norm_token(c) for c in classes),
                   frozenset({name_key(inci)} | {name_key(s) for s in synonyms}))

    @classmethod
    def of_record(cls, record: IngredientRecord) -> Sides:
        return cls.of(record.inci_name, record.synonyms, record.classes)

    @property
    def tokens(self) -> frozenset[str]:
        return self.classes | self.names

    def named_by(self, side: str) -> bool:
        """True when a row's side (a class or a name) is this ingredient."""
        return norm_token(side) in self.classes or name_key(side) in self.names


def oriented(row: Incompatibility, a: Sides, b: Sides) -> bool | None:
    """True when the row pairs a (as class_a) with b, False when b with a, None when neither."""
    if a.named_by(row.class_a) and b.named_by(row.class_b):
        return True
    if b.named_by(row.class_a) and a.named_by(row.class_b):
        return False
    return None


def may_match(row: Incompatibility, present: frozenset[str]) -> bool:
    """Cheap pre-test: a row can pair two members only if some member is each of its sides.
    ``present`` holds every member's ``tokens`` together (a false hit only costs the full
    test)."""
    return ((norm_token(row.class_a) in present or name_key(row.class_a) in present)
            and (norm_token(row.class_b) in present or name_key(row.class_b) in present))


def first_incompatibility(a: IngredientRecord, b: IngredientRecord,
                          rows: Sequence[Incompatibility]) -> Incompatibility | None:
    """The first row that pairs a class (or name) of ``a`` with one of ``b``, either way round."""
    sa, sb = Sides.of_record(a), Sides.of_record(b)
    return next((row for row in rows if oriented(row, sa, sb) is not None), None)
