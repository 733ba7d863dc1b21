"""Profiles: which rules run, at what severity, with which options (TOML, validated on load).

A profile file::

    name = "strict"
    version = "1"
    description = "For a regulatory reviewer"
    extends = "default"            # optional: start from another profile (by name or path)
    select = ["all"]               # rule codes, rule names, group names, or "all"
    exclude = []                   # the same, taken out again
    [facts]                        # assumptions behind the facts (FactsSettings)
    droplet_diameter_um = 5.0
    [rules.HLB01]                  # per rule: "severity" sets every finding's severity ...
    tolerance = 0.5                # ... every other key is one of the rule's options

The packaged profiles live in ``seed_data/profiles/``; a user may pass a path instead of a name.
Any unknown key, rule, group or option is a ConfigError with a "did you mean" hint.
"""

from __future__ import annotations

import hashlib
import json
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from formdb.errors import ConfigError
from formdb.resources import seed_data_dir
from formdb.rules.base import Rule
from formdb.rules.registry import RuleRegistry, default_registry
from formdb.schemas.bounds import (
    MAX_TOML_BYTES,
    TomlTooLarge,
    UnreadableInput,
    load_toml,
    read_input,
    toml_text,
)
from formdb.schemas.result import FactsSettings
from formdb.schemas.suggest import did_you_mean
from formdb.schemas.vocab import Severity

PROFILE_KEYS = ("name", "version", "description", "extends", "select", "exclude", "facts",
                "rules")
# set from rule options by ``facts_settings``, never in [facts]
FROM_RULE_OPTIONS = {"hlb_tolerance": "[rules.HLB01] tolerance",
                     "mos_threshold": "[rules.MOS01] threshold",
                     "label_jurisdiction": "[rules.ALG01] jurisdiction"}
FACTS_KEYS = tuple(k for k in FactsSettings.model_fields if k not in FROM_RULE_OPTIONS)
ALL = "all"


class RuleSettings(BaseModel):
    """A profile's settings for one rule: a severity override and option values."""

    model_config = ConfigDict(defer_build=True, frozen=True, extra="forbid")

    severity: Severity | None = None
    options: dict[str, Any] = {}


class Profile(BaseModel):
    """A validated profile (every rule code, group and option checked against the registry)."""

    model_config = ConfigDict(defer_build=True, frozen=True, extra="forbid")

    name: str
    version: str
    description: str = ""
    select: tuple[str, ...] = (ALL,)
    exclude: tuple[str, ...] = ()
    facts: FactsSettings = Field(default_factory=FactsSettings)
    rules: dict[str, RuleSettings] = {}
    path: str | None = None

    @model_validator(mode="after")
    def _known_to_the_registry(self) -> Profile:
        registry = default_registry()
        where = f"profile {self.path or self.name!r}"
        for key, words in (("select", self.select), ("exclude", self.exclude)):
            for word in words:
                _check_selector(registry, word, f"{where}, key {key}")
        for code, settings in self.rules.items():
            rule = registry.find(code)
            if rule is None:
                raise ConfigError(f"{where}, [rules.{code}]: unknown rule"
                                  f"{did_you_mean(code, registry.codes())}",
                                  hint="`formdb rules` lists the rules")
            for option, value in settings.options.items():
                _parse_option(rule, option, value, f"{where}, [rules.{code}]")
        return self

    @property
    def content_hash(self) -> str:
        """SHA-256 of what the profile does (every setting after ``extends`` is resolved, not
        where it came from): two profiles with this hash check a formula the same way."""
        text = json.dumps(self.model_dump(mode="json", exclude={"path"}), sort_keys=True,
                          separators=(",", ":"), ensure_ascii=False)
        return hashlib.sha256(text.encode("utf-8")).hexdigest()

    @property
    def origin(self) -> str:
        """"packaged" for a profile shipped with formdb, else "file PATH"."""
        if self.path is None:
            return "given in code"
        path = Path(self.path)
        if path.parent.resolve() == profiles_dir().resolve():
            return "packaged"
        return f"{_FILE_ORIGIN}{path.resolve()}"

    def _settings(self, rule: Rule) -> RuleSettings | None:
        for code, settings in self.rules.items():
            if code.casefold() in (rule.code.casefold(), rule.name.casefold()):
                return settings
        return None

    def is_enabled(self, rule: Rule) -> bool:
        def matches(word: str) -> bool:
            token = word.casefold()
            return token in (ALL, rule.code.casefold(), rule.name.casefold()) or \
                token in (g.casefold() for g in rule.groups)
        return any(matches(w) for w in self.select) and not any(matches(w) for w in self.exclude)

    def enabled_rules(self, registry: RuleRegistry | None = None) -> tuple[Rule, ...]:
        registry = registry or default_registry()
        return tuple(rule for rule in registry.rules() if self.is_enabled(rule))

    def options_for(self, rule: Rule) -> dict[str, Any]:
        """The rule's option values: its defaults, overridden by this profile."""
        values = rule.default_options()
        settings = self._settings(rule)
        if settings is not None:
            for option, value in settings.options.items():
                values[option] = _parse_option(rule, option, value, f"profile {self.name!r}")
        return values

    def severity_for(self, rule: Rule) -> Severity | None:
        settings = self._settings(rule)
        return settings.severity if settings else None

    def facts_settings(self, registry: RuleRegistry | None = None) -> FactsSettings:
        """The facts' assumptions, with the HLB band taken from HLB01's ``tolerance`` and the
        margin-of-safety threshold from MOS01's ``threshold``."""
        registry = registry or default_registry()
        update: dict[str, float | str] = {}
        hlb_rule = registry.find("HLB01")
        if hlb_rule is not None:
            update["hlb_tolerance"] = float(self.options_for(hlb_rule)["tolerance"])
        mos_rule = registry.find("MOS01")
        if mos_rule is not None:
            update["mos_threshold"] = float(self.options_for(mos_rule)["threshold"])
        label_rule = registry.find("ALG01")
        if label_rule is not None:
            update["label_jurisdiction"] = str(self.options_for(label_rule)["jurisdiction"])
        # validated, not copied: a rule option must keep the bounds the facts declare
        return (FactsSettings.model_validate({**self.facts.model_dump(), **update})
                if update else self.facts)


def _check_selector(registry: RuleRegistry, word: str, where: str) -> None:
    if not isinstance(word, str):
        raise ConfigError(f"{where}: {word!r} is not a rule code or group name")
    if word.casefold() == ALL or word in registry:
        return
    if word.casefold() in (g.casefold() for g in registry.groups()):
        return
    choices = [ALL, *registry.codes(), *registry.groups()]
    raise ConfigError(f"{where}: {word!r} is not a rule code, rule name or group"
                      f"{did_you_mean(word, choices)}", hint="`formdb rules` lists them")


def _parse_option(rule: Rule, option: str, value: Any, where: str) -> Any:
    spec = rule.options.get(option)
    if spec is None:
        known = ", ".join(rule.options) or "none"
        raise ConfigError(f"{where}: {rule.code} has no option {option!r}"
                          f"{did_you_mean(option, [*rule.options, 'severity'])}",
                          hint=f"{rule.code} options: {known}")
    try:
        return spec.parse(value, f"{where}, option {option}")
    except ValueError as exc:
        raise ConfigError(str(exc)) from None


# ----- loading -------------------------------------------------------------------------------

def profiles_dir() -> Path:
    return seed_data_dir() / "profiles"


def known_profiles() -> tuple[str, ...]:
    """Names of the packaged profiles."""
    return tuple(sorted(p.stem for p in profiles_dir().glob("*.toml")))


def _locate(spec: str | Path) -> Path:
    try:
        return _find(spec)
    except OSError as exc:  # a name too long for the file system (is_file and is_dir raise)
        raise ConfigError(f"profile file {spec}: cannot be read ({exc.strerror or exc})",
                          hint=_path_hint()) from None


def _path_hint() -> str:
    return f"give a path to a TOML file or one of: {', '.join(known_profiles())}"


def _find(spec: str | Path) -> Path:
    text = str(spec)
    path = Path(text).expanduser()
    looks_like_path = isinstance(spec, Path) or text.endswith(".toml") or "/" in text \
        or "\\" in text
    if looks_like_path:
        if path.is_dir():
            raise ConfigError(f"profile file {text} is a folder, not a TOML file",
                              hint=_path_hint())
        if not path.is_file():
            raise ConfigError(f"profile file {text} does not exist",
                              hint=_path_hint())
        return path
    packaged = profiles_dir() / f"{text}.toml"
    if packaged.is_file():
        return packaged
    known = known_profiles()
    raise ConfigError(f"unknown profile {text!r}{did_you_mean(text, known)}",
                      hint=f"use one of: {', '.join(known)}, or a path to a profile file")


def _read(path: Path) -> dict[str, Any]:
    try:
        if path.stat().st_size > MAX_TOML_BYTES:
            raise ConfigError(f"profile {path}: {path.stat().st_size:,} bytes is more than a "
                              f"profile file formdb reads ({MAX_TOML_BYTES:,})")
        raw = read_input(path, MAX_TOML_BYTES)
        try:
            text = toml_text(raw)
        except UnicodeError as exc:
            raise ConfigError(f"profile {path}: {exc}",
                              hint="save the profile as UTF-8 TOML, without a byte-order mark"
                              ) from None
        return load_toml(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"profile {path}: not valid TOML ({exc})") from None
    except (TomlTooLarge, UnreadableInput) as exc:
        raise ConfigError(f"profile {path}: {exc}") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(f"profile {path}: cannot be read ({exc})") from None


def _merge(parent: dict[str, Any], child: Mapping[str, Any]) -> dict[str, Any]:
    merged = dict(parent)
    for key, value in child.items():
        if key in ("facts", "rules") and isinstance(value, Mapping):
            table = dict(merged.get(key) or {})
            for sub, sub_value in value.items():
                if key == "rules" and isinstance(sub_value, Mapping):
                    table[sub] = {**dict(table.get(sub) or {}), **sub_value}
                else:
                    table[sub] = sub_value
            merged[key] = table
        else:
            merged[key] = value
    return merged


def _raw(spec: str | Path, chain: tuple[str, ...]) -> tuple[dict[str, Any], Path]:
    path = _locate(spec)
    key = str(path.resolve())
    if key in chain:
        raise ConfigError(f"profile {path}: 'extends' loops back to itself")
    data = _read(path)
    for name in data:
        if name not in PROFILE_KEYS:
            raise ConfigError(f"profile {path}: unknown key {name!r}"
                              f"{did_you_mean(name, PROFILE_KEYS)}",
                              hint=f"profile keys: {', '.join(PROFILE_KEYS)}")
    parent_spec = data.get("extends")
    if parent_spec is None:
        return data, path
    if not isinstance(parent_spec, str):
        raise ConfigError(f"profile {path}, key extends: must be a profile name or path")
    if "/" in parent_spec and not Path(parent_spec).is_absolute():
        parent_spec = str(path.parent / parent_spec)
    parent, _ = _raw(parent_spec, (*chain, key))
    child = {k: v for k, v in data.items() if k != "extends"}
    for inherited in ("name", "version", "description"):
        parent.pop(inherited, None)
    return _merge(parent, child), path


def profile_from_mapping(data: Mapping[str, Any], where: str) -> Profile:
    """Build and validate a profile from a parsed TOML mapping (``where`` names it in errors)."""
    label = f"profile {where}"
    for key in ("name", "version"):
        if key not in data:
            raise ConfigError(f"{label}: required key {key!r} is missing")
    name, version = data["name"], data["version"]
    if not isinstance(name, str) or not name.strip():
        raise ConfigError(f"{label}, key name: must be a non-empty string")
    if isinstance(version, bool) or not isinstance(version, str | int | float):
        raise ConfigError(f"{label}, key version: must be a string such as \"1\"")
    description = data.get("description", "")
    if not isinstance(description, str):
        raise ConfigError(f"{label}, key description: must be a string")
    selectors: dict[str, tuple[str, ...]] = {}
    for key, default in (("select", (ALL,)), ("exclude", ())):
        value = data.get(key, list(default))
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise ConfigError(f"{label}, key {key}: must be a list of rule codes or groups")
        selectors[key] = tuple(value)
    return Profile(name=name.strip(), version=str(version), description=description.strip(),
                   select=selectors["select"], exclude=selectors["exclude"],
                   facts=_facts(data.get("facts") or {}, label),
                   rules=_rule_tables(data.get("rules") or {}, label), path=where)


def _facts(table: Any, label: str) -> FactsSettings:
    if not isinstance(table, Mapping):
        raise ConfigError(f"{label}, [facts]: must be a table")
    for key in table:
        if key not in FACTS_KEYS:
            extra = f" (set it as {FROM_RULE_OPTIONS[key]})" if key in FROM_RULE_OPTIONS else ""
            raise ConfigError(f"{label}, [facts]: unknown key {key!r}"
                              f"{extra or did_you_mean(key, FACTS_KEYS)}",
                              hint=f"[facts] keys: {', '.join(FACTS_KEYS)}")
    try:
        return FactsSettings(**dict(table))
    except ValidationError as exc:
        err = exc.errors()[0]
        field = ".".join(str(p) for p in err.get("loc", ()))
        raise ConfigError(f"{label}, [facts] key {field}: {err.get('msg')}") from None


def _rule_tables(table: Any, label: str) -> dict[str, RuleSettings]:
    if not isinstance(table, Mapping):
        raise ConfigError(f"{label}, [rules]: must be a table of rule codes")
    registry = default_registry()
    out: dict[str, RuleSettings] = {}
    for code, body in table.items():
        rule = registry.find(code)
        if rule is None:
            raise ConfigError(f"{label}, [rules.{code}]: unknown rule"
                              f"{did_you_mean(code, registry.codes())}",
                              hint="`formdb rules` lists the rules")
        if not isinstance(body, Mapping):
            raise ConfigError(f"{label}, [rules.{code}]: must be a table of options")
        severity = None
        options: dict[str, Any] = {}
        for key, value in body.items():
            if key == "severity":
                try:
                    severity = Severity(str(value).strip().casefold())
                except ValueError:
                    raise ConfigError(
                        f"{label}, [rules.{code}] key severity: {value!r} is not one of "
                        f"{', '.join(s.value for s in Severity)}"
                        f"{did_you_mean(str(value), [s.value for s in Severity])}") from None
            else:
                options[key] = _parse_option(rule, key, value, f"{label}, [rules.{code}]")
        out[rule.code] = RuleSettings(severity=severity, options=options)
    return out


_FILE_ORIGIN = "file "


def recorded_profile(name: str, origin: str | None) -> str | Path:
    """Where to load a profile a record names by its name and ``origin`` (as ``Profile.origin``
    gave it): the file's path for a profile file, else the packaged profile's name."""
    if origin is not None and origin.startswith(_FILE_ORIGIN):
        return Path(origin.removeprefix(_FILE_ORIGIN))
    return name


def chosen_profile(profile: Profile | str | Path | None, default: str = "default") -> Profile:
    """The profile a caller gave: as it is, loaded by name or path, or ``default`` if none."""
    return profile if isinstance(profile, Profile) else load_profile(profile or default)


def load_profile(spec: str | Path | None = None) -> Profile:
    """A packaged profile by name ("default", "strict") or a profile file by path."""
    data, path = _raw(spec or "default", ())
    packaged = path.parent.resolve() == profiles_dir().resolve()
    claimed = str(data.get("name", "")).strip()
    if not packaged and claimed.casefold() in {n.casefold() for n in known_profiles()}:
        raise ConfigError(f"profile {path}, key name: {claimed!r} is the name of a packaged "
                          "profile; a profile file must have a name of its own",
                          hint="rename it, e.g. name = \"" + claimed + "-local\"")
    return profile_from_mapping(data, str(path))
