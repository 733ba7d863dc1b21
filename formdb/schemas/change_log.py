"""The change log's payload: one entry per record change, its field changes as typed data.

A ``change_log`` row says who changed which record, when, in which action and why (its columns);
its ``payload`` column holds what changed, as JSON of this shape (version ``PAYLOAD_VERSION``):

    {"v": 1,
     "changes": [{"field": "hlb", "old": 4.3, "new": 4.4,
                  "old_source": "griffin-1954", "new_source": "larkspur-bench"},
                 {"field": "synonyms", "old": ["Span 80"], "new": []},
                 {"field": "retired", "old": false, "new": true}],
     "via": "suppliers.csv"}

- ``field`` names the record's field (an ingredient property, ``inci_name``, ``synonyms``,
  ``cas``, ``roles``, ``classes``, ``retired``; a column of a reference table; a formula's
  ``content_hash``).
- The parts of a field that changed are present, the others absent: ``old``/``new`` the value
  (number, text, yes/no as true/false, a list of texts; null when there was none or is none),
  ``old_source``/``new_source`` the key of the source cited for a property value, and
  ``old_note``/``new_note`` its note, ``old_evidence``/``new_evidence`` the evidence grade when a
  verification moved it. A present null is a value that was (or became) absent.
- ``via`` (optional) is where the change came from (the imported file's name); ``attempted``
  (optional) names the action of a refused attempt (action ``refused``, no changes).
- ``sealed`` appears only on entries migrated from the old per-column log (form 1): the exact text
  that row's hash was computed over (``formdb.store.sealing``), kept so its chain still verifies.
Readers rely on this shape; a change to it is a new ``v`` that readers of older entries keep
understanding.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict

from formdb.schemas.cells import format_number

PAYLOAD_VERSION = 1
CHANGE_PARTS = ("old", "new", "old_source", "new_source", "old_note", "new_note",
                "old_evidence", "new_evidence")


class LoggedChange(BaseModel):
    """One field of a record, before and after: only the parts that changed are set."""

    model_config = ConfigDict(defer_build=True, frozen=True, extra="forbid")

    field: str
    old: Any = None
    new: Any = None
    old_source: str | None = None
    new_source: str | None = None
    old_note: str | None = None
    new_note: str | None = None
    old_evidence: str | None = None
    new_evidence: str | None = None

    def parts(self) -> set[str]:
        """The parts present in the entry: 'value' (old/new), 'source', 'note'."""
        given = self.model_fields_set
        return {part for part, keys in (("value", ("old", "new")),
                                        ("source", ("old_source", "new_source")),
                                        ("note", ("old_note", "new_note")),
                                        ("evidence", ("old_evidence", "new_evidence")))
                if given & set(keys)}


class SealedText(BaseModel):
    """The text columns a form-1 (pre-typed) row was sealed with, exactly as they were."""

    model_config = ConfigDict(defer_build=True, frozen=True, extra="forbid")

    field: str | None
    old_value: str | None
    new_value: str | None


class ChangePayload(BaseModel):
    """What one change-log entry changed (module docstring)."""

    model_config = ConfigDict(defer_build=True, frozen=True, extra="forbid")

    v: Literal[1] = 1  # PAYLOAD_VERSION
    changes: tuple[LoggedChange, ...] = ()
    via: str | None = None
    attempted: str | None = None
    sealed: SealedText | None = None


def read_payload(text: str | None) -> ChangePayload:
    """The payload of a stored entry; an empty or missing payload is an entry of no changes."""
    if not text:
        return ChangePayload()
    return ChangePayload.model_validate_json(text)


def value_text(value: Any) -> str:
    """A logged value for reading: numbers shortest, yes/no, lists joined by '; '."""
    if value is None or value == []:
        return "(none)"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        return format_number(value)
    if isinstance(value, list):
        return "; ".join(str(v) for v in value)
    return str(value)


def describe_change(change: Mapping[str, Any] | LoggedChange) -> str:
    """'field: old -> new', with the source and note where they changed too."""
    data = change.model_dump(exclude_unset=True) if isinstance(change, LoggedChange) \
        else change
    field = data.get("field")
    moved = []
    if "old" in data or "new" in data:
        moved.append(f"{value_text(data.get('old'))} -> {value_text(data.get('new'))}")
    moved += [f"{part} {value_text(data.get(f'old_{part}'))} -> "
              f"{value_text(data.get(f'new_{part}'))}" for part in ("source", "note", "evidence")
              if f"old_{part}" in data or f"new_{part}" in data]
    if not moved:
        return str(field)
    if "old" in data or "new" in data:
        rest = f" ({', '.join(moved[1:])})" if len(moved) > 1 else ""
        return f"{field}: {moved[0]}{rest}"
    return f"{field}: {', '.join(moved)}"


@dataclass(frozen=True)
class FieldChange:
    """One field of a record as a person reads it in a table cell: old -> new, as text.

    What an import, an edit or a dry run reports (ingredients and the other library records
    alike); the change log itself keeps the values as data (``LoggedChange``)."""

    field: str
    old: str
    new: str

    def describe(self) -> str:
        return f"{self.field}: {self.old or '(none)'} -> {self.new or '(none)'}"


__all__ = ["CHANGE_PARTS", "PAYLOAD_VERSION", "ChangePayload", "FieldChange", "LoggedChange",
           "SealedText", "describe_change", "read_payload", "value_text"]
