"""An ingredient's fields as typed data: what its change-log entries record, and how an earlier
version is rebuilt from them.

An ingredient is a set of fields, each a (value, source, note) triple: ``inci_name``, the lists
``synonyms``, ``cas``, ``roles`` and ``classes`` (sorted, as the library lists them), ``retired``,
and one field per property with its value (number, text, yes/no), the key of the source it cites
and its note. A change-log entry holds the fields that differ (formdb.schemas.change_log), so the
ingredient at an earlier version is today's fields with every later entry's old parts put back;
no table cell is parsed on the way.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from enum import StrEnum
from typing import Any

import orjson

from formdb.errors import InvalidData
from formdb.schemas.change_log import PAYLOAD_VERSION
from formdb.schemas.ingredient import (
    PROPERTY_NAMES,
    IngredientIn,
    IngredientProperties,
    IngredientRecord,
    Provenance,
)
from formdb.schemas.vocab import Evidence, Role
from formdb.store.change_log import float_json, new_change_json, payload_of

Field = tuple[Any, str | None, str | None]  # value, source key, note
Fields = dict[str, Field]
LIST_FIELDS = ("synonyms", "cas", "roles", "classes")
FIELD_ORDER = ("inci_name", *LIST_FIELDS, *PROPERTY_NAMES, "retired")
_NONE: Field = (None, None, None)
_EMPTY_LIST: Field = ([], None, None)


def _data(value: Any) -> Any:
    return str(value) if isinstance(value, StrEnum) else value  # a StrEnum's str is its value


def fields_of(item: IngredientIn | IngredientRecord, retired: bool | None = None) -> Fields:
    """The fields of an ingredient as data (properties without a value are left out)."""
    fields: Fields = {
        "inci_name": (item.inci_name, None, None),
        "synonyms": (sorted(item.synonyms, key=str.casefold), None, None),
        "cas": (sorted(item.cas_numbers), None, None),
        "roles": (sorted(_data(r) for r in item.roles), None, None),
        "classes": (sorted(item.classes), None, None),
    }
    if isinstance(item, IngredientRecord):
        sources = {p: prov.source for p, prov in item.provenance.items()}
        notes = {p: prov.note for p, prov in item.provenance.items() if prov.note}
        retired = item.retired if retired is None else retired
    else:
        sources, notes = item.sources, item.notes
    for prop in PROPERTY_NAMES:
        value = getattr(item.properties, prop)
        if value is not None:
            fields[prop] = (_data(value), sources.get(prop), notes.get(prop) or None)
    if retired is not None:
        fields["retired"] = (retired, None, None)
    return fields


def _empty(field: str) -> Field:
    return _EMPTY_LIST if field in LIST_FIELDS else _NONE


def typed_changes(old: Fields | None, new: Fields) -> list[dict[str, Any]]:
    """The change-log changes from ``old`` (None: a new ingredient) to ``new``, in field order;
    only the parts that differ (value, source, note) are given."""
    out = []
    for field in FIELD_ORDER:
        before = _empty(field) if old is None else old.get(field, _empty(field))
        after = new.get(field, _empty(field))
        if before == after:
            continue
        change: dict[str, Any] = {"field": field}
        if before[0] != after[0]:
            change["old"], change["new"] = before[0], after[0]
        if before[1] != after[1]:
            change["old_source"], change["new_source"] = before[1], after[1]
        if before[2] != after[2]:
            change["old_note"], change["new_note"] = before[2], after[2]
        if len(change) > 1:
            out.append(change)
    return out


def added_payload(item: IngredientIn, *, via: str | None,
                  present: Sequence[tuple[str, Any]] | None = None) -> str:
    """``payload_text(typed_changes(None, fields_of(item)), via=via)``: the payload of a new
    ingredient's change-log entry (an import adds tens of thousands), written by orjson. Every
    field that holds something, from nothing: the name, the lists that are not empty, each
    property's value with its source and, where there is one, its note. orjson writes texts,
    whole numbers and booleans as ``json`` does; a float goes in as the text ``json`` gives it
    (orjson writes 1e-05 as 0.00001). A value orjson refuses (a lone surrogate in a note, a
    whole number beyond 64 bits) takes the text path, ``added_payload_text``. ``present``: the
    (property, value) pairs of ``item.properties`` that hold a value, in catalogue order, when
    the caller has them already."""
    changes: list[dict[str, Any]] = [{"field": "inci_name", "old": None,
                                      "new": item.inci_name}]
    if item.synonyms:  # the lists that are not empty (most rows have few)
        changes.append({"field": "synonyms", "old": [],
                        "new": sorted(item.synonyms, key=str.casefold)})
    if item.cas_numbers:
        changes.append({"field": "cas", "old": [], "new": sorted(item.cas_numbers)})
    if item.roles:
        changes.append({"field": "roles", "old": [], "new": sorted(map(str, item.roles))})
    if item.classes:
        changes.append({"field": "classes", "old": [], "new": sorted(item.classes)})
    sources, notes = item.sources, item.notes
    if present is None:  # the fields that hold a value, in catalogue order (most are None)
        present = [(p, v) for p, v in vars(item.properties).items() if v is not None]
    for prop, value in present:
        if type(value) is float:
            new = _float_texts.get(value) if value else None  # 0.0 and -0.0: never kept
            if new is None:
                new = _float_text(value)
        else:
            new = _data(value)
        change = {"field": prop, "old": None, "new": new}
        source = sources.get(prop)
        if source is not None:
            change["old_source"], change["new_source"] = None, source
        note = notes.get(prop)
        if note:
            change["old_note"], change["new_note"] = None, note
        changes.append(change)
    body: dict[str, Any] = {"v": PAYLOAD_VERSION, "changes": changes}
    if via is not None:
        body["via"] = via
    try:
        return orjson.dumps(body).decode("utf-8")
    except orjson.JSONEncodeError:
        return added_payload_text(item, via=via)


# A table repeats its numbers (a 50,000-row table has about 60,000 distinct values in 270,000),
# so each float's text is made once: keyed by the float, which is exact for all but the zeros
# (0.0 == -0.0, but json writes them apart), which are never kept; emptied when full.
_FLOAT_TEXTS_KEPT = 1 << 16
_float_texts: dict[float, orjson.Fragment] = {}


def _float_text(value: float) -> orjson.Fragment:
    text = float_json(value)
    if value:
        if len(_float_texts) >= _FLOAT_TEXTS_KEPT:
            _float_texts.clear()
        _float_texts[value] = text
    return text


def added_payload_text(item: IngredientIn, *, via: str | None) -> str:
    """``added_payload`` written as text in one pass, each value through ``value_json``."""
    parts = [new_change_json("inci_name", item.inci_name)]
    for field, items in (("synonyms", sorted(item.synonyms, key=str.casefold)),
                         ("cas", sorted(item.cas_numbers)),
                         ("roles", sorted(_data(r) for r in item.roles)),
                         ("classes", sorted(item.classes))):
        if items:
            parts.append(new_change_json(field, items, listed=True))
    sources, notes = item.sources, item.notes
    for prop, value in vars(item.properties).items():  # the fields, in catalogue order
        if value is not None:
            parts.append(new_change_json(prop, value if type(value) is float else _data(value),
                                         sources.get(prop), notes.get(prop) or None))
    return payload_of(parts, via=via)


def undo(fields: Fields, changes: Iterable[Mapping[str, Any]]) -> None:
    """Put back the old parts of one entry's changes (the entry is undone)."""
    for change in changes:
        field = str(change.get("field"))
        value, source, note = fields.get(field, _empty(field))
        if "old" in change or "new" in change:
            value = change.get("old")
        if "old_source" in change or "new_source" in change:
            source = change.get("old_source")
        if "old_note" in change or "new_note" in change:
            note = change.get("old_note")
        fields[field] = (value, source, note)


def record_from_fields(fields: Fields, *, ingredient_id: int, version: int,
                       evidence: Mapping[str, str], citations: Mapping[str, str],
                       ) -> IngredientRecord:
    """The ingredient record the fields describe (properties validated as data)."""
    name = fields["inci_name"][0]
    values = {p: fields[p][0] for p in PROPERTY_NAMES
              if p in fields and fields[p][0] is not None}
    try:
        properties = IngredientProperties.model_validate(values)
        provenance = {}
        for prop in values:
            _value, source, note = fields[prop]
            if source is None:
                raise ValueError(f"{prop} has no source")
            provenance[prop] = Provenance(source=source, evidence=Evidence(evidence[source]),
                                          citation=citations.get(source), note=note)
        return IngredientRecord(
            id=ingredient_id, inci_name=name, version=version,
            retired=bool(fields.get("retired", _NONE)[0]),
            synonyms=tuple(fields["synonyms"][0] or ()),
            cas_numbers=tuple(fields["cas"][0] or ()),
            roles=frozenset(Role(r) for r in fields["roles"][0] or ()),
            classes=frozenset(fields["classes"][0] or ()),
            properties=properties, provenance=provenance)
    except (ValueError, KeyError) as exc:
        raise InvalidData(f"{name!r} version {version} cannot be rebuilt from the change log "
                          f"({exc}).", hint="compare with a later version (--since)") from None


__all__ = ["FIELD_ORDER", "Fields", "added_payload", "added_payload_text", "fields_of",
           "record_from_fields", "typed_changes", "undo"]
