"""Stored formulas: import TOML files into the library, list, show and export them.

A formula is stored as the exact TOML text the formulator wrote (so export gives it back byte for
byte) with its SHA-256; re-importing changed text bumps its version and logs the change.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

from formdb.errors import Conflict, NotFound, quoted
from formdb.schemas.admin import Action
from formdb.schemas.ingredient import name_key
from formdb.schemas.stored import FormulaImportReport, StoredFormulaInfo
from formdb.services.admin.access import require
from formdb.services.checking.flow import read_inputs, resolve_all
from formdb.services.library.formula_files import content_hash
from formdb.store.change_log import log_entry
from formdb.store.formulas import formula_names, get_formula, iter_stored_formulas
from formdb.store.library import Library
from formdb.store.models import StoredFormula


def import_formulas(library: Library, paths: list[Path], *, user: str,
                    reason: str | None = None) -> FormulaImportReport:
    """Validate every file (names must resolve in the library), then store all or none."""
    items = read_inputs(paths)
    seen: dict[str, str] = {}
    for item in items:
        key = name_key(item.formula.name)
        if key in seen:
            raise Conflict(f"{item.label}, key name: formula name {item.formula.name!r} is also "
                           f"used by {seen[key]}", hint="give each formula its own name")
        seen[key] = item.label
    added, changed, unchanged = [], [], []
    with library.write() as session:
        require(session, user, Action.STORE_FORMULAS)
        resolve_all(session, items)  # unknown ingredients stop the import here
        now = datetime.now(UTC)
        for item in items:
            digest = content_hash(item.text)
            row = get_formula(session, item.formula.name)
            if row is None:
                row = StoredFormula(name=item.formula.name,
                                    name_key=name_key(item.formula.name),
                                    content=item.text, content_hash=digest, created_at=now,
                                    updated_at=now, updated_by=user)
                session.add(row)
                session.flush()
                added.append(item.formula.name)
                action, old = "add", None
            elif row.content_hash == digest:
                unchanged.append(item.formula.name)
                continue
            else:
                old = row.content_hash
                row.content, row.content_hash = item.text, digest
                row.name, row.updated_at, row.updated_by = item.formula.name, now, user
                session.flush()
                changed.append(item.formula.name)
                action = "edit"
            session.add(log_entry(
                at=now, user=user, entity="formula", entity_key=row.name,
                entity_version=row.version, action=action,
                changes=[{"field": "content_hash", "old": old, "new": digest}],
                reason=reason or f"imported from {item.label}"))
    return FormulaImportReport(added, changed, unchanged)


def _info(row: StoredFormula) -> StoredFormulaInfo:
    lines = row.content.count("[[ingredients]]")
    return StoredFormulaInfo(row.name, row.version, row.content_hash, row.updated_at,
                             row.updated_by, lines)


def list_formulas(library: Library) -> list[StoredFormulaInfo]:
    with library.read() as session:
        return [_info(row) for row in iter_stored_formulas(session)]


def formula_text(library: Library, name: str) -> str:
    """The stored TOML text of a formula, exactly as imported."""
    with library.read() as session:
        row = get_formula(session, name)
        if row is None:
            known = formula_names(session)
            hint = ("stored formulas: " + ", ".join(known[:10])) if known else \
                "import one with `formdb formula import FILE`"
            raise NotFound(f"no stored formula named {quoted(name)}", hint=hint)
        return row.content
