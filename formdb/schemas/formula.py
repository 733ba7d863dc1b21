"""The formula file (TOML, DESIGN.md section 3) and the resolved formula the rules read."""

from __future__ import annotations

import math
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator

from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.vocab import Category, EmulsionType


class FormulaLine(BaseModel):
    """One ingredient line: ``inci`` is an INCI name or a synonym, ``percent`` is % w/w."""

    model_config = ConfigDict(extra="forbid")

    inci: str = Field(min_length=1, max_length=200)
    percent: float
    phase: str | None = Field(None, max_length=8)

    @field_validator("percent", mode="before")
    @classmethod
    def _percent_is_a_number(cls, value: Any) -> Any:
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ValueError(f"percent must be a number, got {value!r}")
        return value

    @field_validator("percent")
    @classmethod
    def _percent_positive(cls, value: float) -> float:
        if not math.isfinite(value):
            raise ValueError(f"percent must be a finite number, got {value!r}")
        if value <= 0:
            raise ValueError(f"percent must be above 0, got {value!r}")
        if value > 100:
            raise ValueError(f"percent must be at most 100, got {value!r}")
        return value

    @field_validator("inci")
    @classmethod
    def _clean_inci(cls, value: str) -> str:
        cleaned = " ".join(value.split())
        if not cleaned:
            raise ValueError("inci is empty")
        return cleaned

    @field_validator("phase")
    @classmethod
    def _clean_phase(cls, value: str | None) -> str | None:
        if value is None:
            return None
        cleaned = value.strip().upper()
        if not cleaned or not cleaned.isalnum():
            raise ValueError(f"phase must be a letter such as A, B or C, got {value!r}")
        return cleaned


class ProcessConditions(BaseModel):
    """Optional process figures that sharpen the interface and creaming estimates."""

    model_config = ConfigDict(extra="forbid")

    droplet_diameter_um: float | None = Field(None, gt=0, le=10000)
    surface_excess_mg_m2: float | None = Field(None, gt=0, le=100)
    temperature_c: float | None = Field(None, ge=-20, le=150)


class FormulaFile(BaseModel):
    """A formula as the formulator writes it."""

    model_config = ConfigDict(extra="forbid")

    name: str = Field(min_length=1, max_length=300)
    category: Category
    product: str | None = Field(None, max_length=100)
    intended_type: EmulsionType | None = None
    # optional: the kind of product when recognising it from the lines is not wanted
    kind: Literal["emulsion", "anhydrous", "surfactant solution", "soap cream", "aqueous gel",
                  "aqueous solution"] | None = None
    ph: float | None = Field(None, ge=0, le=14)
    batch_kg: float | None = Field(None, gt=0, le=1e6)
    process: ProcessConditions = ProcessConditions()
    ingredients: list[FormulaLine] = Field(min_length=1)

    @field_validator("ph", "batch_kg", mode="before")
    @classmethod
    def _numbers_only(cls, value: Any) -> Any:
        if value is not None and (isinstance(value, bool) or not isinstance(value, int | float)):
            raise ValueError(f"must be a number, got {value!r}")
        return value


class ResolvedLine(BaseModel):
    """A formula line with its library ingredient attached."""

    model_config = ConfigDict(frozen=True)

    line_no: int  # 1-based position in the file's [[ingredients]] list
    given_name: str
    percent: float
    phase: str | None
    ingredient: IngredientRecord

    @property
    def inci(self) -> str:
        return self.ingredient.inci_name


class ResolvedFormula(BaseModel):
    """A checked formula: every name resolved, frozen. Rules never touch the database."""

    model_config = ConfigDict(frozen=True)

    source: str  # file path or "stored:<name>"
    formula: FormulaFile
    lines: tuple[ResolvedLine, ...]
    content_hash: str

    @property
    def name(self) -> str:
        return self.formula.name
