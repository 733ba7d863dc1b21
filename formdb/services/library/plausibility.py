"""Plausibility of ingredient input: values that are allowed but unusual enough to be a typo.

These are warnings, not errors: the command that writes refuses them until the user confirms
(``--accept-unusual``), so a slip (HLB 15.5 typed for an oil-soluble W/O emulsifier) is caught
while a real oddity can still be recorded. Each check is a rule of thumb and says so:

- HLB against solubility: above 10 but oil-soluble, or below 6 but water-soluble (Griffin's HLB
  classes: low HLB is oil-soluble, high HLB water-soluble);
- a required HLB outside 1-20 (Griffin's scale; rule of thumb for oils);
- a density outside the usual range of every role the ingredient has (science.density.USUAL_DENSITY,
  also the bounds of a missing density's estimate: rule of thumb, set around the seed's spread);
- a typical use range above the highest maximum the limit lists allow for the substance, or a
  substance the lists prohibit (seed limits and the list snapshots in force);
- a CAS number that the lists (or another library ingredient) give to a different substance;
- a name that differs from another ingredient's name only by case, spacing, punctuation or
  look-alike characters (formdb.schemas.lookalike).

``weaker_evidence`` is not a refusal but a note: a value whose source the library has checked
(published, supplier, measured, estimated, by definition) that comes to rest on an unchecked one
(from memory, rule of thumb, a secondary copy). A supplier table or an edit that repeats a value
"from memory" would otherwise weaken, unremarked among the changes, what verdicts rest on.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.schemas.cells import format_number
from formdb.schemas.ingredient import IngredientIn, name_key
from formdb.schemas.lookalike import look_alike_key
from formdb.schemas.vocab import UNVERIFIED_EVIDENCE, Evidence, Solubility
from formdb.science.density import USUAL_DENSITY
from formdb.store.models import Ingredient, IngredientCas, IngredientName, LimitEntry
from formdb.store.queries import property_columns

ACCEPT_OPTION = "--accept-unusual"

HLB_OIL_ABOVE = 10.0
HLB_WATER_BELOW = 6.0
REQUIRED_HLB_RANGE = (1.0, 20.0)


@dataclass(frozen=True)
class Warning_:
    """One unusual value: the field it concerns and what is unusual about it."""

    field: str
    text: str


def value_warnings(item: IngredientIn) -> list[Warning_]:
    """The checks that need nothing but the ingredient itself."""
    p = item.properties
    out: list[Warning_] = []
    if p.hlb is not None and p.solubility is not None:
        if p.hlb > HLB_OIL_ABOVE and p.solubility == Solubility.OIL:
            out.append(Warning_("hlb", f"HLB {format_number(p.hlb)} is above "
                                f"{HLB_OIL_ABOVE:g} but the solubility is oil; a high-HLB "
                                "emulsifier is water-soluble (check the HLB or the solubility)"))
        if p.hlb < HLB_WATER_BELOW and p.solubility == Solubility.WATER:
            out.append(Warning_("hlb", f"HLB {format_number(p.hlb)} is below "
                                f"{HLB_WATER_BELOW:g} but the solubility is water; a low-HLB "
                                "emulsifier is oil-soluble (check the HLB or the solubility)"))
    low, high = REQUIRED_HLB_RANGE
    for prop in ("required_hlb_ow", "required_hlb_wo"):
        value = getattr(p, prop)
        if value is not None and not low <= value <= high:
            out.append(Warning_(prop, f"{prop} {format_number(value)} is outside "
                                f"{low:g}-{high:g}, where required HLB values lie"))
    if p.density is not None:
        ranges = [(r.value, USUAL_DENSITY[r.value]) for r in item.roles
                  if r.value in USUAL_DENSITY]
        if ranges and not any(lo <= p.density <= hi for _r, (lo, hi) in ranges):
            usual = "; ".join(f"{role} {lo:g}-{hi:g}" for role, (lo, hi) in ranges)
            out.append(Warning_("density", f"density {format_number(p.density)} g/mL is "
                                f"outside the usual range for its role ({usual} g/mL)"))
    return out


def _names(item: IngredientIn) -> list[str]:
    return [item.inci_name, *item.synonyms]


def _legal_maxima(session: Session, item: IngredientIn) -> list[tuple[float | None, str]]:
    """(maximum %, where) of every limit that names the substance; None for a prohibition."""
    from formdb.store.lists import cas_match, entries_matching, name_match

    keys = {name_key(n) for n in _names(item)}
    out: list[tuple[float | None, str]] = [
        (row.max_percent, f"{row.list_name} entry {row.entry}")
        for row in session.scalars(select(LimitEntry))
        if row.max_percent is not None  # a row that limits the pH only sets no maximum
        and keys & {name_key(n) for n in row.ingredients.split(";") if n.strip()}]
    matches = {name_match(n) for n in _names(item)} | {cas_match(c) for c in item.cas_numbers}
    seen = set()
    for entries in entries_matching(session, matches).values():
        for entry in entries:
            where = f"{entry.jurisdiction} Annex {entry.annex} entry {entry.ref}"
            if where in seen:
                continue
            seen.add(where)
            if entry.annex == "II":
                out.append((None, where))
            out += [(part.max_percent, where) for part in entry.parts
                    if part.max_percent is not None]
    return out


def list_warnings(session: Session, item: IngredientIn) -> list[Warning_]:
    """Use range against the legal maxima, and CAS numbers the lists give to another substance."""
    out: list[Warning_] = []
    use_max = item.properties.use_max_percent
    if use_max is not None:
        maxima = _legal_maxima(session, item)
        banned = [where for value, where in maxima if value is None]
        allowed = [(value, where) for value, where in maxima if value is not None]
        if banned:
            out.append(Warning_("use_max_percent", f"the lists prohibit this substance "
                                f"({'; '.join(banned)}), yet a use range is given"))
        elif allowed:
            top, where = max(allowed, key=lambda a: a[0])
            if use_max > top + 1e-9:
                out.append(Warning_("use_max_percent", f"use up to {format_number(use_max)} % "
                                    f"is above the highest legal maximum in the lists, "
                                    f"{format_number(top)} % ({where})"))
    if item.cas_numbers:
        out += _cas_warnings(session, item)
    return out


def _cas_warnings(session: Session, item: IngredientIn) -> list[Warning_]:
    from formdb.store.lists import cas_match, entries_matching

    own = {name_key(n) for n in _names(item)}
    series = {_series(n) for n in _names(item)}
    out: list[Warning_] = []
    warned: set[str] = set()
    found = entries_matching(session, [cas_match(c) for c in item.cas_numbers])
    for cas in item.cas_numbers:
        for entry in found.get(cas_match(cas), ()):
            named = [n for n in entry.inci_names if n.strip()]
            if named and not own & {name_key(n) for n in named}:
                out.append(Warning_("cas", f"CAS {cas} belongs to {', '.join(named[:3])} in "
                                    f"{entry.jurisdiction} Annex {entry.annex} entry "
                                    f"{entry.ref}, not to {item.inci_name}"))
                warned.add(cas)
                break
    others = session.execute(
        select(IngredientCas.cas, Ingredient.inci_name)
        .join(Ingredient, Ingredient.id == IngredientCas.ingredient_id)
        .where(IngredientCas.cas.in_(list(item.cas_numbers)))).all()
    for cas, owner in others:
        # members of one polymer series (Steareth-2, Steareth-20) share a generic CAS number
        if cas not in warned and name_key(owner) not in own and _series(owner) not in series:
            out.append(Warning_("cas", f"CAS {cas} already belongs to the library's {owner}"))
            warned.add(cas)
    return out


def weaker_evidence(before: IngredientIn, after: IngredientIn,
                    grades: Mapping[str, str]) -> list[Warning_]:
    """Values whose checked source ``before`` cites would rest, in ``after``, on an unchecked
    one (``grades``: source key -> evidence), the value kept or not. Not refused: a team may
    mean it, and the change lists the new source; said so that nobody misses it."""
    out: list[Warning_] = []
    for prop, now in after.sources.items():
        was = before.sources.get(prop)
        if was is None or was == now:
            continue
        old_grade, new_grade = _grade(grades.get(was)), _grade(grades.get(now))
        if old_grade is None or new_grade is None or old_grade in UNVERIFIED_EVIDENCE \
                or new_grade not in UNVERIFIED_EVIDENCE:
            continue
        value = getattr(after.properties, prop)
        kept = value == getattr(before.properties, prop)
        num, text = property_columns(prop, value)
        shown = format_number(num) if num is not None else str(text)
        out.append(Warning_(prop, f"{prop} {shown} of {after.inci_name}: its source goes from "
                            f"{was} ({old_grade.value}) to {now} ({new_grade.value}), a checked "
                            "value giving way to an unchecked one"
                            + (f" (cite {was} again to keep it)" if kept else "")))
    return out


def _grade(text: str | None) -> Evidence | None:
    try:
        return Evidence(text) if text is not None else None
    except ValueError:
        return None


def _series(name: str) -> str:
    """A name with its numbers blanked: the members of a PEG or ethoxylate series match."""
    return re.sub(r"\d+", "#", name_key(name))


class NameIndex:
    """Every library name by its look-alike key, built once per command."""

    def __init__(self, session: Session) -> None:
        self._by_key: dict[str, list[tuple[str, int]]] = {}
        for name, ingredient_id in session.execute(
                select(IngredientName.name, IngredientName.ingredient_id)):
            self._by_key.setdefault(look_alike_key(name), []).append((name, ingredient_id))

    def warnings(self, item: IngredientIn, own_id: int | None) -> list[Warning_]:
        out: list[Warning_] = []
        for column, name in (("inci_name", item.inci_name),
                             *(("synonyms", s) for s in item.synonyms)):
            for other, ingredient_id in self._by_key.get(look_alike_key(name), ()):
                if ingredient_id != own_id and name_key(other) != name_key(name):
                    out.append(Warning_(column, f"{name!r} differs from the library's "
                                        f"{other!r} only by case, spacing, punctuation or "
                                        "look-alike characters"))
        return out


def warnings_for(session: Session, item: IngredientIn, *, own_id: int | None,
                 fields: Iterable[str] | None = None, names: NameIndex | None = None,
                 ) -> list[Warning_]:
    """Every plausibility warning of one ingredient; with ``fields``, only those concerning a
    field that changes (an edit of the pH is not held up by an old oddity of the HLB)."""
    found = value_warnings(item) + list_warnings(session, item)
    found += (names or NameIndex(session)).warnings(item, own_id)
    if fields is None:
        return found
    wanted = {f.removesuffix("_source").removesuffix("_note") for f in fields}
    related = {"hlb": {"hlb", "solubility"}, "density": {"density", "roles"},
               "use_max_percent": {"use_max_percent", "inci_name", "synonyms", "cas"},
               "cas": {"cas"}, "inci_name": {"inci_name"}, "synonyms": {"synonyms"}}
    return [w for w in found if related.get(w.field, {w.field}) & wanted]


def describe(label: str, warnings: Sequence[Warning_]) -> list[str]:
    return [f"{label}, field {w.field}: unusual value: {w.text}" for w in warnings]
