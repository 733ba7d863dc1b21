"""The registry of rules: one entry per code, duplicates rejected.

Rule modules register themselves with ``@register`` on import; ``default_registry()`` imports
every module of the ``formdb.rules`` package once (so a new rule file needs no other edit) and
returns the shared registry.
"""

from __future__ import annotations

import importlib
import pkgutil

from formdb.errors import ConfigError
from formdb.rules.base import Rule, did_you_mean

# modules of formdb.rules that hold machinery, not rules
_MACHINERY = frozenset({"base", "registry", "profiles", "engine", "facts", "docs",
                        "exposure_sheet", "allergen_table",
                        "composition"})


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


def builtin_rule_modules() -> tuple[str, ...]:
    """The modules of formdb.rules that hold rules (one rule or a small family each)."""
    package = importlib.import_module("formdb.rules")
    return tuple(sorted(f"formdb.rules.{info.name}" for info in pkgutil.iter_modules(
        package.__path__) if info.name not in _MACHINERY and not info.name.startswith("_")))


def default_registry() -> RuleRegistry:
    """The shared registry with every built-in rule loaded."""
    global _loaded
    if not _loaded:
        for module in builtin_rule_modules():
            importlib.import_module(module)
        _loaded = True
    return REGISTRY
