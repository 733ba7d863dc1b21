"""Pre-trial review records: an immutable check run, its sign-offs, and whether it still holds.

A run keeps the formula text as checked, the hash of every library record the check used
(ingredients by name, version and values; the limits, exposure row, toxicology rows, label
thresholds and mixture constituents relevant to the formula; the in-house measured required HLB
its oil phase takes) and the whole result. A run is never
updated: a newer run of the same formula name supersedes it, and its state is worked out when
asked: stale when the formula or any record used changed since, naming what changed.

Every run records its profile by content hash and origin and the review policy in force
(services.review.policy); a run under another profile than the policy's is a draft, which is
never signed and never supersedes a signable run. A sign-off is the signer's Ed25519 signature
(services.review.keys) over the run hash, the meaning, the reasons, the signer and the UTC time
(21 CFR 11.50 and 11.70: the signature shows who, when and what it means, and is linked to its
record). "approved" needs no open item, or a written justification for each; "rejected" needs a
reason; an author approves their own run only if the policy allows it; a later signature by the
same person supersedes their earlier one, which stays shown. Status and the filed report verify
what they show: the run's hash and seal, and every signature against the enrolled keys.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from sqlalchemy import inspect, or_, select
from sqlalchemy.orm import Session

from formdb import __version__
from formdb.errors import Conflict, Forbidden, InvalidData, NotFound, quoted
from formdb.facts.measured_rhlb import measurements_taken
from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, chosen_profile
from formdb.schemas.bounds import MAX_TOML_BYTES, UnreadableInput, read_input
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.numbers import ascii_digits
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import CheckResult
from formdb.schemas.review import (
    FiledRun,
    Policy,
    ReviewStatus,
    RunState,
    RunSummary,
    SignatureInfo,
)
from formdb.schemas.suggest import close_matches
from formdb.schemas.times import utc
from formdb.services.admin.access import is_open, roles_of
from formdb.services.checking.flow import FormulaInput, input_from_text, read_inputs, resolve_all
from formdb.services.library.formula_files import content_hash
from formdb.services.lists.reading import with_lists
from formdb.services.review import keys
from formdb.services.review.audit import append_sealed, verify_table
from formdb.services.review.policy import MEANINGS, current_policy, policy_json
from formdb.store import queries
from formdb.store.change_log import changes_of, log_entry
from formdb.store.formulas import get_formula
from formdb.store.library import Library
from formdb.store.models import ChangeLogEntry, ReviewRun, ReviewSignature

DEFAULT_PROFILE = "strict"
STORED = "stored:"
SHOWN_CHAINS = ("review_runs", "review_signatures", "key_enrolments", "policy_versions")
# status and the filed report also read the change log (what changed since a run, which
# changes were logged), so they verify it too; signing checks only the review chains
READ_CHAINS = ("change_log", *SHOWN_CHAINS)


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
    todo = list(ingredients.values())
    while todo:  # a constituent that is a declared mixture itself is recorded in turn
        mixture = todo.pop()
        parts = reference.constituents.get(name_key(mixture.inci_name), ())
        for part in parts:
            if part.record.inci_name not in ingredients:
                ingredients[part.record.inci_name] = part.record
                todo.append(part.record)
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
            # a record without a study duration hashes as it did before durations were read
            put("toxicology", tox.key, tox.model_dump(
                mode="json", exclude=set() if tox.duration else {"duration"}))
    for rec in ingredients.values():
        for entry in reference.list_entries.get(name_key(rec.inci_name), ()):
            put("list entry", entry.label, {k: v for k, v in entry.cells.items()
                                            if k != "Update Date"})
    for measured in measurements_taken(formula, reference):
        put("measured required HLB", f"{measured.emulsion_type} oil phase",
            {"series": measured.series, "source": measured.source_key,
             "oils": [list(member) for member in measured.oils], "value": measured.value,
             "uncertainty": measured.uncertainty})
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
            raise NotFound(f"no stored formula {quoted(source[len(STORED):])}.",
                           hint="`formdb formula list` shows the stored formulas")
        return input_from_text(stored.content, f"{STORED}{stored.name}")
    return read_inputs([Path(source)])[0]


RESULT_KEYS = ("formula", "source", "content_hash", "category", "product", "intended_type", "ph",
               "profile", "facts", "findings")


def stored_result(result_json: str) -> CheckResult:
    """The CheckResult back from a run's contract JSON (numbers as the reports round them)."""
    data = json.loads(result_json)
    return CheckResult.model_validate({k: data[k] for k in RESULT_KEYS if k in data})


def _run_content(run: ReviewRun, supersedes_hash: str | None) -> dict[str, Any]:
    """What the run hash covers, rebuilt from the stored columns (older runs lack the profile
    hash, origin and policy, and their hash never covered them)."""
    content = {"formula_name": run.formula_name, "formula_source": run.formula_source,
               "formula_hash": run.formula_hash, "library_hash": run.library_hash,
               "profile": [run.profile_name, run.profile_version],
               "formdb_version": run.formdb_version,
               "created_at": utc(run.created_at).isoformat(), "created_by": run.created_by,
               "findings": json.loads(run.findings_json), "supersedes": supersedes_hash}
    if run.profile_hash is not None:
        content.update({"profile_hash": run.profile_hash, "profile_origin": run.profile_origin,
                        "policy": run.policy_json, "signable": run.signable})
    return content


def _latest(session: Session, name: str, signable: bool) -> ReviewRun | None:
    """The newest run of ``name`` of the same kind: a draft never supersedes a signable run."""
    kind = (or_(ReviewRun.signable.is_(True), ReviewRun.signable.is_(None)) if signable
            else ReviewRun.signable.is_(False))
    return session.scalars(select(ReviewRun).where(ReviewRun.formula_name == name, kind)
                           .order_by(ReviewRun.id.desc())).first()


def run_review(library: Library, source: str, profile: Profile | str | None = None, *,
               user: str) -> RunSummary:
    """``formdb review run``: check ``source`` (a path or stored:NAME) and store the run."""
    chosen = chosen_profile(profile, DEFAULT_PROFILE)
    if not source.startswith(STORED):
        item = read_inputs([Path(source)])[0]
        label = str(Path(source).resolve())
    with library.write() as session:
        if source.startswith(STORED):
            item = _read(source, session)
            label = item.label
        policy = current_policy(session)
        signable = chosen.content_hash == policy.profile_hash
        reference = queries.load_reference_data(session)
        resolved = resolve_all(session, [item])[0]
        reference = with_lists(session, reference, [resolved])
        result = check_resolved(resolved, reference, chosen)
        records = used_records(resolved, reference)
        now = datetime.now(UTC)
        findings = [f.model_dump(mode="json") for f in result.findings]
        before = _latest(session, resolved.name, signable)
        run = ReviewRun(
            run_key="", run_hash="", formula_name=resolved.name,
            formula_source=label, formula_hash=content_hash(item.text),
            formula_text=item.text, library_hash=library_hash(records),
            records_json=json.dumps(records, sort_keys=True, ensure_ascii=False),
            profile_name=chosen.name, profile_version=chosen.version,
            formdb_version=__version__, created_at=now, created_by=user,
            findings_json=json.dumps(findings, sort_keys=True, ensure_ascii=False),
            result_json=json.dumps(result.to_contract_json(), ensure_ascii=False),
            supersedes_run_id=before.id if before else None,
            profile_hash=chosen.content_hash, profile_origin=chosen.origin,
            policy_json=policy_json(policy), signable=signable)
        run_hash = _digest(_run_content(run, before.run_hash if before else None))
        run.run_key, run.run_hash = run_hash[:12], run_hash
        append_sealed(session, run)
        counts = result.severity_counts()
        return RunSummary(run.run_key, run_hash, resolved.name,
                          verdict(result, chosen.name), counts["error"], counts["warning"],
                          len(open_items(result, chosen.name)), len(records),
                          before.run_key if before else None, signable,
                          f"{chosen.name} {chosen.version}", chosen.content_hash,
                          chosen.origin, f"{policy.profile_name} {policy.profile_version} "
                          f"({policy.profile_hash[:12]})")


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
            now = content_hash(read_input(Path(source), MAX_TOML_BYTES).decode("utf-8"))
        except (OSError, UnicodeDecodeError, UnreadableInput) as exc:
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
    return [f"{_change_text(change) if change else r.action} by {r.user} at {_stamp(r.at)}"
            for r in rows for change in (changes_of(r.payload) or [{}])]


def _change_text(change: dict[str, Any]) -> str:
    """One logged field change as 'field old -> new' (its source and note when they moved)."""
    parts = [f"{change.get('field')} {change.get('old')!r} -> {change.get('new')!r}"
             if "old" in change or "new" in change else str(change.get("field"))]
    parts += [f"{part} {change.get('old_' + part)!r} -> {change.get('new_' + part)!r}"
              for part in ("source", "note", "evidence")
              if f"new_{part}" in change or f"old_{part}" in change]
    return ", ".join(parts)


def _library_changes(session: Session, run: ReviewRun, reference: ReferenceData) -> list[str]:
    try:
        item = input_from_text(run.formula_text, run.formula_name)
        resolved = resolve_all(session, [item])[0]
    except InvalidData as exc:
        return [f"the formula no longer resolves in the library: {exc.message}"]
    reference = with_lists(session, reference, [resolved])
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


# the change-log entities that record a change of each kind of record a run uses
LOGGED_AS: dict[str, tuple[str, ...]] = {
    "ingredient": ("ingredient", "mixture"), "constituent": ("mixture", "constituent"),
    "limit": ("limit", "list", "list entry"), "exposure": ("exposure",),
    "toxicology": ("toxicology",), "label threshold": ("label threshold",),
    "measured required HLB": ("screening",)}


def _unlogged_changes(session: Session, run: ReviewRun, changes: list[str]) -> list[str]:
    """Records a run used that changed since it with no change-log entry for them: changed
    around formdb (plain SQL, a file edit), which the status and the report call BROKEN."""
    changed = [c.split(":", 1)[0] for c in changes if not c.startswith("the ")]
    if not changed:
        return []
    log = session.execute(select(ChangeLogEntry.entity, ChangeLogEntry.entity_key).where(
        ChangeLogEntry.at >= run.created_at)).all()
    out = []
    for what in changed:
        kind = next((k for k in sorted(LOGGED_AS, key=len, reverse=True)
                     if what.startswith(k + " ")), None)
        if kind is None:
            continue
        name = what[len(kind) + 1:]
        owner = name.split(" > ", 1)[0]
        entities = LOGGED_AS[kind]
        logged = any(entity in entities and (key in (name, owner) or key.startswith(owner)
                                             or entity.startswith("list")
                                             or entity == "screening")
                     for entity, key in log)
        if not logged:
            out.append(f"{kind} {name} changed since the run with no change-log entry: "
                       "changed around formdb")
    return out


def _kind(run: ReviewRun) -> str:
    return "legacy" if run.signable is None else ("signable" if run.signable else "draft")


class _Checks:
    """What the shown records are verified against, read once per snapshot: each sealed
    chain's problems by row id, and the enrolled keys."""

    def __init__(self, session: Session, chains: tuple[str, ...] = SHOWN_CHAINS) -> None:
        present = set(inspect(session.connection()).get_table_names())
        self.chains = [verify_table(session, t) for t in chains if t in present]
        self.rows = {(p.table, p.row_id): p.detail for c in self.chains for p in c.problems}
        self.enrolments = keys.enrolments(session) if "key_enrolments" in present else []
        self.hashes = {int(i): str(h) for i, h in
                       session.execute(select(ReviewRun.id, ReviewRun.run_hash)).all()}

    def problems(self) -> list[str]:
        return [f"{c.table}: {p.detail}" for c in self.chains for p in c.problems]


def run_record_problems(run: ReviewRun, hashes: dict[int, str]) -> list[str]:
    """Why a stored run no longer matches its own hashes (``hashes``: run id -> run hash, for
    the run it supersedes); none when it does. The chain's seal is checked apart from this:
    a rewrite resealed with the public hash passes the chain but not this."""
    broken = []
    before = hashes.get(run.supersedes_run_id) if run.supersedes_run_id else None
    if _digest(_run_content(run, before)) != run.run_hash or run.run_key != run.run_hash[:12]:
        broken.append("the run's content no longer matches its run hash")
    if content_hash(run.formula_text) != run.formula_hash:
        broken.append("the stored formula text no longer matches its formula hash")
    return broken


def _run_broken(run: ReviewRun, checks: _Checks) -> list[str]:
    seal = checks.rows.get(("review_runs", run.id))
    return [f"seal: {seal}"] * bool(seal) + run_record_problems(run, checks.hashes)


def _signature(sig: ReviewSignature, run: ReviewRun, checks: _Checks) -> SignatureInfo:
    check = keys.check_signature(sig, run.run_hash, checks.enrolments, run.created_at)
    seal = checks.rows.get(("review_signatures", sig.id))
    if seal and check == "valid":
        check = f"INVALID: {seal}"
    waivers = json.loads(sig.waivers_json) if sig.waivers_json else []
    return SignatureInfo(sig.signer, sig.signed_by, sig.meaning, _stamp(sig.signed_at),
                         sig.comment, sig.run_hash, sig.id, sig.key_id, waivers, check)


def _state(session: Session, run: ReviewRun, newer: dict[int, ReviewRun],
           reference: ReferenceData, checks: _Checks) -> RunState:
    state = RunState(run.run_key, run.run_hash, run.formula_name, run.formula_source,
                     f"{run.profile_name} {run.profile_version}", _stamp(run.created_at),
                     run.created_by, kind=_kind(run), profile_hash=run.profile_hash,
                     profile_origin=run.profile_origin, broken=_run_broken(run, checks))
    if run.id in newer:
        state.state, state.superseded_by = "superseded", newer[run.id].run_key
    else:
        library = _library_changes(session, run, reference)
        state.changes = _formula_changes(session, run) + library
        state.broken += _unlogged_changes(session, run, library)
        if state.changes:
            state.state = "stale"
    sigs = session.scalars(select(ReviewSignature).where(ReviewSignature.run_id == run.id)
                           .order_by(ReviewSignature.id)).all()
    shown = [_signature(s, run, checks) for s in sigs]
    latest: dict[str, int] = {}
    for info in shown:  # a later signature by the same person supersedes the earlier one
        latest[info.signed_by] = info.number
    state.signatures = [replace(info, superseded_by=latest[info.signed_by])
                        if latest[info.signed_by] != info.number else info for info in shown]
    return state


def _newer(session: Session) -> dict[int, ReviewRun]:
    runs = session.scalars(select(ReviewRun).where(ReviewRun.supersedes_run_id.is_not(None)))
    return {r.supersedes_run_id: r for r in runs if r.supersedes_run_id is not None}


def _find_run(session: Session, given: str) -> ReviewRun:
    key = given.strip().lower()
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
    raise NotFound(f"no review run {quoted(given)}.", hint=hint)


def review_status(library: Library) -> ReviewStatus:
    """``formdb review status``: every run with its state and signatures, oldest first, each
    verified (run hash, seal, signatures), and the policy in force."""
    with library.read() as session:
        reference = queries.load_reference_data(session)
        newer = _newer(session)
        checks = _Checks(session, READ_CHAINS)
        runs = session.scalars(select(ReviewRun).order_by(ReviewRun.id)).all()
        return ReviewStatus([_state(session, run, newer, reference, checks) for run in runs],
                            checks.problems(), current_policy(session))


# ----- sign ---------------------------------------------------------------------------------

def _refuse(session: Session, user: str, what: str, role: str) -> None:
    """Refuse a signature for want of a role, and keep the refusal in the change log."""
    session.rollback()
    session.add(log_entry(at=datetime.now(UTC), user=user, entity="access", entity_key=user,
                          entity_version=None, action="refused", attempted=what,
                          reason=f"needs role {role}"))
    session.commit()
    raise Forbidden(f"{user} may not {what}: that needs the role {role}.",
                    hint=f"ask an admin: formdb user grant {user} {role} --yes")


def waivers_for(items: list[dict[str, Any]], justifications: list[str]) -> list[dict[str, Any]]:
    """Each open item with its written justification (``N=TEXT`` by the item's number, or
    ``RULE=TEXT`` for every item of that rule, an item's own number winning); every open item
    must have one."""
    given: dict[int, str] = {}
    by_number = sorted(justifications, key=lambda pair: pair.partition("=")[0].strip().isdigit())
    for pair in by_number:  # rule-wide first, so an item's own justification wins
        target, sep, why = pair.partition("=")
        target, why = target.strip(), why.strip()
        if not sep or not why:
            raise InvalidData(f"--justify {pair!r}: give ITEM=TEXT, ITEM being an open item's "
                              "number or rule code.", hint="for example --justify "
                              "3='NOAEL from the supplier dossier, filed'")
        if ascii_digits(target):
            numbers = [int(target)] if 1 <= int(target) <= len(items) else []
        else:
            numbers = [n for n, item in enumerate(items, 1)
                       if item["rule"].casefold() == target.casefold()]
        if not numbers:
            raise InvalidData(f"--justify {target}: no open item {target} on this run "
                              f"(it has {len(items)}).",
                              hint="`formdb review report RUN` lists the open items")
        for number in numbers:
            given[number] = why
    missing = [f"{n} ({item['rule']})" for n, item in enumerate(items, 1) if n not in given]
    if missing:
        raise InvalidData(f"approved with {len(items)} open item(s): no justification for item "
                          f"{', '.join(missing)}.", hint="justify each with --justify N=TEXT, "
                          "or sign 'reviewed' or 'rejected'")
    return [{"item": n, "rule": item["rule"], "severity": item["severity"],
             "message": item["message"], "justification": given[n]}
            for n, item in enumerate(items, 1)]


def sign_run(library: Library, key: str, meaning: str, *, user: str,
             signing_key: Ed25519PrivateKey, reason: str | None = None,
             justifications: list[str] | None = None,
             printed_name: str | None = None) -> SignatureInfo:
    """``formdb review sign``: a signer's Ed25519 signature on a current, signable run."""
    meaning = meaning.strip().lower()
    if meaning not in MEANINGS:
        raise InvalidData(f"--meaning {meaning!r}: give one of {', '.join(MEANINGS)}.",
                          hint="the meaning is part of the signature (21 CFR 11.50)")
    reason = (reason or "").strip() or None
    if meaning == "rejected" and reason is None:
        raise InvalidData("--meaning rejected needs --reason: say why the run is rejected.",
                          hint="the reason is signed and printed with the signature")
    if justifications and meaning != "approved":
        raise InvalidData("--justify goes with --meaning approved (it waives open items).",
                          hint="give the reason with --reason")
    with library.write() as session:
        policy = current_policy(session)
        role = policy.roles[meaning]
        if not is_open(session) and role not in roles_of(session, user):
            _refuse(session, user, f"sign runs {meaning}", role)
        run = _find_run(session, key)
        _signable(run, policy)
        checks = _Checks(session)
        state = _state(session, run, _newer(session), queries.load_reference_data(session),
                       checks)
        if state.broken:
            raise Conflict(f"run {run.run_key} does not verify ({state.broken[0]}); it cannot "
                           "be signed.", hint="formdb audit verify shows what was altered")
        if state.state == "superseded":
            raise Conflict(f"run {run.run_key} is superseded by run {state.superseded_by}; "
                           "sign the newer run.", hint=f"formdb review sign "
                           f"{state.superseded_by} ...")
        if state.state == "stale":
            raise Conflict(f"run {run.run_key} is stale: {state.changes[0]}"
                           + (f" (and {len(state.changes) - 1} more change(s))"
                              if len(state.changes) > 1 else ""),
                           hint="run the review again: formdb review run FILE")
        if meaning == "approved" and run.created_by == user and not policy.author_may_approve:
            raise Forbidden(f"{user} made run {run.run_key} and may not approve it: the review "
                            "policy asks for another person's approval.",
                            hint="another reviewer signs 'approved'; you may sign 'reviewed'")
        items = open_items(stored_result(run.result_json), run.profile_name)
        waivers = (waivers_for(items, justifications or [])
                   if meaning == "approved" and items else [])
        now = datetime.now(UTC).replace(microsecond=0)
        enrol = keys.signing_enrolment(session, user, signing_key, now)
        if printed_name is not None and printed_name.strip() != enrol.printed_name:
            raise InvalidData(f"--as {printed_name.strip()!r}: your key is enrolled under the "
                              f"name {enrol.printed_name!r}.", hint="leave out --as; the "
                              "printed name comes from your enrolled key")
        signed = keys.signed_text(run_hash=run.run_hash, meaning=meaning, reason=reason,
                                  waivers=waivers, login=user, printed_name=enrol.printed_name,
                                  key_id=enrol.key_id, signed_at=now)
        sig = ReviewSignature(run_id=run.id, run_hash=run.run_hash, signer=enrol.printed_name,
                              signed_by=user, meaning=meaning, signed_at=now, comment=reason,
                              waivers_json=json.dumps(waivers, ensure_ascii=False)
                              if waivers else None, key_id=enrol.key_id,
                              signature=keys.sign_bytes(signing_key, signed))
        append_sealed(session, sig)
        earlier = [s.number for s in state.signatures if s.signed_by == user]
        return SignatureInfo(enrol.printed_name, user, meaning, _stamp(now), reason,
                             run.run_hash, sig.id, enrol.key_id, waivers, "valid",
                             supersedes=earlier[-1] if earlier else None)


def _signable(run: ReviewRun, policy: Policy) -> None:
    """Refuse a draft, or a run whose profile is not the one the policy in force names."""
    if run.profile_hash == policy.profile_hash:
        return
    what = ("a draft" if run.signable is False else
            "no longer signable" if run.signable else "from before the review policy")
    raise Conflict(f"run {run.run_key} is {what}: its profile {run.profile_name} "
                   f"{run.profile_version} ({(run.profile_hash or 'no hash')[:12]}) is not the "
                   f"profile the review policy names ({policy.profile_name} "
                   f"{policy.profile_version}, {policy.profile_hash[:12]}).",
                   hint=f"run the review with --profile {policy.profile_name}")


# ----- report -------------------------------------------------------------------------------


def filed_run(library: Library, key: str) -> FiledRun:
    """What ``formdb review report`` files: the run, verified, with the chain heads now."""
    from formdb.services.checking.labelling import declaration

    with library.read() as session:
        run = _find_run(session, key)
        reference = queries.load_reference_data(session)
        checks = _Checks(session, READ_CHAINS)
        state = _state(session, run, _newer(session), reference, checks)
        result = stored_result(run.result_json)
        try:
            resolved = resolve_all(session, [input_from_text(run.formula_text,
                                                             run.formula_name)])[0]
            label = declaration(resolved, reference, result.facts.settings
                                .label_jurisdiction)
        except InvalidData:
            label = None
        heads = [(c.table, c.head_id, c.head_hash, c.intact) for c in checks.chains]
        return FiledRun(state, run.formula_hash, run.library_hash, run.profile_name,
                        run.profile_version, run.formdb_version, result, label,
                        open_items(result, run.profile_name), json.loads(run.records_json),
                        json.loads(run.policy_json) if run.policy_json else None, heads,
                        checks.problems())
