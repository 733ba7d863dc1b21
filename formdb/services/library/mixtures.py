"""Mixtures and supplier blends: an ingredient's declared constituents, from the command line
or a table, and the HLB and solubility worked out from them.

A declaration replaces the mixture's whole composition at once, so its sum can be judged: the
constituents must add up to 100 % (within 0.5 %), or, for a partial declaration such as an
allergen certificate, to at most 100 % (the rest stays with the mixture itself). A mixture may
not contain itself, directly or through another mixture. The label, the limits, the allergens
and the margin of safety read the constituents (``formdb.facts.composition``); the blend's HLB
(Griffin's additivity over the constituents that have one) and solubility (that of the largest
share) are stored on the mixture citing ``calc-constituents``, unless the mixture already has
a value from another source (a supplier's figure is kept; the computed one is reported).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import delete, select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData, NotFound, quoted
from formdb.schemas.admin import Action
from formdb.schemas.cells import format_number
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.numbers import ascii_float
from formdb.schemas.times import utc
from formdb.science.hlb import blend_hlb
from formdb.services.admin.access import require
from formdb.services.library.outside_changes import (
    OUTSIDE,
    Atom,
    marked,
    norm,
    server_atoms,
    unexplained,
)
from formdb.services.library.records import read_columns, unknown_key
from formdb.services.library.tables import Problem, raise_problems, write_table
from formdb.store.change_log import changes_of, log_entry
from formdb.store.models import ChangeLogEntry, Ingredient, MixtureConstituent, Source
from formdb.store.queries import find_ingredients, records_by_id

ENTITY = "mixture"
COMPUTED_SOURCE = "calc-constituents"
COMPUTED_CITATION = ("Computed from a mixture's declared constituents: HLB weight-averaged over "
                     "the constituents that have one (Griffin's additivity), solubility that of "
                     "the largest share by weight")
COLUMNS = ("mixture_inci", "constituent_inci", "percent", "source", "partial")
_TOLERANCE = 0.5  # % a full declaration may miss 100 by (rounded supplier figures)
# a computed HLB must rest on constituents making up at least this share of the blend; below
# it the figure would describe only a part (an emulsifying wax is mostly fatty alcohol)
MIN_HLB_SHARE = 90.0


@dataclass(frozen=True)
class Part:
    name: str
    percent: float
    source: str


@dataclass
class MixtureView:
    """A mixture with its constituents and what is computed from them."""

    name: str
    parts: list[tuple[IngredientRecord, float, str]]
    declared: float
    hlb: float | None = None
    hlb_note: str = ""
    solubility: str | None = None
    solubility_note: str = ""
    stored: dict[str, str] = field(default_factory=dict)  # property -> "value (source)"


@dataclass
class MixtureChanges:
    dry_run: bool = False
    declared: dict[str, list[str]] = field(default_factory=dict)  # mixture -> change lines
    unchanged: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def parse_part(text: str, default_source: str | None) -> Part:
    """``NAME=PERCENT[@SOURCE]`` from the command line."""
    name, sep, rest = text.rpartition("=")
    percent_text, _at, source = rest.partition("@")
    source = source.strip() or (default_source or "")
    if not sep or not name.strip():
        raise InvalidData(f"--part {text!r} is not NAME=PERCENT[@SOURCE].",
                          hint="e.g. --part 'Cetearyl Alcohol=80@supplier-x-coa-2025'")
    try:
        percent = ascii_float(percent_text.strip().rstrip("%").strip())
    except ValueError:
        raise InvalidData(f"--part {text!r}: {percent_text.strip()!r} is not a percentage.",
                          hint="write the % of the constituent in the mixture, e.g. 80") from None
    if not source:
        raise InvalidData(f"--part {text!r}: a constituent needs its source.",
                          hint="write NAME=PERCENT@KEY or add --source KEY")
    return Part(" ".join(name.split()), percent, source)


def _contains(session: Session) -> dict[int, set[int]]:
    out: dict[int, set[int]] = {}
    for mixture_id, constituent_id in session.execute(
            select(MixtureConstituent.mixture_id, MixtureConstituent.constituent_id)):
        out.setdefault(mixture_id, set()).add(constituent_id)
    return out


def _reaches(graph: Mapping[int, set[int]], start: int, goal: int) -> bool:
    seen, todo = set(), [start]
    while todo:
        node = todo.pop()
        if node == goal:
            return True
        if node not in seen:
            seen.add(node)
            todo.extend(graph.get(node, ()))
    return False


def _plan(session: Session, declarations: Mapping[str, tuple[list[tuple[int | None, Part]],
                                                               bool]], label: str,
          ) -> dict[int, list[tuple[int, Part]]]:
    """Validate every declaration (mixture name -> its parts with row numbers, partial?);
    every problem is collected and raised together."""
    names = [*declarations, *(p.name for parts, _ in declarations.values() for _r, p in parts)]
    found = find_ingredients(session, names)
    sources = set(session.scalars(select(Source.key))) | {"rule-of-thumb", "from-memory"}
    graph = _contains(session)
    problems: list[Problem] = []
    plans: dict[int, list[tuple[int, Part]]] = {}
    for mixture, (parts, partial) in declarations.items():
        first_row = parts[0][0] if parts else None
        owner = found.get(name_key(mixture))
        if owner is None:
            problems.append(Problem(label, f"{mixture!r} is not an ingredient in the library",
                                    first_row, "mixture_inci"))
            continue
        graph[owner.id] = set()  # the new declaration replaces the old one
        chosen: list[tuple[int, Part]] = []
        seen: dict[int, int | None] = {}
        total = 0.0
        share_refused = False
        for row, part in parts:
            rec = found.get(name_key(part.name))
            if rec is None:
                problems.append(Problem(label, f"{part.name!r} is not an ingredient in the "
                                        "library", row, "constituent_inci"))
                continue
            if not 0 < part.percent <= 100:
                share_refused = True
                problems.append(Problem(label, f"{part.name}: {format_number(part.percent)} % "
                                        "is not a share of a mixture (above 0, at most 100)",
                                        row, "percent"))
            if text := unknown_key(sources, part.source, part.name):
                problems.append(Problem(label, text, row, "source"))
            if rec.id == owner.id:
                problems.append(Problem(label, f"{owner.inci_name} cannot be a constituent of "
                                        "itself", row, "constituent_inci"))
                continue
            if rec.id in seen:
                problems.append(Problem(label, f"{rec.inci_name} is named twice in "
                                        f"{owner.inci_name}", row, "constituent_inci"))
                continue
            if _reaches(graph, rec.id, owner.id):
                problems.append(Problem(label, f"{rec.inci_name} itself contains "
                                        f"{owner.inci_name}; a mixture cannot contain itself "
                                        "through another", row, "constituent_inci"))
                continue
            seen[rec.id] = row
            total += part.percent
            chosen.append((rec.id, part))
        graph[owner.id] = {i for i, _p in chosen}
        if len(chosen) < len(parts) or share_refused:
            pass  # a part is already refused: its sum would only repeat the problem
        elif total > 100 + 1e-9:
            problems.append(Problem(label, f"the constituents of {owner.inci_name} add up to "
                                    f"{format_number(total)} %, more than 100 %",
                                    first_row, "percent"))
        elif not partial and abs(total - 100) > _TOLERANCE and chosen:
            problems.append(Problem(label, f"the constituents of {owner.inci_name} add up to "
                                    f"{format_number(total)} %, not 100 %; declare them all, "
                                    "or mark a partial declaration (an allergen certificate) "
                                    "as partial", first_row, "percent"))
        plans[owner.id] = chosen
    raise_problems(problems, hint="correct it and try again; nothing was written")
    return plans


def _describe(session: Session, mixture_id: int) -> dict[int, tuple[float, str]]:
    return {r.constituent_id: (r.percent, r.source_key) for r in session.scalars(
        select(MixtureConstituent).where(MixtureConstituent.mixture_id == mixture_id))}


def _write(session: Session, plans: Mapping[int, list[tuple[int, Part]]], report: MixtureChanges,
           *, user: str, reason: str | None, action: str) -> None:
    olds = {mixture_id: _describe(session, mixture_id) for mixture_id in plans}
    # every constituent named: a new one and one the declaration drops (the change log and
    # the report name it, not its row id)
    names = {i: r.inci_name for i, r in records_by_id(
        session, {*plans, *(c for parts in plans.values() for c, _p in parts),
                  *(c for old in olds.values() for c in old)}).items()}
    now = datetime.now(UTC)
    for mixture_id, parts in plans.items():
        old = olds[mixture_id]
        new = {cid: (p.percent, p.source) for cid, p in parts}
        lines = []
        for cid in sorted({*old, *new}, key=lambda i: names[i]):
            before = old.get(cid)
            after = new.get(cid)
            if before == after:
                continue
            lines.append((cid, before, after))
        mixture = names[mixture_id]
        if not lines:
            report.unchanged.append(mixture)
            continue
        report.declared[mixture] = [
            f"{names[cid]}: {_text(b) or '(none)'} -> {_text(a) or '(none)'}"
            for cid, b, a in lines]
        if report.dry_run:
            continue
        session.execute(delete(MixtureConstituent).where(
            MixtureConstituent.mixture_id == mixture_id))
        session.add_all(MixtureConstituent(mixture_id=mixture_id, constituent_id=cid,
                                           percent=p.percent, source_key=p.source)
                        for cid, p in parts)
        # one entry per mixture: each constituent whose share moved, % and source as data
        session.add(log_entry(
            at=now, user=user, entity=ENTITY, entity_key=mixture, entity_version=None,
            action=action, reason=reason, changes=[
                {"field": names[cid], "old": b and b[0], "new": a and a[0],
                 "old_source": b and b[1], "new_source": a and a[1]} for cid, b, a in lines]))
    session.flush()
    if not report.dry_run:
        for mixture_id in plans:
            report.notes += _store_computed(session, names[mixture_id], user=user)


def _text(value: tuple[float, str] | None) -> str:
    return "" if value is None else f"{format_number(value[0])} % ({value[1]})"


def declare(session: Session, mixture: str, parts: Sequence[Part], *, user: str,
            partial: bool = False, reason: str | None = None) -> MixtureChanges:
    """``mixture set``: the whole composition of one mixture (an empty list clears it)."""
    require(session, user, Action.CHANGE_LIBRARY)
    plans = _plan(session, {mixture: ([(None, p) for p in parts], partial)},
                  f"mixture {mixture!r}")
    report = MixtureChanges()
    _write(session, plans, report, user=user, reason=reason, action="declare")
    return report


def import_mixtures(session: Session, path: Path, *, user: str, reason: str | None = None,
                    dry_run: bool = False) -> MixtureChanges:
    """Each mixture named in the table gets exactly the constituents its rows give, all or none."""
    require(session, user, Action.CHANGE_LIBRARY)
    rows = read_columns(path, COLUMNS, COLUMNS[:4])
    grouped: dict[str, tuple[list[tuple[int | None, Part]], bool]] = {}
    problems = []
    for number, cells in rows:
        try:
            percent = ascii_float(cells.get("percent", "").rstrip("%").strip())
        except ValueError:
            problems.append(Problem(str(path), f"{cells.get('percent', '')!r} is not a "
                                    "percentage", number, "percent"))
            continue
        mixture = " ".join(cells.get("mixture_inci", "").split())
        partial_text = cells.get("partial", "").strip().casefold()
        if partial_text not in ("", "yes", "no", "y", "n", "true", "false"):
            problems.append(Problem(str(path), f"{partial_text!r} is not yes or no", number,
                                    "partial"))
        parts, partial = grouped.get(mixture, ([], False))
        parts.append((number, Part(" ".join(cells.get("constituent_inci", "").split()), percent,
                                   cells.get("source", "").strip())))
        grouped[mixture] = (parts, partial or partial_text in ("yes", "y", "true"))
    raise_problems(problems, hint="fix the file and import it again; nothing was written")
    plans = _plan(session, grouped, str(path))
    report = MixtureChanges(dry_run=dry_run)
    _write(session, plans, report, user=user, reason=reason or f"imported from {path.name}",
           action="import")
    return report


def _computed(record: IngredientRecord,
              parts: Sequence[tuple[IngredientRecord, float, str]]) -> dict[str, tuple[Any, str]]:
    out: dict[str, tuple[Any, str]] = {}
    with_hlb = [(pct, rec) for rec, pct, _s in parts if rec.p.hlb is not None]
    share = sum(pct for pct, _r in with_hlb)
    if with_hlb and share < MIN_HLB_SHARE:
        left = [rec.inci_name for rec, _p, _s in parts if rec.p.hlb is None]
        # a partial declaration (an allergen certificate) may leave the rest undeclared
        why = f"none for {', '.join(left)}" if left else "the rest is not declared"
        out["hlb"] = (None, f"not computed: only {format_number(share)} % of the blend has an "
                            f"HLB ({why})")
    elif with_hlb:
        value = round(blend_hlb([(pct, rec.p.hlb) for pct, rec in with_hlb]), 1)  # type: ignore[misc]
        terms = " + ".join(f"{format_number(pct)} % {rec.inci_name} (HLB {rec.p.hlb:g})"
                           for pct, rec in with_hlb)
        left = [rec.inci_name for rec, _p, _s in parts if rec.p.hlb is None]
        out["hlb"] = (value, f"computed from constituents: {terms}"
                      + (f"; without HLB: {', '.join(left)}" if left else ""))
    with_sol = [(pct, rec) for rec, pct, _s in parts if rec.p.solubility is not None]
    if with_sol:
        pct, largest = max(with_sol, key=lambda item: item[0])
        kinds = sorted({rec.p.solubility.value for _p, rec in with_sol})  # type: ignore[union-attr]
        note = (f"computed from constituents: {largest.inci_name} ({format_number(pct)} %) is "
                f"the largest share" + ("" if len(kinds) == 1 else
                                        f"; the constituents are {', '.join(kinds)}"))
        out["solubility"] = (largest.p.solubility.value, note)  # type: ignore[union-attr]
    return out


def _ensure_computed_source(session: Session) -> None:
    if session.get(Source, COMPUTED_SOURCE) is None:
        session.add(Source(key=COMPUTED_SOURCE, citation=COMPUTED_CITATION, evidence="estimated",
                           kind="estimate", seen="calc"))
        session.flush()


def _store_computed(session: Session, mixture: str, *, user: str) -> list[str]:
    """Store the blend's computed HLB and solubility unless a value from another source is
    there; returns what was done, one line each."""
    from formdb.services.library.ingredients import edit_ingredient

    view = show_mixture(session, mixture)
    record = find_ingredients(session, [mixture])[name_key(mixture)]
    computed = _computed(record, view.parts)
    notes, assignments = [], []
    for prop, (value, note) in computed.items():
        held = record.provenance.get(prop)
        if value is None:
            notes.append(f"{mixture}: {prop} {note}")
            if held is not None and held.source == COMPUTED_SOURCE:
                assignments.append((prop, ""))  # the earlier computed value no longer holds
            continue
        if held is not None and held.source != COMPUTED_SOURCE:
            notes.append(f"{mixture}: {prop} {value} computed from its constituents; the "
                         f"library keeps {getattr(record.p, prop)} from {held.source}")
            continue
        assignments += [(prop, str(value)), (f"{prop}_source", COMPUTED_SOURCE),
                        (f"{prop}_note", note)]
    if assignments:
        _ensure_computed_source(session)
        report = edit_ingredient(session, mixture, assignments, user=user, action="compute",
                                 reason="computed from the declared constituents")
        notes += [f"{mixture}: {c.describe()}" for c in report.changes
                  if not c.field.endswith("_note")]
    return notes


def refresh_blends_of(session: Session, constituent_id: int, *, user: str) -> list[str]:
    """Recompute the stored HLB and solubility of every blend that declares this constituent
    (after its own value changed); a blend holding another source's value is left alone."""
    ids = sorted(set(session.scalars(select(MixtureConstituent.mixture_id).where(
        MixtureConstituent.constituent_id == constituent_id))))
    notes: list[str] = []
    for record in records_by_id(session, ids).values():
        notes += _store_computed(session, record.inci_name, user=user)
    return notes


def show_mixture(session: Session, name: str) -> MixtureView:
    found = find_ingredients(session, [name]).get(name_key(name))
    if found is None:
        raise NotFound(f"no ingredient {quoted(name)} in the library.",
                       hint="`formdb ingredient list` shows the library's names")
    rows = list(session.scalars(select(MixtureConstituent).where(
        MixtureConstituent.mixture_id == found.id).order_by(MixtureConstituent.percent.desc())))
    records = records_by_id(session, [r.constituent_id for r in rows])
    parts = [(records[r.constituent_id], r.percent, r.source_key) for r in rows]
    view = MixtureView(found.inci_name, parts, sum(p for _r, p, _s in parts))
    computed = _computed(found, parts)
    if "hlb" in computed:
        view.hlb, view.hlb_note = computed["hlb"]
    if "solubility" in computed:
        view.solubility, view.solubility_note = computed["solubility"]
    for prop in ("hlb", "solubility"):
        prov = found.provenance.get(prop)
        if prov is not None:
            value = getattr(found.p, prop)
            shown = value.value if hasattr(value, "value") else format_number(value)
            view.stored[prop] = f"{shown} ({prov.source}, {prov.evidence.value})"
    return view


def list_mixtures(session: Session) -> list[MixtureView]:
    ids = sorted(set(session.scalars(select(MixtureConstituent.mixture_id))))
    names = [r.inci_name for r in records_by_id(session, ids).values()]
    return [show_mixture(session, n) for n in sorted(names, key=str.casefold)]


def mixture_history(session: Session, name: str) -> list[Any]:
    from formdb.services.library.records import RecordHistoryEntry

    view = show_mixture(session, name)
    rows = session.scalars(select(ChangeLogEntry).where(
        ChangeLogEntry.entity == ENTITY, ChangeLogEntry.entity_key == view.name)
        .order_by(ChangeLogEntry.at, ChangeLogEntry.id))
    def share(change: dict[str, Any], side: str) -> str | None:
        percent, source = change.get(side), change.get(f"{side}_source")
        return None if percent is None else _text((percent, source or ""))

    held = list(rows)
    logged = [(r.user, str(change.get("field")), part, norm(change.get(f"old{suffix}")),
               norm(change.get(f"new{suffix}")))
              for r in held for change in changes_of(r.payload)
              for part, suffix in (("value", ""), ("source", "_source"))
              if norm(change.get(f"old{suffix}")) != norm(change.get(f"new{suffix}"))]
    entries = [RecordHistoryEntry(r.at, r.user, r.action, change.get("field"),
                                  share(change, "old"), share(change, "new"), r.reason)
               for r in held for change in changes_of(r.payload) or [{}]]
    entries += [RecordHistoryEntry(utc(c.at), c.login, OUTSIDE,
                                   field if part == "value" else f"{field} source", old, new,
                                   marked(c.login, utc(c.at)))
                for c, atoms in _outside(session, view.name, logged)
                for _login, field, part, old, new in atoms]
    return sorted(entries, key=lambda e: utc(e.at))


def _outside(session: Session, name: str, logged: list[Atom]) -> list[tuple[Any, list[Atom]]]:
    """Server-recorded changes of the mixture's constituents its change log does not hold."""
    mixture_id = session.scalar(select(Ingredient.id).where(Ingredient.inci_name == name))

    def atoms(old: Mapping[str, Any] | None, new: Mapping[str, Any] | None,
              ) -> list[tuple[str, str, str | None, str | None]]:
        either = new or old or {}
        constituent = session.get(Ingredient, either.get("constituent_id"))
        field = constituent.inci_name if constituent else str(either.get("constituent_id"))
        out = []
        for part, column in (("value", "percent"), ("source", "source_key")):
            before = norm(old.get(column)) if old else None
            after = norm(new.get(column)) if new else None
            if before != after:
                out.append((field, part, before, after))
        return out

    server = server_atoms(session, {"mixture_constituents": (
        ("mixture_id", "constituent_id"), lambda row: row.get("mixture_id") == mixture_id,
        atoms)})
    return list(unexplained(server, logged))


def export_mixtures(session: Session, path: Path) -> int:
    rows = []
    for view in list_mixtures(session):
        partial = "yes" if abs(view.declared - 100) > _TOLERANCE else ""
        rows += [[view.name, rec.inci_name, format_number(pct), source, partial]
                 for rec, pct, source in view.parts]
    write_table(path, COLUMNS, rows, sheet="mixtures")
    return len(rows)
