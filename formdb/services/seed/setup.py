"""``formdb init [--seed]``: bring a library to the newest migration and load the bundled data.

Upgrade and seeding run in one transaction: either the library ends at head with every seed row
in place, or it is left exactly as it was (a SQLite file that init created is removed again).
Seeding upserts by key and compares first, so a second run adds nothing, changes nothing and
writes no change-log rows. Rows a team added to its own library are never touched.

On a library that already exists, seeding never overwrites a value the team may have changed:
it adds the rows and fills the values the library lacks, and reports every value it left alone
(``InitReport.left_alone``). Because that still writes to a shared library, it needs the admin
role (services.admin.access, once there is an admin) and ``confirm``: unconfirmed, the whole
upgrade and seeding run and are rolled back, and the report says what they would do.
"""

from __future__ import annotations

import sqlite3
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import ConfigError, SchemaOutdated
from formdb.resources import seed_data_dir
from formdb.schemas.admin import Action, InitReport, TableCounts
from formdb.services.admin.access import require_on
from formdb.services.admin.database import verify_before_upgrade
from formdb.services.library.ingredients import SPECIAL_SOURCES
from formdb.services.seed import safety as seed_safety
from formdb.services.seed import tables as seed_tables
from formdb.store.change_log import log_entry
from formdb.store.db import (
    alembic_config,
    current_revision,
    display_url,
    head_revision,
    make_engine,
    sqlite_path,
    upgraded_unit_of_work,
)
from formdb.store.identity import identity_of
from formdb.store.models import (
    Base,
    ExposureEntry,
    IncompatibilityEntry,
    LabelThresholdEntry,
    LimitEntry,
    MixtureConstituent,
    SoapPairEntry,
    Source,
    ToxicologyEntry,
)

SEED_REASON = "bundled seed library"
SEED_FILES = ("sources.csv", "ingredients.csv", "limits.csv", "incompatibilities.csv",
              "soap_pairs.csv", "exposure.csv", "toxicology.csv",
              "label_thresholds.csv")
# constituents.csv (declared mixtures) is optional: a team's own seed may have one, the bundled
# seed declares no mixture

# Source keys every library has, seeded or not, so any table can cite them (HELPERS.md); the
# same rows the ingredient service creates when a value cites one in a library that lacks it.
BUILTIN_SOURCES: tuple[dict[str, Any], ...] = tuple(
    {"key": key, "citation": citation, "evidence": evidence, "url": None, "seen": "calc",
     "note": None}
    for key, (evidence, citation) in SPECIAL_SOURCES.items())


class _RollBack(Exception):
    """Ends an unconfirmed seeding of an existing library: everything is rolled back."""

    def __init__(self, report: InitReport) -> None:
        super().__init__("unconfirmed")
        self.report = report


def init_library(url: str, *, seed: bool, user: str | None = None,
                 seed_dir: Path | None = None, confirm: bool = True) -> InitReport:
    """Create or upgrade the library at ``url`` to head; with ``seed``, load the seed tables.

    ``user`` None: the authenticated identity (formdb.store.identity). ``seed_dir`` replaces the
    bundled ``seed_data/`` (tests, a team's own seed); there a missing file is skipped, while
    the bundled folder must hold all of ``SEED_FILES``. See the module docstring for seeding a
    library that exists (admin role, ``confirm``).
    """
    path = sqlite_path(url)
    existed = path is None or path.exists()
    engine = make_engine(url)
    try:
        before = current_revision(engine)
        _refuse_unknown_revision(engine.url, before)
        user = user if user is not None else identity_of(engine)
        reseed = seed and before is not None
        if reseed:
            require_on(engine, user, Action.RESEED)
        if before is not None and before != head_revision():
            verify_before_upgrade(engine)
        try:
            with upgraded_unit_of_work(engine) as session:
                seeded, left = (seed_library(session, user=user, seed_dir=seed_dir,
                                             keep_existing=reseed) if seed else ({}, []))
                builtins = ensure_builtin_sources(session, user)
                report = InitReport(display_url(engine.url), before, head_revision(), seeded,
                                    builtins.added, tuple(left), done=True)
                if reseed and not confirm and report.changed_anything:
                    raise _RollBack(replace(report, done=False))
        except _RollBack as unconfirmed:
            return unconfirmed.report
        return report
    except BaseException:
        engine.dispose()
        if not existed and path is not None:
            _remove_if_untouched(path)
        raise
    finally:
        engine.dispose()


def _remove_if_untouched(path: Path) -> None:
    """Delete the SQLite file a failed first ``init`` created, unless it holds tables or another
    process is writing to it (a concurrent ``init`` that may yet succeed)."""
    try:
        conn = sqlite3.connect(path, timeout=0, isolation_level=None)
        try:
            conn.execute("BEGIN IMMEDIATE")
            empty = conn.execute("SELECT count(*) FROM sqlite_master").fetchone()[0] == 0
            conn.execute("ROLLBACK")
        finally:
            conn.close()
    except sqlite3.Error:
        return
    if empty:
        for leftover in (path, Path(f"{path}-wal"), Path(f"{path}-shm")):
            leftover.unlink(missing_ok=True)


def _refuse_unknown_revision(url: Any, revision: str | None) -> None:
    from alembic.script import ScriptDirectory

    if revision is None:
        return
    known = {r.revision for r in ScriptDirectory.from_config(alembic_config()).walk_revisions()}
    if revision not in known:
        raise SchemaOutdated(
            f"{display_url(url)} is at revision {revision}, which this formdb does not know "
            f"(a newer formdb made it; this one stops at {head_revision()}).",
            hint="upgrade formdb to the version your team uses; the library was not changed")


def ensure_builtin_sources(session: Session, user: str) -> TableCounts:
    """Add the ``rule-of-thumb`` and ``from-memory`` sources if missing (never overwrite)."""
    present = set(session.scalars(select(Source.key).where(
        Source.key.in_([s["key"] for s in BUILTIN_SOURCES]))))
    missing = [s for s in BUILTIN_SOURCES if s["key"] not in present]
    now = datetime.now(UTC)
    for values in missing:
        session.add(Source(**values))
        _log(session, now, user, "source", values["key"], "add", _added(values),
             "built-in source")
    return TableCounts(added=len(missing), unchanged=len(present))


def seed_library(session: Session, *, user: str, seed_dir: Path | None = None,
                 keep_existing: bool = False) -> tuple[dict[str, TableCounts], list[str]]:
    """Upsert every seed table in order (sources first: everything cites them); with
    ``keep_existing`` only add rows and fill blank values. Returns the counts per table and
    the values left alone."""
    bundled = seed_dir is None
    folder = seed_data_dir() if seed_dir is None else seed_dir
    if bundled:
        missing = [name for name in SEED_FILES if not (folder / name).is_file()]
        if missing:
            raise ConfigError(f"the bundled seed data in {folder} lacks {', '.join(missing)}.",
                              hint="reinstall formdb")
    now = datetime.now(UTC)
    counts: dict[str, TableCounts] = {}
    left: list[str] = []

    def _upsert(model: type[Base], key_fields: tuple[str, ...], rows: list[dict[str, Any]],
                entity: str) -> TableCounts:
        return _upsert_rows(session, model, key_fields, rows, entity, user, now,
                            left if keep_existing else None)

    def present(name: str) -> Path | None:
        file = folder / name
        return file if file.is_file() else None

    if file := present("sources.csv"):
        rows = seed_tables.read_sources(file, label=_label(folder, file))
        counts["sources"] = _upsert(Source, ("key",), rows, "source")
        session.flush()
    if file := present("ingredients.csv"):
        counts["ingredients"] = _import_ingredients(session, file, user, keep_existing, left)
        session.flush()
    # values take the grade of the source they cite (a source this seed regrades moves them)
    from formdb.services.library.evidence import sync_value_grades

    sync_value_grades(session, user=user, reason=SEED_REASON)
    known_sources = set(session.scalars(select(Source.key)))
    if file := present("limits.csv"):
        rows = seed_tables.read_limits(file, _label(folder, file), known_sources)
        counts["limits"] = _upsert(LimitEntry, ("key",), rows, "limit")
    if file := present("incompatibilities.csv"):
        rows = seed_tables.read_incompatibilities(file, _label(folder, file), known_sources,
                                                  session)
        counts["incompatibilities"] = _upsert(IncompatibilityEntry, ("key",), rows,
                                              "incompatibility")
    if file := present("soap_pairs.csv"):
        rows = seed_tables.read_soap_pairs(file, _label(folder, file), known_sources, session)
        counts["soap_pairs"] = _upsert(SoapPairEntry, ("acid_inci", "base_inci"), rows,
                                       "soap pair")
    if file := present("exposure.csv"):
        rows = seed_safety.read_exposure(file, _label(folder, file), known_sources)
        counts["exposure"] = _upsert(ExposureEntry, ("product",), rows, "exposure")
    if file := present("toxicology.csv"):
        rows = seed_safety.read_toxicology(file, _label(folder, file), known_sources, session)
        counts["toxicology"] = _upsert(ToxicologyEntry, ("key",), rows, "toxicology")
    if file := present("label_thresholds.csv"):
        rows = seed_safety.read_label_thresholds(file, _label(folder, file), known_sources)
        counts["label_thresholds"] = _upsert(LabelThresholdEntry, ("key",), rows,
                                             "label threshold")
    if file := present("constituents.csv"):
        rows = seed_safety.read_constituents(file, _label(folder, file), known_sources, session)
        counts["constituents"] = _upsert(MixtureConstituent, ("mixture_id", "constituent_id"),
                                         rows, "constituent")
    session.flush()
    return counts, left


def _label(folder: Path, file: Path) -> str:
    return f"{folder.name}/{file.name}"


def _import_ingredients(session: Session, file: Path, user: str, keep_existing: bool,
                        left: list[str]) -> TableCounts:
    try:
        from formdb.services.library.ingredients import import_table
    except ImportError as exc:  # pragma: no cover - only while the ingredient service is absent
        raise ConfigError("this formdb cannot import ingredient tables yet.",
                          hint="install a complete formdb") from exc
    report = import_table(session, file, user=user, reason=SEED_REASON, action="seed",
                          keep_existing=keep_existing)
    left += [f"ingredient {line}" for line in report.left_alone]

    def count(name: str) -> int:
        value = getattr(report, name, 0)
        return value if isinstance(value, int) else len(value)

    return TableCounts(count("added"), count("changed"), count("unchanged"))


def _upsert_rows(session: Session, model: type[Base], key_fields: tuple[str, ...],
                 rows: list[dict[str, Any]], entity: str, user: str, now: datetime,
                 left: list[str] | None) -> TableCounts:
    """Insert new keys, update differing fields (one change-log row each), leave equal rows.
    With ``left`` (an existing library) only blank fields are filled; every differing value
    the library holds is kept and described in ``left``."""
    existing = {tuple(getattr(obj, k) for k in key_fields): obj
                for obj in session.scalars(select(model))}
    added = changed = unchanged = 0
    for values in rows:
        key = tuple(values[k] for k in key_fields)
        entity_key = " + ".join(str(k) for k in key)
        obj = existing.get(key)
        if obj is None:
            session.add(model(**values))
            _log(session, now, user, entity, entity_key, "seed", _added(values), SEED_REASON)
            added += 1
            continue
        differing = {name: value for name, value in values.items()
                     if getattr(obj, name) != value}
        if left is not None:
            left += [f"{entity} {entity_key}: {name} kept {_text(getattr(obj, name))!r} "
                     f"(seed {_text(value)!r})"
                     for name, value in differing.items() if getattr(obj, name) is not None]
            differing = {name: value for name, value in differing.items()
                         if getattr(obj, name) is None}
        if differing:
            _log(session, now, user, entity, entity_key, "seed",
                 [{"field": name, "old": getattr(obj, name), "new": value}
                  for name, value in differing.items()], SEED_REASON)
        for name, value in differing.items():
            setattr(obj, name, value)
        changed += bool(differing)
        unchanged += not differing
    return TableCounts(added, changed, unchanged)


def _text(value: Any) -> str | None:
    return None if value is None else str(value)


def _added(values: dict[str, Any]) -> list[dict[str, Any]]:
    """A new row's values as change-log changes (from nothing)."""
    return [{"field": name, "old": None, "new": value} for name, value in values.items()
            if value is not None]


def _log(session: Session, now: datetime, user: str, entity: str, entity_key: str, action: str,
         changes: list[dict[str, Any]], reason: str) -> None:
    """One change-log entry per row added or changed (its changed columns as data)."""
    session.add(log_entry(at=now, user=user, entity=entity, entity_key=entity_key,
                          entity_version=None, action=action, changes=changes, reason=reason))
