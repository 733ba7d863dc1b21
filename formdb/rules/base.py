"""What a rule is: a code, a readable name, groups, a default severity, options, and one check.

A rule's class docstring is its documentation, in a fixed shape that ``formdb rules`` prints and a
test enforces: a one-line summary, then the sections ``Flags:``, ``Why:``, ``Fails:``,
``Passes:`` and ``Options:`` (each starting a line, in that order).
"""

from __future__ import annotations

import inspect
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.suggest import did_you_mean
from formdb.schemas.vocab import Severity

DOC_SECTIONS: tuple[str, ...] = ("Flags", "Why", "Fails", "Passes", "Options")
_SECTION_RE = re.compile(rf"^({'|'.join(DOC_SECTIONS)}):\s*", re.MULTILINE)


@dataclass(frozen=True)
class Option:
    """A rule option: its type, default, what it means, and (for text) the allowed values."""

    type: type
    default: Any
    description: str
    choices: tuple[str, ...] | None = None
    minimum: float | None = None
    maximum: float | None = None  # every number option has a realistic range
    # (tests/rules/test_option_bounds.py checks every registered number option has both)

    def parse(self, value: Any, where: str) -> Any:
        """The value checked against the option's type; ValueError naming ``where`` otherwise."""
        kind = self.type
        if kind is float and isinstance(value, int) and not isinstance(value, bool):
            value = float(value)
        if kind is not float and kind is not int and kind is not bool and kind is not str:
            raise TypeError(f"{where}: unsupported option type {kind!r}")
        if isinstance(value, bool) != (kind is bool) or not isinstance(value, kind):
            raise ValueError(f"{where}: expected {kind.__name__}, got {value!r}")
        if self.choices is not None and str(value) not in self.choices:
            raise ValueError(f"{where}: {value!r} is not one of {', '.join(self.choices)}"
                             f"{did_you_mean(str(value), self.choices)}")
        if isinstance(value, float) and not math.isfinite(value):
            raise ValueError(f"{where}: must be a finite number, got {value!r}")
        if self.minimum is not None and isinstance(value, int | float) and value < self.minimum:
            raise ValueError(f"{where}: must be at least {self.minimum}, got {value!r}")
        if self.maximum is not None and isinstance(value, int | float) and value > self.maximum:
            raise ValueError(f"{where}: must be at most {self.maximum}, got {value!r}")
        return value


class Rule:
    """Base of every rule; subclasses set the class attributes and implement ``check``."""

    code: ClassVar[str]
    name: ClassVar[str]
    groups: ClassVar[tuple[str, ...]]
    default_severity: ClassVar[Severity]
    options: ClassVar[Mapping[str, Option]] = {}
    # the product kinds (facts.kind) the rule judges; None: every kind
    kinds: ClassVar[frozenset[str] | None] = None

    def applies_to(self, facts: FormulaFacts) -> bool:
        """Whether the rule judges a formula of this kind of product."""
        return self.kinds is None or facts.kind is None or facts.kind.kind in self.kinds

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        raise NotImplementedError

    def default_options(self) -> dict[str, Any]:
        return {key: opt.default for key, opt in self.options.items()}

    def finding(self, severity: Severity, message: str, ingredients: Sequence[str] = (),
                values: Mapping[str, float | str | None] | None = None,
                advice: str | None = None) -> Finding:
        """A finding of this rule (its code and name filled in)."""
        return Finding(rule=self.code, name=self.name, severity=severity, message=message,
                       ingredients=tuple(dict.fromkeys(ingredients)), values=dict(values or {}),
                       advice=advice)


@dataclass(frozen=True)
class RuleDoc:
    """A rule's documentation split into its summary and its sections."""

    summary: str
    sections: dict[str, str]

    def missing(self) -> tuple[str, ...]:
        return tuple(s for s in DOC_SECTIONS if not self.sections.get(s))


def rule_doc(rule: Rule | type[Rule]) -> RuleDoc:
    """Split a rule's docstring into the summary and the ``Flags:``... ``Options:`` sections."""
    text = inspect.cleandoc((type(rule) if isinstance(rule, Rule) else rule).__doc__ or "")
    parts = _SECTION_RE.split(text)
    summary = " ".join(parts[0].split())
    sections: dict[str, str] = {}
    for title, body in zip(parts[1::2], parts[2::2], strict=True):
        lines = [line.strip() for line in body.strip().splitlines()]
        sections[title] = "\n".join(lines).strip()
    return RuleDoc(summary=summary, sections=sections)
