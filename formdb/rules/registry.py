"""The registry of rules: one entry per code, duplicates rejected.

Rule modules register themselves with ``@register`` on import; ``default_registry()`` imports
every module of the ``formdb.rules`` package once (so a new rule file needs no other edit) and
returns the shared registry. The package holds the rules and their machinery only (the facts
live in ``formdb.facts``), so importing the machinery modules too is harmless: they register
nothing.
"""

from __future__ import annotations

import importlib
import pkgutil

from formdb.errors import ConfigError
from formdb.rules.base import Rule
from formdb.schemas.suggest import did_you_mean


class RuleRegistry:
    """Rules by code. ``add`` rejects a second rule with a code or name already taken."""

    def __init__(self) -> None:
        self._rules: dict[str, Rule] = {}

    def add(self, rule_cls: type[Rule]) -> type[Rule]:
        """Register a rule class (usable as a decorator); ConfigError on a duplicate."""
        code = getattr(rule_cls, "code", None)
        if not isinstance(code, str) or not code:
            raise ConfigError(f"rule class {rule_cls.__name__} has no code")
        if code in self._rules:
            other = type(self._rules[code]).__name__
            raise ConfigError(f"rule code {code!r} of {rule_cls.__name__} is already taken by "
                              f"{other}", hint="give the new rule a code of its own")
        for rule in self._rules.values():
            if rule.name == rule_cls.name:
                raise ConfigError(f"rule name {rule_cls.name!r} of {code} is already taken by "
                                  f"{rule.code}", hint="give the new rule a name of its own")
        self._rules[code] = rule_cls()
        return rule_cls

    def get(self, code: str) -> Rule:
        """The rule with this code (or readable name); ConfigError with a 'did you mean' hint."""
        found = self.find(code)
        if found is None:
            choices = list(self._rules) + [r.name for r in self._rules.values()]
            raise ConfigError(f"unknown rule {code!r}{did_you_mean(code, choices)}",
                              hint="`formdb rules` lists the rules")
        return found

    def find(self, code: str) -> Rule | None:
        token = code.strip().casefold()
        for rule in self._rules.values():
            if rule.code.casefold() == token or rule.name.casefold() == token:
                return rule
        return None

    def rules(self) -> tuple[Rule, ...]:
        return tuple(self._rules[code] for code in sorted(self._rules))

    def codes(self) -> tuple[str, ...]:
        return tuple(sorted(self._rules))

    def groups(self) -> tuple[str, ...]:
        return tuple(sorted({g for rule in self._rules.values() for g in rule.groups}))

    def __contains__(self, code: object) -> bool:
        return isinstance(code, str) and self.find(code) is not None

    def __len__(self) -> int:
        return len(self._rules)


REGISTRY = RuleRegistry()
register = REGISTRY.add


_loaded = False


def default_registry() -> RuleRegistry:
    """The shared registry with every built-in rule loaded."""
    global _loaded
    if not _loaded:
        package = importlib.import_module("formdb.rules")
        for info in pkgutil.iter_modules(package.__path__):
            if not info.name.startswith("_"):
                importlib.import_module(f"formdb.rules.{info.name}")
        _loaded = True
    return REGISTRY
