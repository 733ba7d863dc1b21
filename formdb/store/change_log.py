"""Writing change-log entries, and reading the log written before entries were typed.

Every writer builds its rows here (``log_values`` for bulk ``append_rows``, ``log_entry`` for an
ORM row), so every entry has the same shape: the columns of ``ChangeLogEntry`` with ``form`` the
current canonical form and ``payload`` the JSON described in ``formdb.schemas.change_log``.

``legacy_payload`` turns one row of the old log (one row per field, values as the text of a
table cell) into a typed payload. Migration 0021 uses it once per old row; ``formdb audit verify``
uses it again to check that a migrated row's typed changes still say what its sealed text says.
It is frozen: the old log's text never changes, so neither may its reading.
"""

from __future__ import annotations

import json
import re
from collections.abc import Iterable, Mapping
from datetime import datetime
from enum import StrEnum
from functools import cache, lru_cache
from typing import Any, get_args

import orjson

from formdb.schemas.change_log import PAYLOAD_VERSION
from formdb.schemas.ingredient import PROPERTY_NAMES, IngredientProperties
from formdb.store.models import ChangeLogEntry

FORM = 2  # the canonical form of entries written now (formdb.store.sealing.FORMS)
LEGACY_FORM = 1  # entries migrated from the per-column log, sealed over their old text

Change = dict[str, Any]


def payload_text(changes: Iterable[Mapping[str, Any]] = (), *, via: str | None = None,
                 attempted: str | None = None, sealed: Mapping[str, Any] | None = None) -> str:
    """The payload JSON of one entry (keys in a fixed order, no spaces: it is sealed as is)."""
    body: dict[str, Any] = {"v": PAYLOAD_VERSION,
                            "changes": [c if type(c) is dict else dict(c) for c in changes]}
    if via is not None:
        body["via"] = via
    if attempted is not None:
        body["attempted"] = attempted
    if sealed is not None:
        body["sealed"] = dict(sealed)
    return _PAYLOAD_JSON.encode(body)


def value_json(value: Any) -> str:
    """One value as ``payload_text`` writes it inside an entry (texts, finite floats, whole
    numbers, booleans, None and lists of texts directly; anything else through its encoder)."""
    kind = type(value)
    if kind is str:
        return _escaped(value)
    if kind is float:
        text = float.__repr__(value)
        return text if text not in _NOT_FINITE else _PAYLOAD_JSON.encode(value)
    if value is None:
        return "null"
    if kind is bool:
        return "true" if value else "false"
    if kind is int:
        return int.__repr__(value)
    if (kind is list or kind is tuple) and all(type(v) is str for v in value):
        return "[" + ",".join(map(_escaped, value)) + "]"
    return _PAYLOAD_JSON.encode(value)


def float_json(value: float) -> orjson.Fragment:
    """A float as ``payload_text`` writes it (``repr``; json's NaN and Infinity), for orjson,
    which writes some floats otherwise (1e-05 as 0.00001)."""
    text = float.__repr__(value)  # value_json's own way, without its look at the type
    return orjson.Fragment(text if text not in _NOT_FINITE else _PAYLOAD_JSON.encode(value))


def new_change_json(field: str, new: Any, source: str | None = None,
                    note: str | None = None, *, listed: bool = False) -> str:
    """The text ``payload_text`` gives the change of a field that held nothing: the dict
    {"field", "old" (None, or [] when ``listed``), "new"[, "old_source": None, "new_source"]
    [, "old_note": None, "new_note"]}, written directly (an import adds tens of thousands)."""
    text = _new_change_head(field, listed) + value_json(new)
    if source is not None:
        text += _new_source_text(source)
    if note is not None:
        text += ',"old_note":null,"new_note":' + _escaped(note)
    return text + "}"


@lru_cache(maxsize=256)  # one per field
def _new_change_head(field: str, listed: bool) -> str:
    return '{"field":' + _escaped(field) + (',"old":[],"new":' if listed else ',"old":null,"new":')


@lru_cache(maxsize=4096)  # sources repeat over a table's rows
def _new_source_text(source: str) -> str:
    return ',"old_source":null,"new_source":' + _escaped(source)


def payload_of(change_texts: Iterable[str], *, via: str | None = None) -> str:
    """``payload_text(changes, via=via)`` from the changes' texts (``new_change_json``)."""
    text = _PAYLOAD_HEAD + ",".join(change_texts) + "]"
    return text + (',"via":' + _escaped(via) + "}" if via is not None else "}")


def _json_default(value: Any) -> Any:
    if isinstance(value, StrEnum):
        return value.value
    if hasattr(value, "isoformat"):  # dates in reference tables
        return value.isoformat()
    raise TypeError(f"{type(value).__name__} is not a change-log value")


# json.dumps(body, ensure_ascii=False, separators=(",", ":"), default=_json_default), its
# encoder made once
_PAYLOAD_JSON = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"), default=_json_default)
# a str as _PAYLOAD_JSON writes it (ensure_ascii=False: the same escaping function)
_escaped = json.encoder.encode_basestring
_NOT_FINITE = frozenset({"nan", "inf", "-inf"})
_PAYLOAD_HEAD = '{"v":' + str(PAYLOAD_VERSION) + ',"changes":['


def log_values(*, at: datetime, user: str, entity: str, entity_key: str,
               entity_version: int | None, action: str, changes: Iterable[Mapping[str, Any]] = (),
               reason: str | None = None, via: str | None = None,
               attempted: str | None = None, payload: str | None = None) -> dict[str, Any]:
    """One entry's column values, for ``formdb.store.sealing.append_rows``; ``payload`` is the
    payload's text when the caller wrote it already (``payload_of``), instead of ``changes``."""
    return {"at": at, "user": user, "entity": entity, "entity_key": entity_key[:200],
            "entity_version": entity_version, "action": action, "form": FORM,
            "payload": payload if payload is not None else
            payload_text(changes, via=via, attempted=attempted), "reason": reason}


def log_entry(**values: Any) -> ChangeLogEntry:
    """One entry as an ORM row (sealed when its session flushes); arguments as ``log_values``."""
    return ChangeLogEntry(**log_values(**values))


def changes_of(payload: str | None) -> list[Change]:
    """The field changes of a stored payload, as plain dicts (see schemas.change_log)."""
    if not payload:
        return []
    changes: list[Change] = json.loads(payload).get("changes", [])
    return changes


# --- the old log: one row per field, values as cell text -----------------------------------------

_ENTITY_TABLES = {"source": "sources", "limit": "limits", "incompatibility": "incompatibilities",
                  "soap pair": "soap_pairs", "exposure": "exposure", "toxicology": "toxicology",
                  "label threshold": "label_thresholds", "constituent": "mixture_constituents"}
_LIST_FIELDS = ("synonyms", "cas", "roles", "classes")
_PARTS = {"_source": "source", "_note": "note", "_evidence": "evidence"}


@cache
def _property_kind(prop: str) -> str:
    annotation = IngredientProperties.model_fields[prop].annotation
    base = next(a for a in get_args(annotation) if a is not type(None))
    if isinstance(base, type) and issubclass(base, StrEnum):
        return "text"
    return {float: "float", int: "int", bool: "bool"}[base]


def _yes(text: str) -> bool:
    return text.strip().casefold() in {"yes", "y", "true", "t", "1"}


def _number(text: str, kind: str) -> Any:
    try:
        number = float(text)
    except ValueError:
        return text  # not what formdb wrote; kept as the text it is
    return int(number) if kind == "int" and number.is_integer() else number


def _ingredient_change(field: str, old: str | None, new: str | None) -> Change:
    if field in _LIST_FIELDS:
        return {"field": field, "old": _items(old), "new": _items(new)}
    if field == "retired":
        return {"field": field, "old": None if old is None else _yes(old),
                "new": None if new is None else _yes(new)}
    for suffix, part in _PARTS.items():
        prop = field.removesuffix(suffix)
        if field.endswith(suffix) and prop in PROPERTY_NAMES:
            return {"field": prop, f"old_{part}": old, f"new_{part}": new}
    if field in PROPERTY_NAMES:
        kind = _property_kind(field)

        def typed(text: str | None) -> Any:
            if text is None:
                return None
            if kind == "bool":
                return _yes(text)
            return text if kind == "text" else _number(text, kind)

        return {"field": field, "old": typed(old), "new": typed(new)}
    return {"field": field, "old": old, "new": new}


def _share(side: str, text: str | None) -> dict[str, Any]:
    """A mixture constituent's share as the old log wrote it, as data."""
    match = re.fullmatch(r"\s*(\S+) % \((.*)\)\s*", text or "")
    if match is None:
        return {side: text, f"{side}_source": None}
    return {side: _number(match.group(1), "float"), f"{side}_source": match.group(2)}


def _items(text: str | None) -> list[str]:
    return [item.strip() for item in (text or "").split(";") if item.strip()]


@cache
def _column_kinds(table: str) -> dict[str, str]:
    from sqlalchemy import Boolean, Float, Integer

    columns = ChangeLogEntry.metadata.tables[table].columns
    kinds = {}
    for column in columns:
        kinds[column.name] = ("bool" if isinstance(column.type, Boolean) else
                              "int" if isinstance(column.type, Integer) else
                              "float" if isinstance(column.type, Float) else "text")
    return kinds


def _table_value(kind: str, text: str | None) -> Any:
    if text is None or kind == "text":
        return text
    if kind == "bool":
        return text == "True"
    return _number(text, kind)


def legacy_payload(entity: str, action: str, field: str | None, old_value: str | None,
                   new_value: str | None) -> str:
    """The typed payload of one old-log row, with that row's text kept under ``sealed``."""
    sealed = {"field": field, "old_value": old_value, "new_value": new_value}
    changes: list[Change] = []
    attempted = None
    if entity == "access" and action == "refused":
        attempted = field
    elif entity == "ingredient" and field is not None:
        changes.append(_ingredient_change(field, old_value, new_value))
    elif entity == "mixture" and field is not None:  # a constituent: "12.5 % (source)"
        changes.append({"field": field, **_share("old", old_value), **_share("new", new_value)})
    elif entity == "user" and field == "active":
        changes.append({"field": field, "old": None if old_value is None else old_value == "true",
                        "new": None if new_value is None else new_value == "true"})
    elif entity == "user" and field == "roles":
        changes.append({"field": field, "old": None, "new": [
            r.strip() for r in (new_value or "").split(",") if r.strip()]})
    elif field is None and new_value is not None and entity in _ENTITY_TABLES:
        try:  # a reference-table row added by the seed: its values as a JSON summary
            added = json.loads(new_value)
        except ValueError:
            added = None
        if isinstance(added, dict):
            changes += [{"field": k, "old": None, "new": v} for k, v in added.items()]
        else:
            changes.append({"field": "summary", "old": None, "new": new_value})
    elif field is not None and entity in _ENTITY_TABLES:
        kind = _column_kinds(_ENTITY_TABLES[entity]).get(field, "text")
        changes.append({"field": field, "old": _table_value(kind, old_value),
                        "new": _table_value(kind, new_value)})
    elif field is not None or old_value is not None or new_value is not None:
        changes.append({"field": field or "summary", "old": old_value, "new": new_value})
    return payload_text(changes, attempted=attempted, sealed=sealed)


__all__ = ["FORM", "LEGACY_FORM", "changes_of", "float_json", "legacy_payload", "log_entry",
           "log_values", "new_change_json", "payload_of", "payload_text", "value_json"]
