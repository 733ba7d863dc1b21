"""The ingredient table's columns, and turning one cell of text into a value (and back).

One vocabulary serves three doors: import files, ``ingredient add/edit --set field=value`` and
export. A numeric cell is in the property's canonical unit (``IngredientProperties.unit_of``) or
carries its own unit, converted with pint; a unit of the wrong dimension is refused.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Sequence
from enum import StrEnum
from functools import cache, lru_cache
from typing import TYPE_CHECKING, Any, get_args

import annotated_types as at

from formdb.schemas.cas import cas_check_digit, cas_is_valid
from formdb.schemas.cells import format_number
from formdb.schemas.ingredient import PROPERTY_NAMES, IngredientProperties
from formdb.schemas.suggest import closest
from formdb.schemas.vocab import COMPAT_CLASSES, Role, norm_token

if TYPE_CHECKING:  # pint (and rapidfuzz) load only when a unit or a suggestion is needed
    import pint

NAME_COLUMN = "inci_name"
LIST_FIELDS = ("synonyms", "cas", "roles", "classes")
SHARED_SOURCE = "source"
LIST_SEPARATOR = ";"

# canonical unit text -> the pint expression it means; units absent here take plain numbers only
_PINT_UNITS = {"g/mL": "g/mL", "% w/w": "percent", "g/mol": "g/mol", "mPa·s": "mPa*s"}
# ASCII digits only: Python's \d and float() also take Arabic-Indic or fullwidth digits
_NUMBER_AND_UNIT = re.compile(r"^([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*)$",
                              re.ASCII)
_DECIMAL_COMMA = re.compile(r"^[-+]?\d+,\d+", re.ASCII)
_TRUE = {"yes", "y", "true", "t", "1"}
_FALSE = {"no", "n", "false", "f", "0"}


class FieldProblem(ValueError):
    """One cell that cannot be read; the message is a complete sentence without location."""


@cache
def _export_columns() -> tuple[str, ...]:
    columns = [NAME_COLUMN, *LIST_FIELDS]
    for prop in PROPERTY_NAMES:
        columns += [prop, f"{prop}_source", f"{prop}_note"]
    return tuple(columns)


def export_columns() -> list[str]:
    """The columns of an exported table, in order; import reads exactly these back."""
    return list(_export_columns())  # built once: every imported row asks for them


KNOWN_COLUMNS: frozenset[str] = frozenset([*export_columns(), SHARED_SOURCE])
EDITABLE_FIELDS: tuple[str, ...] = (*LIST_FIELDS, *PROPERTY_NAMES)


def normalise_column(header: str) -> str:
    """``INCI Name`` and ``inci-name`` are both ``inci_name``."""
    return "_".join(header.replace("-", " ").split()).casefold()


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """'; did you mean X?' for the closest choice, or '' when nothing is close."""
    best = closest(word, choices)
    return f"; did you mean {best!r}?" if best is not None else ""


@lru_cache(maxsize=1 << 12)  # vocabulary words, asked for every cell of an import
def _loose(text: str) -> str:
    """Vocabulary words compared without case, spaces, hyphens or underscores."""
    return norm_token(text).replace("-", "").replace(" ", "")


def _choose(text: str, choices: Iterable[str]) -> str | None:
    token = _loose(text)
    return next((c for c in choices if _loose(c) == token), None)


@cache
def _values(enum_cls: type[StrEnum]) -> tuple[str, ...]:
    return tuple(m.value for m in enum_cls)


@cache
def property_kind(prop: str) -> tuple[str, type[StrEnum] | None]:
    """('float' | 'int' | 'bool' | 'choice', the enum class for a choice)."""
    annotation = IngredientProperties.model_fields[prop].annotation
    base = next(a for a in get_args(annotation) if a is not type(None))
    if isinstance(base, type) and issubclass(base, StrEnum):
        return "choice", base
    return {float: "float", int: "int", bool: "bool"}[base], None


@cache
def _bounds(prop: str) -> tuple[float | None, bool, float | None, bool]:
    low: Any = None
    high: Any = None
    low_open = high_open = False
    for meta in IngredientProperties.model_fields[prop].metadata:
        if isinstance(meta, at.Ge):
            low = meta.ge
        elif isinstance(meta, at.Gt):
            low, low_open = meta.gt, True
        elif isinstance(meta, at.Le):
            high = meta.le
        elif isinstance(meta, at.Lt):
            high, high_open = meta.lt, True
    return low, low_open, high, high_open


def range_text(prop: str) -> str:
    low, low_open, high, high_open = _bounds(prop)
    unit = IngredientProperties.unit_of(prop)
    unit = f" {unit}" if unit and unit != "pH" else ""
    lower = f"above {_num(low)}" if low_open else f"at least {_num(low)}"
    upper = f"below {_num(high)}" if high_open else f"at most {_num(high)}"
    return f"{lower} and {upper}{unit}"


def _num(value: float | None) -> str:
    return "?" if value is None else format_number(value)


@cache
def _units() -> pint.UnitRegistry[Any]:
    import pint

    return pint.UnitRegistry(preprocessors=[
        lambda s: s.replace("·", "*").replace("³", "**3").replace("²", "**2"),
        lambda s: re.sub(r"(?<=[A-Za-z])(\d)", r"**\1", s),  # m3 -> m**3
    ])


# what a unit may be written with: ASCII unit words, digits, operators, %, the · ³ ² pint reads
_UNIT_TEXT = re.compile(r"[A-Za-z0-9/*^.()%·³² -]+")


def _convert(prop: str, text: str, number: float, unit_text: str) -> float:
    canonical = IngredientProperties.unit_of(prop)
    expected = (f"a number in {canonical}" if canonical not in ("", "pH")
                else "a plain number without a unit")
    given = unit_text.replace("w/w", "").replace("%", " percent ").strip() or "percent"
    if norm_token(unit_text) == norm_token(canonical):
        return number
    target = _PINT_UNITS.get(canonical)
    if target is None:
        raise FieldProblem(f"{text!r} carries the unit {unit_text!r}, but {prop} takes {expected}")
    if not _UNIT_TEXT.fullmatch(unit_text):  # pint's parser is for unit words, not any text
        raise FieldProblem(f"{text!r} has a unit formdb does not know ({unit_text!r}); "
                           f"{prop} takes {expected}")
    registry = _units()
    import pint

    try:
        converted = registry.Quantity(number, given).to(target).magnitude
    except pint.DimensionalityError:
        raise FieldProblem(f"{text!r} has the wrong kind of unit for {prop}: {unit_text!r} "
                           f"cannot be converted to {canonical}; {prop} takes {expected}") from None
    except Exception:  # pint's parser of untrusted text: asserts, token errors, ... all mean
        # the same to the person who typed the cell: formdb cannot read that unit
        raise FieldProblem(f"{text!r} has a unit formdb does not know ({unit_text!r}); "
                           f"{prop} takes {expected}") from None
    return float(f"{float(converted):.12g}")  # 850 kg/m3 is 0.85, not 0.8500000000000002


def _parse_number(prop: str, text: str) -> float:
    if _DECIMAL_COMMA.match(text):
        raise FieldProblem(f"{text!r} is not a number (write a decimal point, not a comma); "
                           f"{prop} takes a number {range_text(prop)}")
    match = _NUMBER_AND_UNIT.match(text)
    if not match:
        raise FieldProblem(f"{text!r} is not a number; {prop} takes a number "
                           f"{range_text(prop)}")
    number = float(match.group(1))
    if not math.isfinite(number):  # pragma: no cover - the pattern admits no inf/nan
        raise FieldProblem(f"{text!r} is not a finite number")
    unit_text = match.group(2).strip()
    return _convert(prop, text, number, unit_text) if unit_text else number


def _check_range(prop: str, value: float) -> None:
    low, low_open, high, high_open = _bounds(prop)
    too_low = low is not None and (value <= low if low_open else value < low)
    too_high = high is not None and (value >= high if high_open else value > high)
    if too_low or too_high:
        raise FieldProblem(f"{prop} {format_number(value)} is out of range: it must be "
                           f"{range_text(prop)}")


def parse_property(prop: str, text: str) -> Any:
    """The value of ``prop`` written as ``text`` (never empty), or FieldProblem saying why not."""
    kind, enum_cls = property_kind(prop)
    if kind == "choice":
        assert enum_cls is not None
        found = _choose(text, _values(enum_cls))
        if found is not None:
            return enum_cls(found)
        choices = list(_values(enum_cls))
        raise FieldProblem(f"{text!r} is not a known {prop.replace('_', ' ')}"
                           f"{did_you_mean(text, choices)} (choose from {', '.join(choices)})")
    if kind == "bool":
        token = norm_token(text)
        if token in _TRUE:
            return True
        if token in _FALSE:
            return False
        raise FieldProblem(f"{text!r} is not yes or no; {prop} takes yes or no")
    value = _parse_number(prop, text)
    if kind == "int":
        if not float(value).is_integer():
            raise FieldProblem(f"{text!r} is not a whole number; {prop} takes a whole number")
        value = int(value)
    _check_range(prop, value)
    return value


def split_list(text: str) -> list[str]:
    return [item.strip() for item in text.split(LIST_SEPARATOR) if item.strip()]


def join_list(items: Sequence[str]) -> str:
    return f"{LIST_SEPARATOR} ".join(items)


def parse_list_item(column: str, item: str) -> str:
    """One ';'-separated entry of a list column in its stored form, or FieldProblem."""
    if column == "cas":
        if cas_is_valid(item):
            return item
        expected = cas_check_digit(item)
        if expected is None:
            raise FieldProblem(f"{item!r} is not a CAS number (the shape is 2-7 digits, "
                               "2 digits, 1 check digit, such as 7732-18-5)")
        raise FieldProblem(f"CAS number {item!r} fails its check digit (the digits before it "
                           f"give {expected}, not {item[-1]})")
    if column == "roles":
        found = _choose(item, _values(Role))
        if found is not None:
            return found
        roles = list(_values(Role))
        raise FieldProblem(f"{item!r} is not a known role{did_you_mean(item, roles)}"
                           f" (choose from {', '.join(roles)})")
    if column == "classes":
        found = _choose(item, COMPAT_CLASSES)
        if found is not None:
            return found
        raise FieldProblem(f"{item!r} is not a known compatibility class"
                           f"{did_you_mean(item, COMPAT_CLASSES)} "
                           f"(choose from {', '.join(COMPAT_CLASSES)})")
    return " ".join(item.split())  # synonyms: spacing normalised like an INCI name
