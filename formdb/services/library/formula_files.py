"""Reading a formula file (TOML) into a validated ``FormulaFile``, with one clear line per problem.

Every rejection names the file and the key (``ingredients[3].percent``) or the TOML line, so a
formulator can go straight to the mistake.
"""

from __future__ import annotations

import hashlib
import tomllib
from pathlib import Path

from pydantic import ValidationError

from formdb.errors import InvalidData
from formdb.schemas.bounds import (
    MAX_TOML_BYTES,
    TomlTooLarge,
    UnreadableInput,
    load_toml,
    read_input,
    toml_text,
)
from formdb.schemas.formula import FormulaFile

MAX_FORMULA_BYTES = MAX_TOML_BYTES


def content_hash(text: str) -> str:
    """SHA-256 of the formula text as stored: what a sign-off is pinned to."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _where(loc: tuple[int | str, ...]) -> str:
    """('ingredients', 2, 'percent') -> 'ingredients row 3, key percent' (rows count from 1)."""
    parts: list[str] = []
    i = 0
    while i < len(loc):
        item = loc[i]
        if item == "ingredients" and i + 1 < len(loc) and isinstance(loc[i + 1], int):
            parts.append(f"ingredients row {int(loc[i + 1]) + 1}")
            i += 2
            continue
        if item == "process" and loc[i + 1:i + 2] == ("steps",) and i + 2 < len(loc) \
                and isinstance(loc[i + 2], int):
            parts.append(f"process.steps row {int(loc[i + 2]) + 1}")
            i += 3
            continue
        parts.append(f"key {item}")
        i += 1
    return ", ".join(parts) if parts else "top level"


def validation_problems(label: str, exc: ValidationError) -> list[str]:
    problems = []
    for err in exc.errors():
        loc = tuple(err.get("loc", ()))
        msg = err.get("msg", "invalid value")
        if err.get("type") == "extra_forbidden":
            msg = "unknown key (not part of the formula format)"
        elif err.get("type") == "missing":
            msg = "required key is missing"
        msg = msg.removeprefix("Value error, ")
        problems.append(f"{label}, {_where(loc)}: {msg}")
    return problems


def parse_formula_text(text: str, label: str) -> FormulaFile:
    """Validate TOML text into a FormulaFile; ``label`` (a path) starts every error line."""
    try:
        data = load_toml(text)
    except tomllib.TOMLDecodeError as exc:
        raise InvalidData(f"{label}: not a valid TOML formula file ({exc})",
                          hint="fix the TOML syntax at the line named") from None
    except TomlTooLarge as exc:
        raise InvalidData(f"{label}: {exc}", hint="a formula file is a flat TOML table with "
                          "[[ingredients]] entries, as in the README") from None
    try:
        formula = FormulaFile.model_validate(data)
    except ValidationError as exc:
        raise InvalidData.of(validation_problems(label, exc),
                             hint="correct the formula file and check again") from None
    unused = formula.step_phase_problems()
    if unused:
        raise InvalidData.of(
            [f"{label}, process.steps row {row}, key phases: phase {phase!r} has no "
             "ingredient line" for row, phase in unused],
            hint="name only phases that ingredient lines use (their phase key)")
    return formula


def read_formula_file(path: Path) -> tuple[FormulaFile, str]:
    """Read and validate a formula file; returns the model and the exact text read."""
    label = str(path)
    try:
        if path.is_dir():
            raise InvalidData(f"{label}: is a folder, not a formula file")
        raw = read_input(path, MAX_FORMULA_BYTES)
    except UnreadableInput as exc:
        raise InvalidData(f"{label}: {exc}") from None
    except FileNotFoundError:
        raise InvalidData(f"{label}: no such file", hint="check the path") from None
    except PermissionError:
        raise InvalidData(f"{label}: cannot be read (permission denied)") from None
    except OSError as exc:
        raise InvalidData(f"{label}: cannot be read ({exc.strerror or exc})") from None
    if len(raw) > MAX_FORMULA_BYTES:
        raise InvalidData(f"{label}: {len(raw)} bytes is too large for a formula file")
    if not raw.strip():
        raise InvalidData(f"{label}: the file is empty", hint="write a formula as in the README")
    try:
        text = toml_text(raw)
    except UnicodeError as exc:
        raise InvalidData(f"{label}: {exc}",
                          hint="save the formula as UTF-8 TOML, without a byte-order mark"
                          ) from None
    return parse_formula_text(text, label), text
