"""Pre-trial review records: an immutable check run, its sign-offs, and whether it still holds.

A run keeps the formula text as checked, the hash of every library record the check used
(ingredients by name, version and values; the limits, exposure row, toxicology rows, label
thresholds and mixture constituents relevant to the formula) and the whole result. A run is never
updated: a newer run of the same formula name supersedes it, and its state is worked out when
asked: stale when the formula or any record used changed since, naming what changed. A sign-off
binds a printed name, the login, the UTC time and its meaning to the run hash (21 CFR 11.50 and
11.70: the signature shows who, when and what it means, and is linked to its record).
"""

from __future__ import annotations

import hashlib
import json
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb import __version__
from formdb.errors import Conflict, InvalidData, NotFound
from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, load_profile
from formdb.schemas.admin import Action
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import CheckResult
from formdb.schemas.review import FiledRun, RunState, RunSummary, SignatureInfo
from formdb.schemas.suggest import close_matches
from formdb.schemas.times import utc
from formdb.services.admin.access import require
from formdb.services.checking.flow import FormulaInput, input_from_text, read_inputs, resolve_all
from formdb.services.library.formula_files import content_hash
from formdb.services.review.audit import append_sealed
from formdb.store import queries
from formdb.store.formulas import get_formula
from formdb.store.library import Library
from formdb.store.lists import with_list_entries
from formdb.store.models import ChangeLogEntry, ReviewRun, ReviewSignature

DEFAULT_PROFILE = "strict"
MEANINGS = ("approved", "reviewed", "rejected")
STORED = "stored:"


def _digest(value: Any) -> str:
    text = json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      default=str)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


# ----- the records a run used ---------------------------------------------------------------

def _ingredient_values(rec: IngredientRecord) -> dict[str, Any]:
    return {"inci_name": rec.inci_name, "retired": rec.retired,
            "synonyms": sorted(rec.synonyms), "cas": sorted(rec.cas_numbers),
            "roles": sorted(r.value for r in rec.roles), "classes": sorted(rec.classes),
            "properties": rec.properties.model_dump(mode="json", exclude_none=True),
            "provenance": {k: v.model_dump(mode="json") for k, v in rec.provenance.items()}}


def used_records(formula: ResolvedFormula, reference: ReferenceData) -> list[dict[str, Any]]:
    """Every library record the check of ``formula`` read, each with the hash of its values."""
    out: dict[tuple[str, str], dict[str, Any]] = {}

    def put(kind: str, key: str, values: dict[str, Any], version: int | None = None) -> None:
        row: dict[str, Any] = {"kind": kind, "key": key, "hash": _digest(values),
                               "values": values}
        if version is not None:
            row["version"] = version
        out[(kind, key)] = row

    ingredients = {ln.ingredient.inci_name: ln.ingredient for ln in formula.lines}
    for mixture in list(ingredients.values()):
        parts = reference.constituents.get(name_key(mixture.inci_name), ())
        for part in parts:
            ingredients.setdefault(part.record.inci_name, part.record)
            put("constituent", f"{mixture.inci_name} > {part.record.inci_name}",
                {"percent": part.percent, "source": part.source})
    for name, rec in ingredients.items():
        put("ingredient", name, _ingredient_values(rec), rec.version)
    keys = {name_key(n) for rec in ingredients.values() for n in (rec.inci_name, *rec.synonyms)}
    for limit in reference.limits:
        named = {name_key(n) for n in (*limit.ingredients, limit.acid_inci or "")}
        if named & keys:
            put("limit", limit.key, limit.model_dump(mode="json"))
    product = formula.formula.product
    if product and product.casefold() in reference.exposure:
        put("exposure", product, reference.exposure[product.casefold()].model_dump(mode="json"))
    for key, tox in reference.toxicology.items():
        if key in keys:
            put("toxicology", tox.key, tox.model_dump(mode="json"))
    for rec in ingredients.values():
        for entry in reference.list_entries.get(name_key(rec.inci_name), ()):
            put("list entry", entry.label, {k: v for k, v in entry.cells.items()
                                            if k != "Update Date"})
    category = formula.formula.category.value
    for threshold in reference.label_thresholds:
        if threshold.category in (category, "any"):
            put("label threshold", threshold.key, threshold.model_dump(mode="json"))
    return [out[k] for k in sorted(out)]


def library_hash(records: list[dict[str, Any]]) -> str:
    return _digest([(r["kind"], r["key"], r["hash"]) for r in records])


# ----- run ----------------------------------------------------------------------------------


def open_items(result: CheckResult, profile_name: str) -> list[dict[str, Any]]:
    """Findings that block a "ready for trial" verdict: every error; under strict, data gaps."""
    items = []
    for f in result.findings:
        gap = f.rule.startswith("GAP") or "gap" in f.name
        if f.severity.value == "error" or (profile_name == "strict" and gap):
            items.append({"rule": f.rule, "severity": f.severity.value, "message": f.message,
                          "ingredients": list(f.ingredients)})
    return items


def verdict(result: CheckResult, profile_name: str) -> str:
    return "open items" if open_items(result, profile_name) else "ready for trial"


def _read(source: str, session: Session) -> FormulaInput:
    if source.startswith(STORED):
        stored = get_formula(session, source[len(STORED):])
        if stored is None:
            raise NotFound(f"no stored formula {source[len(STORED):]!r}.",
                           hint="`formdb formula list` shows the stored formulas")
        return input_from_text(stored.content, f"{STORED}{stored.name}")
    return read_inputs([Path(source)])[0]


RESULT_KEYS = ("formula", "source", "content_hash", "category", "product", "intended_type", "ph",
               "profile", "facts", "findings")


def stored_result(result_json: str) -> CheckResult:
    """The CheckResult back from a run's contract JSON (numbers as the reports round them)."""
    data = json.loads(result_json)
    return CheckResult.model_validate({k: data[k] for k in RESULT_KEYS if k in data})


def run_review(library: Library, source: str, profile: Profile | str | None = None, *,
               user: str) -> RunSummary:
    """``formdb review run``: check ``source`` (a path or stored:NAME) and store the run."""
    chosen = profile if isinstance(profile, Profile) else load_profile(profile or DEFAULT_PROFILE)
    if not source.startswith(STORED):
        item = read_inputs([Path(source)])[0]
        label = str(Path(source).resolve())
    with library.write() as session:
        if source.startswith(STORED):
            item = _read(source, session)
            label = item.label
        reference = queries.load_reference_data(session)
        resolved = resolve_all(session, [item])[0]
        reference = with_list_entries(session, reference, [resolved])
        result = check_resolved(resolved, reference, chosen)
        records = used_records(resolved, reference)
        now = datetime.now(UTC)
        findings = [f.model_dump(mode="json") for f in result.findings]
        before = session.scalars(select(ReviewRun).where(
            ReviewRun.formula_name == resolved.name).order_by(ReviewRun.id.desc())).first()
        content = {"formula_name": resolved.name, "formula_source": label,
                   "formula_hash": content_hash(item.text), "library_hash":
                   library_hash(records), "profile": [chosen.name, chosen.version],
                   "formdb_version": __version__, "created_at": now.isoformat(),
                   "created_by": user, "findings": findings,
                   "supersedes": before.run_hash if before else None}
        run_hash = _digest(content)
        run = ReviewRun(
            run_key=run_hash[:12], run_hash=run_hash, formula_name=resolved.name,
            formula_source=label, formula_hash=content["formula_hash"],
            formula_text=item.text, library_hash=content["library_hash"],
            records_json=json.dumps(records, sort_keys=True, ensure_ascii=False),
            profile_name=chosen.name, profile_version=chosen.version,
            formdb_version=__version__, created_at=now, created_by=user,
            findings_json=json.dumps(findings, sort_keys=True, ensure_ascii=False),
            result_json=json.dumps(result.to_contract_json(), ensure_ascii=False),
            supersedes_run_id=before.id if before else None)
        append_sealed(session, run)
        counts = result.severity_counts()
        return RunSummary(run.run_key, run_hash, resolved.name,
                          verdict(result, chosen.name), counts["error"], counts["warning"],
                          len(open_items(result, chosen.name)), len(records),
                          before.run_key if before else None)


# ----- state --------------------------------------------------------------------------------


def _stamp(at: datetime) -> str:
    return utc(at).strftime("%Y-%m-%d %H:%M:%S UTC")


def _formula_changes(session: Session, run: ReviewRun) -> list[str]:
    source = run.formula_source
    if source.startswith(STORED):
        stored = get_formula(session, source[len(STORED):])
        if stored is None:
            return [f"formula {source}: no longer stored"]
        now = content_hash(stored.content)
        where = f"stored formula {source[len(STORED):]!r}"
    else:
        try:
            now = content_hash(Path(source).read_bytes().decode("utf-8"))
        except (OSError, UnicodeDecodeError) as exc:
            return [f"formula file {source}: cannot be read now ({exc})"]
        where = f"formula file {source}"
    if now != run.formula_hash:
        return [f"{where} changed since the run (hash {run.formula_hash[:12]} -> {now[:12]})"]
    return []


def _value_changes(old: dict[str, Any], new: dict[str, Any]) -> list[str]:
    keys = sorted(set(old) | set(new))
    return [f"{k} {old.get(k)!r} -> {new.get(k)!r}" for k in keys if old.get(k) != new.get(k)]


def _ingredient_changes(session: Session, name: str, version: int | None) -> list[str]:
    rows = session.scalars(select(ChangeLogEntry).where(
        ChangeLogEntry.entity == "ingredient", ChangeLogEntry.entity_key == name,
        ChangeLogEntry.entity_version > (version or 0))
        .order_by(ChangeLogEntry.id)).all()
    return [f"{r.field or r.action} {r.old_value!r} -> {r.new_value!r} by {r.user} at "
            f"{_stamp(r.at)}" for r in rows]


def _library_changes(session: Session, run: ReviewRun, reference: ReferenceData) -> list[str]:
    try:
        item = input_from_text(run.formula_text, run.formula_name)
        resolved = resolve_all(session, [item])[0]
    except InvalidData as exc:
        return [f"the formula no longer resolves in the library: {exc.message}"]
    reference = with_list_entries(session, reference, [resolved])
    old = {(r["kind"], r["key"]): r for r in json.loads(run.records_json)}
    new = {(r["kind"], r["key"]): r for r in used_records(resolved, reference)}
    changes = []
    for key in sorted(set(old) | set(new)):
        kind, name = key
        if key not in new:
            changes.append(f"{kind} {name}: no longer in the library")
        elif key not in old:
            changes.append(f"{kind} {name}: added to the library since the run")
        elif old[key]["hash"] != new[key]["hash"]:
            if kind == "ingredient":
                logged = _ingredient_changes(session, name, old[key].get("version"))
                detail = "; ".join(logged) or "; ".join(
                    _value_changes(old[key]["values"], new[key]["values"]))
            else:
                detail = "; ".join(_value_changes(old[key]["values"], new[key]["values"]))
            changes.append(f"{kind} {name}: {detail}")
    return changes


def _state(session: Session, run: ReviewRun, newer: dict[int, ReviewRun],
           reference: ReferenceData) -> RunState:
    state = RunState(run.run_key, run.run_hash, run.formula_name, run.formula_source,
                     f"{run.profile_name} {run.profile_version}", _stamp(run.created_at),
                     run.created_by)
    if run.id in newer:
        state.state, state.superseded_by = "superseded", newer[run.id].run_key
    else:
        state.changes = _formula_changes(session, run) + _library_changes(session, run,
                                                                          reference)
        if state.changes:
            state.state = "stale"
    sigs = session.scalars(select(ReviewSignature).where(ReviewSignature.run_id == run.id)
                           .order_by(ReviewSignature.id)).all()
    state.signatures = [SignatureInfo(s.signer, s.signed_by, s.meaning, _stamp(s.signed_at),
                                      s.comment, s.run_hash) for s in sigs]
    return state


def _newer(session: Session) -> dict[int, ReviewRun]:
    runs = session.scalars(select(ReviewRun).where(ReviewRun.supersedes_run_id.is_not(None)))
    return {r.supersedes_run_id: r for r in runs if r.supersedes_run_id is not None}


def _find_run(session: Session, key: str) -> ReviewRun:
    key = key.strip().lower()
    run = session.scalar(select(ReviewRun).where(ReviewRun.run_key == key))
    if run is not None:
        return run
    keys = list(session.scalars(select(ReviewRun.run_key)))
    starts = [k for k in keys if key and k.startswith(key)]
    if len(starts) == 1:
        return session.scalars(select(ReviewRun).where(ReviewRun.run_key == starts[0])).one()
    close = starts or close_matches(key, keys, limit=3)
    hint = (f"did you mean {', '.join(close)}?" if close
            else "`formdb review status` lists the runs")
    raise NotFound(f"no review run {key!r}.", hint=hint)


def review_status(library: Library) -> list[RunState]:
    """``formdb review status``: every run with its state and its signatures, oldest first."""
    with library.read() as session:
        reference = queries.load_reference_data(session)
        newer = _newer(session)
        runs = session.scalars(select(ReviewRun).order_by(ReviewRun.id)).all()
        return [_state(session, run, newer, reference) for run in runs]


# ----- sign ---------------------------------------------------------------------------------

def sign_run(library: Library, key: str, meaning: str, signer: str, *, user: str,
             comment: str | None = None) -> SignatureInfo:
    """``formdb review sign``: a reviewer's sign-off on a current run (refused otherwise)."""
    meaning = meaning.strip().lower()
    if meaning not in MEANINGS:
        raise InvalidData(f"--meaning {meaning!r}: give one of {', '.join(MEANINGS)}.",
                          hint="the meaning is part of the signature (21 CFR 11.50)")
    signer = signer.strip()
    if not signer or len(signer) > 200 or any(not c.isprintable() for c in signer):
        raise InvalidData(f"--as {signer!r}: give the signer's printed name (1-200 printable "
                          "characters).", hint="for example --as 'Dr. A. Reviewer'")
    with library.write() as session:
        require(session, user, Action.SIGN_RUNS)
        run = _find_run(session, key)
        state = _state(session, run, _newer(session), queries.load_reference_data(session))
        if state.state == "superseded":
            raise Conflict(f"run {run.run_key} is superseded by run {state.superseded_by}; "
                           "sign the newer run.", hint=f"formdb review sign "
                           f"{state.superseded_by} ...")
        if state.state == "stale":
            raise Conflict(f"run {run.run_key} is stale: {state.changes[0]}"
                           + (f" (and {len(state.changes) - 1} more change(s))"
                              if len(state.changes) > 1 else ""),
                           hint="run the review again: formdb review run FILE")
        now = datetime.now(UTC).replace(microsecond=0)
        sig = ReviewSignature(run_id=run.id, run_hash=run.run_hash, signer=signer,
                              signed_by=user, meaning=meaning, signed_at=now,
                              comment=comment)
        append_sealed(session, sig)
        return SignatureInfo(signer, user, meaning, _stamp(now), comment, run.run_hash)


# ----- report -------------------------------------------------------------------------------


def filed_run(library: Library, key: str) -> FiledRun:
    from formdb.services.checking.labelling import declaration

    with library.read() as session:
        run = _find_run(session, key)
        reference = queries.load_reference_data(session)
        state = _state(session, run, _newer(session), reference)
        result = stored_result(run.result_json)
        try:
            resolved = resolve_all(session, [input_from_text(run.formula_text,
                                                             run.formula_name)])[0]
            label = declaration(resolved, reference, result.facts.settings
                                .label_jurisdiction)
        except InvalidData:
            label = None
        return FiledRun(state, run.formula_hash, run.library_hash, run.profile_name,
                        run.profile_version, run.formdb_version, result, label,
                        open_items(result, run.profile_name), json.loads(run.records_json))
