"""The formula file (TOML, DESIGN.md section 3) and the resolved formula the rules read."""

from __future__ import annotations

import math
from datetime import date
from enum import StrEnum
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator

from formdb.schemas.bounds import MAX_FORMULA_LINES
from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.lists import PURPOSES
from formdb.schemas.names import clean_name
from formdb.schemas.vocab import Category, EmulsionType


class FormulaLine(BaseModel):
    """One ingredient line: ``inci`` is an INCI name or a synonym, ``percent`` is % w/w."""

    model_config = ConfigDict(defer_build=True, extra="forbid")

    inci: str = Field(min_length=1, max_length=200)
    percent: float
    phase: str | None = Field(None, max_length=8)
    note: str | None = Field(None, max_length=500)  # printed on the weigh sheet
    supplier: str | None = Field(None, max_length=200)  # whose material; picks its price
    lot: str | None = Field(None, max_length=100)  # the lot weighed, for the batch record
    # why the line is there, where a regulatory entry depends on it (preservative or not)
    purpose: str | None = Field(None, max_length=40)

    @field_validator("purpose")
    @classmethod
    def _known_purpose(cls, value: str | None) -> str | None:
        if value is None:
            return None
        cleaned = " ".join(value.replace("_", " ").replace("-", " ").split()).casefold()
        if cleaned not in PURPOSES:
            raise ValueError(f"purpose must be one of {', '.join(PURPOSES)}, got {value!r}")
        return cleaned

    @field_validator("note", "supplier", "lot")
    @classmethod
    def _clean_text(cls, value: str | None) -> str | None:
        if value is None:
            return None
        cleaned = " ".join(value.split())
        if not cleaned:
            raise ValueError("is empty (leave the key out instead)")
        return cleaned

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
        cleaned = clean_name(value, None)  # NFC, as the library's names are stored
        if not cleaned:
            raise ValueError("inci is empty")
        return cleaned

    @field_validator("phase")
    @classmethod
    def _clean_phase(cls, value: str | None) -> str | None:
        return None if value is None else _phase_letter(value)


def _phase_letter(value: str) -> str:
    cleaned = value.strip().upper()
    if not cleaned or not cleaned.isascii() or not cleaned.isalnum():
        raise ValueError(f"phase must be a letter such as A, B or C, got {value!r}")
    return cleaned


class MixingKind(StrEnum):
    """How a step is stirred: the kinds of mixer a cosmetic bench uses."""

    NONE = "none"
    HAND = "hand"
    PADDLE = "paddle"
    ANCHOR = "anchor"
    PROPELLER = "propeller"
    TURBINE = "turbine"
    HIGH_SHEAR = "high-shear"
    HOMOGENISER = "homogeniser"


class ProcessStep(BaseModel):
    """One step of the making, in order: the phase(s) it handles, at what temperature, how
    mixed and for how long. The weigh sheet groups lines by the order phases first appear."""

    model_config = ConfigDict(defer_build=True, extra="forbid")

    phases: list[str] = Field(min_length=1, max_length=20)
    temperature_c: float | None = Field(None, ge=-20, le=150)
    mixing: MixingKind | None = None
    speed_rpm: float | None = Field(None, gt=0, le=100000)
    minutes: float | None = Field(None, gt=0, le=10000)
    note: str | None = Field(None, max_length=500)

    @field_validator("phases", mode="before")
    @classmethod
    def _one_or_many(cls, value: Any) -> Any:
        return [value] if isinstance(value, str) else value

    @field_validator("phases")
    @classmethod
    def _clean_phases(cls, value: list[str]) -> list[str]:
        cleaned = [_phase_letter(v) for v in value]
        if len(set(cleaned)) != len(cleaned):
            raise ValueError("a phase is named twice")
        return cleaned

    @field_validator("temperature_c", "speed_rpm", "minutes", mode="before")
    @classmethod
    def _numbers_only(cls, value: Any) -> Any:
        if value is not None and (isinstance(value, bool) or not isinstance(value, int | float)):
            raise ValueError(f"must be a number, got {value!r}")
        return value


class ProcessConditions(BaseModel):
    """Optional process figures that sharpen the interface and creaming estimates, and the
    ordered steps of the making (``[[process.steps]]``)."""

    model_config = ConfigDict(defer_build=True, extra="forbid")

    droplet_diameter_um: float | None = Field(None, ge=0.001, le=10000)
    surface_excess_mg_m2: float | None = Field(None, ge=0.01, le=100)
    temperature_c: float | None = Field(None, ge=-20, le=150)
    steps: list[ProcessStep] = Field(default_factory=list, max_length=200)

    def emulsifying_temperature_c(self) -> float | None:
        """The temperature the phases meet at: ``temperature_c`` when given, else that of the
        first step joining two or more phases, else None."""
        if self.temperature_c is not None:
            return self.temperature_c
        for step in self.steps:
            if len(step.phases) >= 2 and step.temperature_c is not None:
                return step.temperature_c
        return None


class FormulaFile(BaseModel):
    """A formula as the formulator writes it."""

    model_config = ConfigDict(defer_build=True, extra="forbid")

    name: str = Field(min_length=1, max_length=300)
    category: Category
    product: str | None = Field(None, max_length=100)
    intended_type: EmulsionType | None = None
    # optional: the kind of product when recognising it from the lines is not wanted
    kind: Literal["emulsion", "anhydrous", "surfactant solution", "soap cream", "aqueous gel",
                  "aqueous solution"] | None = None
    ph: float | None = Field(None, ge=0, le=14)
    batch_kg: float | None = Field(None, gt=0, le=1e6)
    # the day the product is (to be) placed on the market: which allergen list applies
    placed_on: date | None = None
    process: ProcessConditions = Field(default_factory=ProcessConditions)
    ingredients: list[FormulaLine] = Field(min_length=1, max_length=MAX_FORMULA_LINES)

    @field_validator("name")
    @classmethod
    def _clean_formula_name(cls, value: str) -> str:
        """A formula's name is clean like an ingredient's (NFC, no character a reader cannot
        see): it names the stored formula and heads every report."""
        cleaned = clean_name(value, None)
        if not cleaned:
            raise ValueError("name is empty")
        return cleaned

    @field_validator("ph", "batch_kg", mode="before")
    @classmethod
    def _numbers_only(cls, value: Any) -> Any:
        if value is not None and (isinstance(value, bool) or not isinstance(value, int | float)):
            raise ValueError(f"must be a number, got {value!r}")
        return value

    def step_phase_problems(self) -> list[tuple[int, str]]:
        """(step row from 1, phase) for each step naming a phase no ingredient line has."""
        used = {line.phase for line in self.ingredients if line.phase}
        return [(row, phase) for row, step in enumerate(self.process.steps, start=1)
                for phase in step.phases if phase not in used]


class ResolvedLine(BaseModel):
    """A formula line with its library ingredient attached."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    line_no: int  # 1-based position in the file's [[ingredients]] list
    given_name: str
    percent: float
    phase: str | None
    ingredient: IngredientRecord
    purpose: str | None = None

    @property
    def inci(self) -> str:
        return self.ingredient.inci_name


class ResolvedFormula(BaseModel):
    """A checked formula: every name resolved, frozen. Rules never touch the database."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    source: str  # file path or "stored:<name>"
    formula: FormulaFile
    lines: tuple[ResolvedLine, ...]
    content_hash: str

    @property
    def name(self) -> str:
        return self.formula.name
