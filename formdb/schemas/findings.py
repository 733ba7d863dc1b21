"""A finding: one thing a rule has to say about a formula. Feeds every output format."""

from __future__ import annotations

from pydantic import BaseModel, ConfigDict

from formdb.schemas.vocab import Severity


class Finding(BaseModel):
    model_config = ConfigDict(defer_build=True, frozen=True)

    rule: str  # stable code, e.g. "FD103"
    name: str  # readable rule name, e.g. "hlb-balance"
    severity: Severity
    message: str
    ingredients: tuple[str, ...] = ()
    values: dict[str, float | str | None] = {}
    advice: str | None = None
