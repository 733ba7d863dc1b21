"""What a library change does: re-check every stored formula that uses an ingredient.

A formula uses the ingredient when a line names it (INCI name or synonym) or names a mixture
that declares it as a constituent. Each such formula is checked now and compared with a
baseline, chosen per formula:
- its latest review run, if it has one (the run's stored findings; re-checked with the run's
  profile, so like is compared with like);
- otherwise the same check with the ingredient as it was before its most recent change (or, with
  ``since``, as it was at that version or at the version a named review run used), rebuilt from
  the change log's typed entries (services.library.ingredient_log), no table cell parsed.
Signed review runs that used an older version of the ingredient are listed as stale.
"""

from __future__ import annotations

import json
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

from sqlalchemy import Table, inspect, select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData, NotFound, quoted
from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, chosen_profile, load_profile, recorded_profile
from formdb.schemas.change_log import describe_change
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.impact import FindingKey, FormulaImpact, ImpactReport, LibraryChange, StaleRun
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.numbers import ascii_digits
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import CheckResult
from formdb.services.checking.flow import FormulaInput, input_from_text, resolve_all
from formdb.services.library.ingredient_log import fields_of, record_from_fields, undo
from formdb.services.library.ingredients import ENTITY, _get, _sources
from formdb.services.lists.reading import with_lists
from formdb.store import queries
from formdb.store.change_log import changes_of
from formdb.store.formulas import iter_stored_formulas
from formdb.store.library import Library
from formdb.store.models import Base, ChangeLogEntry

_BATCH = 200


def verdict(findings: Any) -> str:
    """"errors", "warnings" or "clean" from findings (Finding objects or their JSON dicts)."""
    severities = {str(_get_field(f, "severity")) for f in findings}
    if "error" in severities:
        return "errors"
    return "warnings" if "warning" in severities else "clean"


def _get_field(finding: Any, name: str) -> Any:
    value = finding.get(name) if isinstance(finding, Mapping) else getattr(finding, name, None)
    return getattr(value, "value", value)


def _keys(findings: Any) -> set[FindingKey]:
    return {FindingKey(str(_get_field(f, "rule")), str(_get_field(f, "severity")),
                       str(_get_field(f, "message"))) for f in findings}


# --- the ingredient as it was --------------------------------------------------------------------

def _log_since(session: Session, inci: str, version: int) -> list[ChangeLogEntry]:
    return list(session.scalars(
        select(ChangeLogEntry).where(ChangeLogEntry.entity == ENTITY,
                                     ChangeLogEntry.entity_key == inci,
                                     ChangeLogEntry.entity_version > version)
        .order_by(ChangeLogEntry.entity_version.desc(), ChangeLogEntry.id.desc())))


def earlier_record(session: Session, record: IngredientRecord, version: int) -> IngredientRecord:
    """The ingredient as it was at ``version``: every logged change after it undone, newest
    first (each entry holds the old and new parts of the fields it changed, as data)."""
    fields = fields_of(record)
    for row in _log_since(session, record.inci_name, version):
        undo(fields, changes_of(row.payload))
    sources = _sources(session)
    cited = [s for _v, s, _n in fields.values() if s is not None]
    return record_from_fields(fields, ingredient_id=record.id, version=version,
                              evidence=sources,
                              citations=queries.citations_for(session, cited))


def _swap(formula: ResolvedFormula, reference: ReferenceData, old: IngredientRecord,
          ) -> tuple[ResolvedFormula, ReferenceData]:
    """The formula and reference data with ``old`` wherever the ingredient appears."""
    def pick(rec: IngredientRecord) -> IngredientRecord:
        return old if rec.id == old.id else rec

    lines = tuple(ln.model_copy(update={"ingredient": pick(ln.ingredient)})
                  for ln in formula.lines)
    constituents = {k: tuple(p.model_copy(update={"record": pick(p.record)}) for p in parts)
                    for k, parts in reference.constituents.items()}
    swapped = reference.model_copy(update={
        "constituents": constituents,
        "soaps": {k: pick(v) for k, v in reference.soaps.items()},
        "acids": {k: pick(v) for k, v in reference.acids.items()}})
    return formula.model_copy(update={"lines": lines}), swapped


# --- review runs (services.review.runs stores them) ----------------------------------------------

def _table(session: Session, name: str) -> Table | None:
    if name not in inspect(session.connection()).get_table_names():
        return None
    return Base.metadata.tables.get(name)


def _versions_used(records_json: str, target: IngredientRecord) -> list[int]:
    """Versions of the ingredient a run recorded: any object in its records that names the
    ingredient (INCI name, or its library id) together with a version."""
    try:
        data = json.loads(records_json or "null")
    except ValueError:
        return []
    found: list[int] = []

    def walk(node: Any) -> None:
        if isinstance(node, dict):
            names = [node.get(k) for k in ("inci_name", "inci", "name", "key")]
            hit = any(isinstance(n, str) and name_key(n) == name_key(target.inci_name)
                      for n in names) or node.get("ingredient_id") == target.id
            kind = str(node.get("kind", node.get("table", "ingredient")))
            if hit and "ingredient" in kind and isinstance(node.get("version"), int):
                found.append(node["version"])
            for value in node.values():
                walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(data)
    return found


def _runs(session: Session) -> list[Any]:
    runs = _table(session, "review_runs")
    if runs is None:
        return []
    return list(session.execute(select(runs).order_by(runs.c.id)).mappings())


def _signatures(session: Session) -> dict[int, list[str]]:
    signs = _table(session, "review_signatures")
    out: dict[int, list[str]] = {}
    if signs is None:
        return out
    for row in session.execute(select(signs).order_by(signs.c.id)).mappings():
        out.setdefault(row["run_id"], []).append(
            f"{row['meaning']} by {row['signer']} at {row['signed_at']:%Y-%m-%d %H:%M}")
    return out


def _run_findings(run: Mapping[str, Any]) -> list[Any] | None:
    try:
        data = json.loads(run["findings_json"] or "null")
    except ValueError:
        return None
    if isinstance(data, dict):
        data = data.get("findings")
    return data if isinstance(data, list) else None


# --- the use case -------------------------------------------------------------------------------

def _containing(reference: ReferenceData, target: IngredientRecord) -> set[str]:
    """Name keys of the mixtures that hold ``target``, directly or through another mixture."""
    found: set[str] = set()
    while True:
        more = {key for key, parts in reference.constituents.items()
                if key not in found and any(p.record.id == target.id
                                            or name_key(p.record.inci_name) in found
                                            for p in parts)}
        if not more:
            return found
        found |= more


def _using(session: Session, target: IngredientRecord, reference: ReferenceData,
           ) -> Iterator[tuple[FormulaInput, ResolvedFormula, tuple[str, ...]]]:
    mixtures = _containing(reference, target)
    known: dict[str, IngredientRecord] = {}
    batch: list[FormulaInput] = []

    def flush(items: list[FormulaInput]) -> Iterator[tuple[FormulaInput, ResolvedFormula,
                                                           tuple[str, ...]]]:
        for item, formula in zip(items, resolve_all(session, items, known), strict=True):
            via = tuple(
                f"line {ln.line_no} {ln.given_name}" + (
                    "" if ln.ingredient.id == target.id
                    else f" (a mixture containing {target.inci_name})")
                for ln in formula.lines
                if ln.ingredient.id == target.id or name_key(ln.ingredient.inci_name) in mixtures)
            if via:
                yield item, formula, via

    for stored in iter_stored_formulas(session):
        batch.append(input_from_text(stored.content, f"stored:{stored.name}"))
        if len(batch) >= _BATCH:
            yield from flush(batch)
            batch = []
    yield from flush(batch)


def _baseline_version(session: Session, target: IngredientRecord, since: str | None,
                      runs: list[Any]) -> int | None:
    if since is None:
        return target.version - 1 if target.version > 1 else None
    text = since.strip()
    if ascii_digits(text):
        version = int(text)
        if not 1 <= version <= target.version:
            raise InvalidData(f"--since {since}: {target.inci_name!r} has versions 1 to "
                              f"{target.version}.", hint="give a version or a review run")
        return version
    run = next((r for r in runs if str(r["run_key"]) == text), None)
    if run is None:
        raise NotFound(f"--since {since}: no review run {quoted(text)} and not a version number.",
                       hint="`formdb review status` lists the runs")
    used = _versions_used(run["records_json"], target)
    if not used:
        raise InvalidData(f"--since {since}: review run {text} did not use "
                          f"{target.inci_name!r}.", hint="name a run that used the ingredient")
    return min(used)


def _latest_change(session: Session, target: IngredientRecord) -> LibraryChange | None:
    rows = sorted((r for r in _log_since(session, target.inci_name, target.version - 1)
                   if r.entity_version == target.version), key=lambda r: r.id)
    if not rows:
        return None
    return LibraryChange(target.version, rows[0].at, rows[0].user, tuple(
        describe_change(change) for r in rows for change in changes_of(r.payload)))


def impact_of(library: Library, ingredient: str, *, since: str | None = None,
              profile: Profile | str | None = None) -> ImpactReport:
    """Re-check every stored formula using ``ingredient`` and compare (module docstring)."""
    chosen = chosen_profile(profile)
    with library.read() as session:
        target = queries.records_by_id(session, [_get(session, ingredient).id])
        record = next(iter(target.values()))
        runs = _runs(session)
        base_version = _baseline_version(session, record, since, runs)
        earlier = (earlier_record(session, record, base_version)
                   if base_version is not None and base_version != record.version else None)
        report = ImpactReport(record.inci_name, record.version, base_version,
                              _latest_change(session, record))
        reference = queries.load_reference_data(session)
        latest_run = {} if since is not None else {
            name_key(r["formula_name"]): r for r in runs}
        for _item, formula, via in _using(session, record, reference):
            reference = with_lists(session, reference, [formula])
            report.formulas.append(_compare(formula, reference, chosen, earlier, via,
                                            latest_run.get(name_key(formula.formula.name)),
                                            report))
        report.stale_runs = _stale(session, record, runs)
    return report


def _compare(formula: ResolvedFormula, reference: ReferenceData, profile: Profile,
             earlier: IngredientRecord | None, via: tuple[str, ...], run: Mapping[str, Any] | None,
             report: ImpactReport) -> FormulaImpact:
    name = formula.formula.name
    if run is not None and (before := _run_findings(run)) is not None:
        run_profile, problem = _run_profile(run, profile)
        if problem:
            report.notes.append(f"{name}: review run {run['run_key']}'s profile "
                                f"{run['profile_name']!r} {problem}; checked with "
                                f"{run_profile.name!r}")
        if run["formula_hash"] != formula.content_hash:
            report.notes.append(f"{name}: the stored formula changed since review run "
                                f"{run['run_key']}; part of the difference may be its own")
        now = check_resolved(formula, reference, run_profile)
        return _impact(name, via, f"review run {run['run_key']} ({run_profile.name} profile)",
                       before, now)
    now = check_resolved(formula, reference, profile)
    if earlier is None:
        return FormulaImpact(name, via, "nothing (no earlier version of the ingredient)", None,
                             verdict(now.findings))
    old_formula, old_reference = _swap(formula, reference, earlier)
    then: CheckResult = check_resolved(old_formula, old_reference, profile)
    return _impact(name, via, f"{earlier.inci_name} version {earlier.version}",
                   list(then.findings), now)


def _run_profile(run: Mapping[str, Any], chosen: Profile) -> tuple[Profile, str | None]:
    """The profile a run was checked with, found where the run says it came from (a packaged
    profile by name, a profile file by its path) and held to the run's content hash; else the
    chosen profile, and why."""
    spec = recorded_profile(run["profile_name"], run.get("profile_origin"))
    try:
        found = load_profile(spec)
    except Exception:  # a file gone or unreadable, a profile this formdb no longer ships
        where = f"(the file {spec})" if isinstance(spec, Path) else "(not shipped any more)"
        return chosen, f"is not available {where}"
    expected = run.get("profile_hash")
    if expected is not None and found.content_hash != expected:
        where = f"the file {spec}" if isinstance(spec, Path) else "the packaged profile"
        return chosen, f"is not what the run used ({where} has changed since)"
    return found, None


def _impact(name: str, via: tuple[str, ...], compared_with: str, before: list[Any],
            now: CheckResult) -> FormulaImpact:
    old, new = _keys(before), _keys(now.findings)
    return FormulaImpact(name, via, compared_with, verdict(before), verdict(now.findings),
                         tuple(sorted(new - old, key=_order)), tuple(sorted(old - new, key=_order)))


def _order(key: FindingKey) -> tuple[str, str]:
    return key.rule, key.message


def _stale(session: Session, record: IngredientRecord, runs: list[Any]) -> list[StaleRun]:
    signed = _signatures(session)
    superseded = {r["supersedes_run_id"] for r in runs if r.get("supersedes_run_id")}
    out = []
    for run in runs:
        if run["id"] not in signed:
            continue
        used = [v for v in _versions_used(run["records_json"], record) if v != record.version]
        if used:
            out.append(StaleRun(str(run["run_key"]), str(run["formula_name"]), min(used),
                                record.version, tuple(signed[run["id"]]),
                                run["id"] in superseded))
    return out


__all__ = ["FindingKey", "FormulaImpact", "ImpactReport", "LibraryChange", "StaleRun",
           "earlier_record", "impact_of", "verdict"]
