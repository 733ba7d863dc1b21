"""Reference records the rules read besides ingredients: limits, incompatibilities, soaps.

They are data, never code."""

from __future__ import annotations

from datetime import date

from pydantic import BaseModel, ConfigDict

from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.vocab import Severity


class LimitRecord(BaseModel):
    """One concentration limit from a regulatory list.

    ``aggregate``: ``each`` applies ``max_percent`` to every listed ingredient on its own; ``sum``
    applies it to their total. ``basis``: ``as-is`` or ``as-acid`` (a salt's % converted to its
    parent acid, ``acid_inci``, by molar mass). ``max_percent`` 0 means not allowed in ``category``.
    ``excludes`` names entries that may not be used in the same product.
    """

    model_config = ConfigDict(frozen=True)

    key: str
    jurisdiction: str
    list_name: str
    entry: str
    ingredients: tuple[str, ...]
    category: str  # leave-on | rinse-off | any
    product: str | None = None
    max_percent: float
    aggregate: str = "each"  # each | sum
    basis: str = "as-is"  # as-is | as-acid
    acid_inci: str | None = None
    excludes: tuple[str, ...] = ()
    conditions: str | None = None
    source: str
    list_date: date


class Incompatibility(BaseModel):
    """A pair of compatibility classes (or INCI names) that do not belong together."""

    model_config = ConfigDict(frozen=True)

    key: str
    class_a: str
    class_b: str
    severity: Severity
    reason: str
    advice: str
    source: str


class SoapPair(BaseModel):
    """A fatty acid and a base that form a known soap in the batch (the soap is a library entry)."""

    model_config = ConfigDict(frozen=True)

    acid_inci: str
    base_inci: str
    soap_inci: str
    source: str


class ReferenceData(BaseModel):
    """Everything besides ingredients that a check needs, loaded once per check run."""

    model_config = ConfigDict(frozen=True)

    limits: tuple[LimitRecord, ...] = ()
    incompatibilities: tuple[Incompatibility, ...] = ()
    soap_pairs: tuple[SoapPair, ...] = ()
    # the soap ingredients named by soap_pairs, resolved, keyed by their INCI name
    soaps: dict[str, IngredientRecord] = {}
    # the parent acids named by "as-acid" limits (acid_inci), resolved, keyed by their INCI name;
    # their molar mass converts a salt's % to % as acid
    acids: dict[str, IngredientRecord] = {}
    sources: dict[str, str] = {}  # key -> citation
