"""LIM03 and LIM04: the imported EU annex entries, applied line by line and part by part.

Every line (and every declared constituent of a mixture) is matched to the entries in force by
INCI name, synonym or CAS number (the index built at import). For each entry the rule says which
part applies and why (the category, the product, the purpose), then judges the amount against
that part's maximum. Where the formula does not say enough to choose a part or a purpose, the
finding names every reading and asks, as a warning; it errs only when every reading fails.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any, ClassVar

from formdb.facts.composition import pieces
from formdb.rules.base import Rule
from formdb.rules.limits import acid_units, figure, for_other_use
from formdb.rules.registry import register
from formdb.rules.scoping import line_purpose, parts_for, purpose_fits, scope_fits, why
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.lists import ListEntry, Part, SnapshotInfo
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity

_EPS = 1e-9
OK, OVER, NOT_ALLOWED, OPEN = "within", "over", "not allowed", "to confirm"
_READINGS = ("preservative", "other")
# a purpose only the substances of one annex may serve: the annex and the article that says so
_POSITIVE_LISTS = {"preservative": ("V", "14(1)(d)"), "uv filter": ("VI", "14(1)(e)"),
                   "colorant": ("IV", "14(1)(c)")}


@dataclass
class Item:
    """One substance of the formula: a line, or a declared constituent of a mixture line."""

    record: IngredientRecord
    percent: float
    line: ResolvedLine
    label: str
    entries: tuple[ListEntry, ...] = ()
    # the snapshot in force of each (jurisdiction, annex): its export and date go in the values
    exports: Mapping[tuple[str, str], SnapshotInfo] = field(default_factory=dict)


@dataclass
class Outcome:
    """An entry judged for one item under one reading of its purpose."""

    entry: ListEntry
    reading: str | None
    status: str  # OK | OVER | NOT_ALLOWED | OPEN
    text: str
    parts: list[tuple[Part, bool | None, str]] = field(default_factory=list)
    amount: float = 0.0


# the items of the last formula asked about (LIM03 and LIM04 ask once each per formula)
_last: list[tuple[ResolvedFormula, ReferenceData, list[Item]]] = []


def items_of(formula: ResolvedFormula, reference: ReferenceData) -> list[Item]:
    """The formula's substances that an entry in force names (memoised for the last formula)."""
    if _last and _last[0][0] is formula and _last[0][1] is reference:
        return _last[0][2]
    items = _items(formula, reference)
    _last[:] = [(formula, reference, items)]
    return items


@lru_cache(maxsize=1 << 14)
def _key(inci: str) -> str:
    return name_key(inci)


def _items(formula: ResolvedFormula, reference: ReferenceData) -> list[Item]:
    if not reference.list_entries:
        return []
    out: list[Item] = []
    for line in formula.lines:
        for piece in pieces(line.ingredient, line.percent, reference):
            # the label says where the substance sits ('Blend A (20 % of Blend B, 50 % of
            # Base, line 2)'); the undeclared rest of a mixture keeps the mixture's label
            label, chain = f"{line.inci} (line {line.line_no})", f"{line.inci}, line {line.line_no}"
            for step in piece.steps:
                name = step.part.inci_name
                label = f"{name} ({step.share:g} % of {chain})"
                chain = f"{name}, {step.share:g} % of {chain}"
            out.append(Item(piece.record, piece.percent, line, label))
    exports = {(s.jurisdiction, s.annex): s for s in reference.lists}
    for item in out:
        item.entries = reference.list_entries.get(_key(item.record.inci_name), ())
        item.exports = exports
    return [i for i in out if i.entries]


def acid_factor(entry: ListEntry, item: Item, reference: ReferenceData) -> float | None:
    """n x M(acid) / M(ingredient) for a part limited "as acid" (n acid units in one formula of
    the salt: 2 in calcium sorbate); 1 for the acid itself; None when a molar mass is missing.
    The acid is the entry's name with "acid" in it, else the parent acid the seed's hand-written
    row of the same entry names."""
    if "acid" in item.record.inci_name.casefold():
        return 1.0
    wanted = [n for n in entry.inci_names if "acid" in n.casefold()]
    wanted += [r.acid_inci for r in reference.limits
               if r.acid_inci and r.entry.replace(" ", "") == f"{entry.annex}/{entry.ref}"]
    acids = {name_key(k): v for k, v in reference.acids.items()}
    units = acid_units(item.record.inci_name)
    for name in wanted:
        acid = acids.get(name_key(name))
        mass, acid_mass = item.record.p.molar_mass, acid.p.molar_mass if acid else None
        if mass and acid_mass:
            return units * acid_mass / mass
    return None


def _substance(item: Item) -> tuple[str, str | None]:
    """An item's substance and the purpose of its line: items alike are one amount."""
    return _key(item.record.inci_name), line_purpose(item.line, item.record)[0]


def _totalled(items: list[Item]) -> list[Item]:
    """One item per substance and purpose: a substance on several lines (split over phases, or
    also in a mixture) is judged by its total, as the annexes limit the finished product."""
    groups: dict[tuple[str, str | None], list[Item]] = {}
    for item in items:
        groups.setdefault(_substance(item), []).append(item)
    out = []
    for group in groups.values():
        first = group[0]
        if len(group) == 1:
            out.append(first)
            continue
        name = first.record.inci_name
        where = [i.label[len(name) + 2:-1] if i.label.startswith(f"{name} (") else i.label
                 for i in group]
        out.append(Item(first.record, sum(i.percent for i in group), first.line,
                        f"{name} ({' + '.join(where)})", first.entries, first.exports))
    return out


def _group(part: Part, item: Item, members: list[Item], entry: ListEntry) -> list[Item]:
    """The items a part's maximum is for: the item alone where the text says the maximum is for
    a single substance, else every item of the entry for a use the entry covers (one entry, one
    maximum: benzoic acid with sodium benzoate, V/1); every use where the text says its levels
    include any use (III/98)."""
    if part.aggregate == "single":
        return [item]
    group = members if part.all_uses else _same_use(item, members, entry)
    return group if item in group else [item, *group]


def _same_use(item: Item, members: list[Item], entry: ListEntry) -> list[Item]:
    """The item and the entry's other items whose line's purpose the entry may cover."""
    return [m for m in members
            if m is item or purpose_fits(entry, line_purpose(m.line, m.record)[0]) is not False]


def _amount(part: Part, group: list[Item], entry: ListEntry, reference: ReferenceData
            ) -> tuple[float, bool]:
    """(amount of ``group`` on the part's basis, converted)."""
    return _amount_of(part, [(m, entry) for m in group], reference)


def _amount_of(part: Part, counted: list[tuple[Item, ListEntry]], reference: ReferenceData
               ) -> tuple[float, bool]:
    """(amount of the items on the part's basis, converted), each item converted through the
    entry it is counted by (its parent acid)."""
    if part.basis != "as acid":
        # no conversion for other bases: as-is, said as such (a hair dye's "applied to the hair
        # after mixing" is the product's own figure diluted, as-is is its upper bound)
        return sum(m.percent for m, _e in counted), part.basis is None or \
            part.basis.startswith("applied to")
    factors = [acid_factor(entry, m, reference) for m, entry in counted]
    if any(f is None for f in factors):
        return sum(m.percent for m, _e in counted), False
    return sum(m.percent * (f or 1.0) for (m, _e), f in zip(counted, factors, strict=True)), True


def _in_basis_form(part: Part, item: Item, entry: ListEntry) -> bool:
    """True when the item is the salt the part's basis names: the entry names it, and the
    entry's substance is that salt ("HC Yellow No 9", the hydrochloride, III/259)."""
    word = (part.basis or "").removeprefix("as ").casefold()[:8]
    names = {_key(n) for n in entry.inci_names}
    return bool(word) and _key(item.record.inci_name) in names and (
        word in entry.chemical_name.casefold().replace("sulfate", "sulphate")
        or word in item.record.inci_name.casefold().replace("sulfate", "sulphate"))


def _excluded(part: Part, item: Item, formula: ResolvedFormula) -> str | None:
    """The words of the part's text that rule the formula's product out for this substance
    ("Not to be used in oral products"), or None (also where the product is not named)."""
    names = {name_key(n) for n in (item.record.inci_name, *item.record.synonyms)}
    for exclusion in part.exclusions:
        if exclusion.substance and name_key(exclusion.substance) not in names:
            continue  # said of another substance of the entry (its own paragraph)
        if scope_fits(exclusion.scope, formula, None) is True:
            return exclusion.words
    return None


def _part_verdict(part: Part, amount: float, converted: bool, formula: ResolvedFormula,
                  basis_form: bool = False) -> tuple[str, str]:
    """(status, words) of one part against the amount and the formula's pH."""
    scope = part.scope.text or "all products"
    words = f"{part.name} ({scope}"
    if part.max_percent is not None:
        words += f", max {part.max_percent:g} %" + (f" {part.basis}" if part.basis else "")
    words += ")"
    ph = formula.formula.ph
    basis = f" {part.basis}" if part.basis and converted else ""
    shown = figure(amount, part.max_percent)
    if part.max_percent is not None and amount > part.max_percent + _EPS:
        if not converted or (part.basis and part.basis != "as acid"):
            return OPEN, (f"{words}: {shown} % as-is is over; {part.basis} it may be less "
                          "(no molar mass to convert: confirm by hand)")
        return OVER, f"{words}: {shown} %{basis} is over"
    if part.ph_max is not None or part.ph_min is not None:
        if ph is None:
            return OPEN, f"{words}: pH limit {_ph(part)}; the formula states no pH"
        if (part.ph_max is not None and ph > part.ph_max + _EPS) or \
                (part.ph_min is not None and ph < part.ph_min - _EPS):
            return OVER, f"{words}: pH {ph:g} is outside {_ph(part)}"
    if part.max_percent is None and any(_FIGURE.search(u) for u in part.unparsed):
        # a figure the parser could not place (III/261: the export gives "the maximum
        # concentration applied to hair must not exceed 2,5%" under the product type)
        return OPEN, (f"{words}: its text gives a figure that was not read as its maximum "
                      f"({'; '.join(part.unparsed)}): confirm by hand")
    rest = " (part of its text is not structured: see LIM04)" if part.unparsed else ""
    if part.basis and not basis:  # a maximum on a basis the amount was not converted to
        if _HEAVIER.search(part.basis) and not basis_form:
            return OPEN, (f"{words}: {shown} % as-is is under it, but {part.basis} it may be "
                          "more (a salt form weighs more than the base): confirm by hand")
        if not part.basis.startswith("applied to"):
            rest = f" as-is (so at most that much {part.basis}){rest}"
    return OK, f"{words}: {shown} %{basis} is within{rest}"


_FIGURE = re.compile(r"\d\s*%")
# bases heavier than the substance a line may hold ("2,0 % (calculated as sulphate)" for the free
# base): the amount as-is is no upper bound of the amount on that basis; the other bases are a
# part of the substance (as F, as free SO2, of Hg, as free base, as acid)
_HEAVIER = re.compile(r"sulph|sulfat|hydrochlor|\bsalt", re.I)


def _ph(part: Part) -> str:
    if part.ph_min is not None:
        return f"pH {part.ph_min:g} to {part.ph_max:g}" if part.ph_max is not None \
            else f"pH at least {part.ph_min:g}"
    return f"up to pH {part.ph_max:g}"


def _named_by_joint(part: Part, other: Item, entry: ListEntry) -> ListEntry | None:
    """The entry through which the part's joint maximum counts ``other`` (one the part names by
    reference, or one naming a substance the part names; the part's own entry when ``other`` is
    a substance the part names by its INCI name or a synonym), else None."""
    wanted = {name_key(n) for n in part.joint_names}
    for named in other.entries:
        if named.annex == entry.annex and named.ref.casefold() in part.joint_refs:
            return named
        if wanted and named.annex == entry.annex and wanted & {
                name_key(n) for n in (*named.inci_names, named.chemical_name)}:
            return named
    if wanted & {name_key(n) for n in (other.record.inci_name, *other.record.synonyms)}:
        return entry
    return None


def _joint(part: Part, item: Item, entry: ListEntry, everyone: Iterable[Item]
           ) -> list[tuple[Item, ListEntry]]:
    """Each item of the formula the part's joint maximum counts, paired with the entry it counts
    through, for a use that entry covers."""
    out: list[tuple[Item, ListEntry]] = []
    for other in everyone:
        named = _named_by_joint(part, other, entry)
        if named is not None and (other is item or purpose_fits(
                named, line_purpose(other.line, other.record)[0]) is not False):
            out.append((other, named))
    return out


def _joint_verdict(part: Part, item: Item, entry: ListEntry, everyone: Iterable[Item],
                   reference: ReferenceData) -> tuple[str, str] | None:
    """(status, words) of the part's joint maximum when the formula holds more than one of the
    substances it counts and their sum is over it; None otherwise (one substance alone is held
    to its own entry's maximum)."""
    if part.joint_max is None:
        return None
    joint = _joint(part, item, entry, everyone)
    if len({_key(m.record.inci_name) for m, _n in joint}) < 2:
        return None
    total, converted = _amount_of(part, joint, reference)
    if total <= part.joint_max + _EPS:
        return None
    whose = ("the substances of entries "
             + " and ".join(f"{entry.annex}/{r}" for r in part.joint_refs)
             if part.joint_refs else ", ".join(part.joint_names))
    basis = (f" {part.basis}" if converted else " as-is") if part.basis else ""
    words = (f"; but {whose} together, "
             + " + ".join(f"{m.label} {m.percent:.4g} %" for m, _n in joint)
             + f" = {figure(total, part.joint_max)} %{basis}, are over the "
             f"{part.joint_max:g} % the entry gives for them together")
    if not converted:
        return OPEN, words + (f" ({part.basis} it may be less: no molar mass to convert, "
                              "confirm by hand)")
    return OVER, words


def _verdict(part: Part, item: Item, members: list[Item], entry: ListEntry,
             formula: ResolvedFormula, reference: ReferenceData,
             everyone: Iterable[Item] = ()) -> tuple[str, str]:
    """(status, words) of one part for an item: a product the part's text rules out, else the
    amount of the entry's substances present against the maximum (and the pH)."""
    banned = _excluded(part, item, formula)
    if banned is not None:
        return NOT_ALLOWED, (f"{part.name} ({part.scope.text or 'all products'}): \"{banned}\" "
                             f"(product {formula.formula.product!r})")
    group = _group(part, item, members, entry)
    amount, converted = _amount(part, group, entry, reference)
    status, words = _part_verdict(part, amount, converted, formula,
                                  all(_in_basis_form(part, m, entry) for m in group))
    if len(group) > 1:
        words += " (together: " + " + ".join(f"{m.label} {m.percent:.4g} %" for m in group) + ")"
        # a sum the text states (or implies: the acid and its salts as acid, levels inclusive
        # of any use) is the maximum's own; otherwise several substances of one entry over only
        # together is for a person to confirm
        decisive = part.aggregate == "sum" or part.basis == "as acid" or part.all_uses
        if status == OVER and not decisive:
            alone, alone_converted = _amount(part, [item], entry, reference)
            if _part_verdict(part, alone, alone_converted, formula)[0] != OVER:
                status = OPEN
                words += ("; over only together: confirm by hand whether the entry's maximum is "
                          "for its substances together")
    if status == OK and part.mixture_max is not None:
        mixture = _same_use(item, members, entry)
        total, converted = _amount(part, mixture, entry, reference)
        if len(mixture) > 1 and total > part.mixture_max + _EPS:
            status = OVER if converted else OPEN
            basis = f" {part.basis}" if part.basis and converted else " as-is"
            words += ("; but the mixture, " + " + ".join(f"{m.label} {m.percent:.4g} %"
                                                         for m in mixture)
                      + f" = {figure(total, part.mixture_max)} %{basis}, is over its "
                      f"{part.mixture_max:g} % for mixtures"
                      + ("" if converted else f" ({part.basis} it may be less: no molar mass "
                         "to convert, confirm by hand)"))
    if status == OK and (joint := _joint_verdict(part, item, entry, everyone, reference)):
        status, more = joint
        words += more
    return status, words


def judge(entry: ListEntry, item: Item, members: list[Item], formula: ResolvedFormula,
          reading: str | None, reference: ReferenceData, everyone: Iterable[Item] = ()
          ) -> Outcome:
    """One entry for one item under one purpose reading ("other": any purpose but preserving,
    which says nothing of the purposes a part's scope may name)."""
    fits = parts_for(entry, formula, None if reading == "other" else reading)
    candidates = [f for f in fits if f.fits is not False]
    if not candidates:
        allowed = "; ".join(f"{f.part.name}: {f.part.scope.text or 'all products'}"
                            if f.part.label else (f.part.scope.text or "all products")
                            for f in fits)
        return Outcome(entry, reading, NOT_ALLOWED,
                       f"the entry covers only {allowed}")
    parts: list[tuple[Part, bool | None, str]] = []
    statuses = set()
    for fit in candidates:
        status, words = _verdict(fit.part, item, members, entry, formula, reference, everyone)
        parts.append((fit.part, fit.fits, words))
        statuses.add(status)
    definite = len(candidates) == 1 and candidates[0].fits is True
    # no part surely applies and none is a catch-all: the product may be one the entry does not
    # cover at all, a reading in which the substance is not allowed
    uncovered = not any(f.fits is True or f.part.scope.other for f in candidates)
    texts = "; ".join(w for _p, _f, w in parts)
    if definite or len(statuses) == 1:
        status = statuses.pop()
        if not definite and status == OK and uncovered:
            return Outcome(entry, reading, OPEN,
                           f"within every part that may apply: {texts}; but if the product is "
                           "none of these, the entry does not allow it", parts, item.percent)
        if not definite and status == OK:
            texts = f"within every part that may apply: {texts}"
        elif not definite and status == OVER:
            texts = f"over in every part that may apply: {texts}"
        return Outcome(entry, reading, status, texts, parts, item.percent)
    return Outcome(entry, reading, OPEN,
                   f"the formula does not say which part applies: {texts}", parts, item.percent)


@register
class ListEntryLimits(Rule):
    """A line against the imported EU annex entries: prohibited, over a maximum, or not allowed.

    Flags: a substance of Annex II (prohibited) at any concentration, or in the one use an entry
    prohibits it in (hair dyes, fragrance); an amount over the maximum of the Annex III, IV, V
    or VI part that applies (the entry's substances present together, as acid where the entry
    says so), or a pH outside its range; a product type the entry does not cover, or its text
    rules out ("Not to be used in oral products"); a line declared a preservative, UV filter or
    colorant that Annex V, VI or IV does not list (Art. 14). Each finding names the entry, the
    part and why it applies (category, product, the line's ``purpose``). When the formula does
    not say enough to choose (no product, no purpose), the finding names every reading and asks
    (warning); it is an error only when every reading fails. Where an entry applies and is met,
    an info says so. A substance on several lines for the same purpose (or also in a mixture) is
    judged by its total.
    Why: Regulation (EC) No 1223/2009, Articles 14 and 15 and Annexes II-VI, as the Commission's
    exports give them (imported with `formdb lists import`; dated snapshots: check the current
    consolidated text).
    Fails: a body lotion with 1 % Cetrimonium Chloride declared as a conditioning agent: Annex
    III/286 covers only rinse-off hair, leave-on hair and leave-on face products.
    Passes: a face cream with 1.5 % Salicylic Acid, purpose "active": Annex III/98 part (b),
    other products, 2.0 %; the preservative entry V/3 does not apply.
    Options: none.
    """

    code = "LIM03"
    name = "list-entries"
    groups = ("regulatory",)
    default_severity = Severity.ERROR
    options: ClassVar[dict[str, Any]] = {}

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        if not reference.lists:
            return
        items = _totalled(items_of(formula, reference))
        members: dict[str, list[Item]] = {}
        for item in items:
            for entry in item.entries:
                members.setdefault(entry.label, []).append(item)
        for item in items:
            yield from self._item(item, members, formula, reference, items)
        yield from self._unlisted(formula, reference)

    def _unlisted(self, formula: ResolvedFormula, reference: ReferenceData
                  ) -> Iterable[Finding]:
        """Lines declared a preservative, a UV filter or a colorant that the annex listing such
        substances does not name: only listed ones may serve that purpose (Art. 14(1)(c)-(e))."""
        in_force = {(s.jurisdiction, s.annex): s for s in reference.lists}
        for line in formula.lines:
            wanted = _POSITIVE_LISTS.get(line.purpose or "")
            key = _key(line.ingredient.inci_name)
            if wanted is None or key in reference.constituents:
                continue  # no such purpose, or a declared mixture: its constituents are judged
            annex, article = wanted
            snapshot = in_force.get(("EU", annex))
            if snapshot is None or any(e.annex == annex
                                       for e in reference.list_entries.get(key, ())):
                continue
            use = "UV filter" if line.purpose == "uv filter" else line.purpose
            head = (f"{line.inci} (line {line.line_no}) is declared a {use}, and no "
                    f"entry of EU Annex {annex} names it (by INCI name, synonym or CAS number): "
                    f"only substances that Annex lists may be used as {use}s "
                    f"(Regulation (EC) No 1223/2009 Art. {article})")
            values: dict[str, float | str | None] = {
                "entry": f"{annex}", "list_name": f"EU Annex {annex}",
                "percent": line.percent, "matched": None,
                "export": f"{snapshot.file_name}, file created {snapshot.file_created:%d/%m/%Y}",
                "list_date": snapshot.last_update.isoformat()}
            if annex == "IV":
                # Annex IV names colorants by colour index number, and hair dyes are outside it
                yield self.finding(
                    Severity.WARNING, f"{head}; confirm by hand (it may be listed under its "
                    "colour index number, or the product may be a hair dye)",
                    ingredients=[line.inci], values=values,
                    advice="name the colorant by its CI number (or add it as a synonym or CAS "
                           "number), or use a colorant Annex IV lists")
                continue
            yield self.finding(
                Severity.ERROR, head, ingredients=[line.inci], values=values,
                advice=f"use a {use} Annex {annex} lists, or declare the line's real "
                       f"purpose; if it is listed under another name, add that name as a "
                       f"synonym or its CAS number")

    def _item(self, item: Item, members: Mapping[str, list[Item]], formula: ResolvedFormula,
              reference: ReferenceData, everyone: list[Item]) -> Iterable[Finding]:
        purpose, purpose_from = line_purpose(item.line, item.record)
        kinds = {e.purpose for e in item.entries if e.purpose is not None and e.annex != "II"}
        readings: tuple[str | None, ...] = (purpose,)
        if purpose is None and len(kinds) > 1:
            # entries for preservative use and for other uses both name it: name both readings
            readings = _READINGS
        elif purpose is None and kinds:
            # only one kind of entry names it: that entry is the reading (a lone Annex V entry
            # binds the substance, whatever else it may do)
            readings = ("preservative" if kinds == {"preservative"} else "other",)
            purpose_from = "the only kind of entry that names it"
        because = why(formula, purpose or (readings[0] if len(readings) == 1 else None),
                      purpose_from)
        outcomes: dict[str, list[Outcome]] = {}
        for entry in item.entries:
            if entry.annex == "II":
                yield self._prohibited(entry, item, item.entries, formula, purpose,
                                       purpose_from)
                continue
            if (colorant := _colorant_entry(entry, item, formula, purpose)) is not None:
                yield self._as_colorant(entry, colorant, item, because)
                continue
            for reading in readings:
                if purpose_fits(entry, reading) is False:
                    continue
                outcomes.setdefault(entry.label, []).append(
                    judge(entry, item, members[entry.label], formula, reading, reference,
                          everyone))
        bad_in = {r: any(o.status in (OVER, NOT_ALLOWED) for os in outcomes.values()
                         for o in os if o.reading == r) for r in readings}
        for entry in item.entries:
            if entry.annex == "II" or _colorant_entry(entry, item, formula, purpose) is not None:
                continue
            judged = outcomes.get(entry.label)
            if not judged:
                yield self._not_applying(entry, item, purpose, purpose_from)
                continue
            finding = self._finding(entry, item, judged, readings, bad_in, because, outcomes)
            other = _other_use_entry(entry, item) if purpose is None else None
            if other is not None and finding.severity is Severity.ERROR:
                # a colorant and UV filter both (titanium dioxide): the formula does not say
                # which use, and the other use's annex judges the other reading
                use = "a UV filter" if entry.annex == "VI" else "a colorant"
                finding = finding.model_copy(update={
                    "severity": Severity.WARNING,
                    "message": f"if used as {use}: {finding.message}; used otherwise, "
                               f"{other.title} applies (see its finding)",
                    "advice": f"declare the line's purpose (purpose = \"{_USE_NAME[entry.annex]}"
                              f"\" or \"{_USE_NAME[other.annex]}\"); {finding.advice}"})
            yield finding

    def _as_colorant(self, entry: ListEntry, colorant: ListEntry, item: Item, because: str
                     ) -> Finding:
        covers = "its use as a hair dye substance only, and the product is no hair dye" \
            if entry.annex == "III" else \
            f"its use as {'a UV filter' if entry.annex == 'VI' else 'a colorant'} only"
        use = "a UV filter" if colorant.annex == "VI" else "a colorant"
        return self.finding(
            Severity.INFO,
            f"{item.label}: {entry.title} covers {covers} ({because}); as {use} "
            f"{colorant.title} applies, judged in its own finding", ingredients=[item.line.inci],
            values=_values(entry, item),
            advice=f"follow the finding of {colorant.title}")

    def _prohibited(self, entry: ListEntry, item: Item, entries: tuple[ListEntry, ...],
                    formula: ResolvedFormula, purpose: str | None, purpose_from: str
                    ) -> Finding:
        if entry.only_when:
            return self._prohibited_in_one_use(entry, item, formula, purpose, purpose_from)
        if entry.exception:
            named = excepted_entries(entry.exception)
            allowing = [e for e in entries if e.annex != "II"]
            values = _values(entry, item)
            head = f"{item.label} is prohibited in cosmetic products {entry.exception}: " \
                   f"{entry.title}, {entry.regulation}"
            judged = [e for e in allowing if f"{e.annex}/{e.ref}" in named]
            if judged:
                # the exception is an entry of another annex that names this substance: that
                # entry's own finding says whether the use is the one it allows
                titles = ", ".join(e.title for e in judged)
                return self.finding(
                    Severity.INFO, f"{head}; the exception is {titles}, judged in its own "
                    "finding", ingredients=[item.line.inci], values=values,
                    advice=f"follow the finding of {titles}")
            if allowing and "annex" in entry.exception.casefold():
                titles = ", ".join(e.title for e in allowing)
                return self.finding(
                    Severity.WARNING, f"{head}; {titles} also names it: confirm by hand that "
                    "the use is the one the exception allows", ingredients=[item.line.inci],
                    values=values,
                    advice=f"confirm against {titles} (see its finding), or remove "
                           f"{item.record.inci_name}")
            evidence = " (e.g. its full refining history)" if "refining" in \
                entry.exception.casefold() else ""
            return self.finding(
                Severity.WARNING, f"{head}; confirm by hand that the exception holds",
                ingredients=[item.line.inci], values=values,
                advice=f"keep the evidence that {item.record.inci_name} meets the exception"
                       f"{evidence}, or remove it")
        return self.finding(
            Severity.ERROR,
            f"{item.label} is prohibited in cosmetic products: {entry.title}, "
            f"{entry.regulation}; not allowed at any concentration",
            ingredients=[item.line.inci], values=_values(entry, item),
            advice=f"remove {item.record.inci_name}")

    def _prohibited_in_one_use(self, entry: ListEntry, item: Item, formula: ResolvedFormula,
                               purpose: str | None, purpose_from: str) -> Finding:
        """An Annex II entry that prohibits the substance in one use (a hair dye substance, a
        fragrance ingredient): an error in that use, nothing to do in another, a question where
        the formula does not say."""
        scope = entry.only_when_scope
        fits = None if scope is None else scope_fits(scope, formula, purpose)
        because = why(formula, purpose, purpose_from)
        head = f"{item.label} is prohibited in cosmetic products {entry.only_when}: " \
               f"{entry.title}, {entry.regulation}"
        values = _values(entry, item)
        if fits is True:
            return self.finding(
                Severity.ERROR, f"{head}; this is that use ({because}); not allowed at any "
                "concentration", ingredients=[item.line.inci], values=values,
                advice=f"remove {item.record.inci_name}")
        if fits is False:
            return self.finding(
                Severity.INFO, f"{head}; this is another use ({because}): the prohibition "
                "does not apply", ingredients=[item.line.inci], values=values,
                advice="nothing to do while the product and the line's purpose stay as they are")
        asked = "the line's purpose (purpose = ...)" if scope is not None and scope.purposes \
            else "the product (product = ...)"
        return self.finding(
            Severity.WARNING, f"{head}; the formula does not say whether this is that use "
            f"({because})", ingredients=[item.line.inci], values=values,
            advice=f"state {asked}, or confirm by hand that the product is not that use")

    def _not_applying(self, entry: ListEntry, item: Item, purpose: str | None,
                      purpose_from: str) -> Finding:
        scope = "preservative use only" if entry.purpose == "preservative" else \
            "uses other than preserving only"
        return self.finding(
            Severity.INFO,
            f"{item.label}: {entry.title} does not apply ({scope}; purpose {purpose!r} from "
            f"{purpose_from})", ingredients=[item.line.inci], values=_values(entry, item),
            advice="nothing to do while the line keeps this purpose")

    def _finding(self, entry: ListEntry, item: Item, judged: list[Outcome],
                 readings: tuple[str | None, ...], bad_in: Mapping[str | None, bool],
                 because: str, outcomes: Mapping[str, list[Outcome]]) -> Finding:
        values = _values(entry, item)
        values["part"] = ", ".join(sorted({p.label or "-" for o in judged for p, _f, _w in
                                           o.parts})) or None
        bad = [o for o in judged if o.status in (OVER, NOT_ALLOWED)]
        if len(readings) > 1:
            applies_in = {o.reading for o in judged}
            other = [r for r in readings if r not in applies_in]
            if bad and all(bad_in[r] for r in readings):
                severity = Severity.ERROR
            elif bad or any(o.status == OPEN for o in judged):
                severity = Severity.WARNING
            else:
                severity = Severity.INFO
            said = "; ".join(f"{_reading(o.reading)}: {o.status}: {o.text}" for o in judged)
            if other:
                elsewhere = [lbl for lbl, os in outcomes.items() if lbl != entry.label
                             and any(o.reading in other for o in os)]
                said += "; " + "; ".join(
                    f"{_reading(r)}: this entry does not apply"
                    + (f" ({', '.join(elsewhere)} does)" if elsewhere else "") for r in other)
            use = "preservative use" if entry.purpose == "preservative" else \
                "uses other than preserving"
            message = (f"{item.label} {item.percent:.4g} %: {entry.title} applies only to {use}"
                       f" and the formula does not say the line's purpose ({because}). {said}"
                       if entry.purpose else
                       f"{item.label} {item.percent:.4g} %: {entry.title} ({because}): {said}")
            advice = ("declare the line's purpose (purpose = \"preservative\", "
                                  "\"active\", ...) so the entry that applies can be chosen")
            if severity is Severity.ERROR:
                advice = f"every reading fails: reduce or remove {item.record.inci_name}"
            return self.finding(severity, message, ingredients=[item.line.inci], values=values,
                                advice=advice)
        outcome = judged[0]
        severity = {OK: Severity.INFO, OPEN: Severity.WARNING}.get(outcome.status,
                                                                   Severity.ERROR)
        message = f"{item.label} {item.percent:.4g} %: {entry.title}, {outcome.status}: " \
                  f"{outcome.text} ({because})"
        advice = "nothing to do: the part that applies is met; keep the product and purpose"
        if outcome.status == OVER:
            fixes = []
            if any(w in outcome.text for w in ("(together: ", " together, ", " for mixtures")):
                # a maximum for several substances at once: any of them may give way
                fixes.append("bring the substances counted together within that maximum "
                             f"(reduce {item.record.inci_name} or the others named)")
            elif " is over" in outcome.text:
                fixes.append(f"reduce {item.record.inci_name} below the maximum of the part "
                             "that applies")
            if " is outside " in outcome.text:  # a pH limit of the part
                fixes.append("adjust the product's pH into the range of the part that applies")
            advice = "; ".join(fixes) or f"reduce {item.record.inci_name}"
        elif outcome.status == NOT_ALLOWED:
            advice = f"remove {item.record.inci_name}, or use it in a product the entry covers"
        elif outcome.status == OPEN:
            advice = "name the product (product = ...) or the line's purpose, or confirm by hand"
        return self.finding(severity, message, ingredients=[item.line.inci], values=values,
                            advice=advice)


# the product types of the Annex III hair dye entries ("Hair dye substance in oxidative hair dye
# products"): a substance the entry names for that use only may still be a colorant of Annex IV
_HAIR_DYE = frozenset({"hair dye", "oxidative hair dye", "non-oxidative hair dye",
                       "eyelash product"})


# a substance both a colorant (Annex IV) and a UV filter (Annex VI), titanium dioxide and zinc
# oxide: each entry refers the other use to the other annex (limits.for_other_use), so a line
# declared for one use is judged by that use's annex only
_USE_ANNEX = {"colorant": "IV", "uv filter": "VI"}


_USE_NAME = {annex: use for use, annex in _USE_ANNEX.items()}


def _other_use_entry(entry: ListEntry, item: Item) -> ListEntry | None:
    """For an entry of Annex IV (VI), the item's entry of Annex VI (IV), if it has one."""
    if entry.annex not in _USE_NAME:
        return None
    return next((e for e in item.entries if e.annex in _USE_NAME and e.annex != entry.annex),
                None)


def _colorant_entry(entry: ListEntry, item: Item, formula: ResolvedFormula,
                    purpose: str | None) -> ListEntry | None:
    """The entry of another annex that governs the line's use where ``entry`` does not: the
    Annex IV entry of a line used as a colorant in a product that is no hair dye, where
    ``entry`` (Annex III) covers the substance as a hair dye substance only; the Annex IV (VI)
    entry of a line declared a colorant (UV filter), where ``entry`` is of Annex VI (IV). None
    where ``entry`` applies as it stands."""
    if for_other_use(entry.annex, purpose):
        use = _USE_ANNEX[purpose or ""]
        return next((e for e in item.entries if e.annex == use), None)
    if entry.annex != "III" or purpose not in (None, "colorant") or not entry.parts:
        return None
    if not all(p.scope.products and set(p.scope.products) <= _HAIR_DYE for p in entry.parts):
        return None
    if any(f.fits is not False for f in parts_for(entry, formula, purpose)):
        return None  # a hair dye, or a product the formula does not name
    return next((e for e in item.entries if e.annex == "IV"), None)


_EXCEPTED = re.compile(r"(?:entry|entries|reference (?:No|number)s?)\s*"
                       r"((?:\d+[a-z]?(?:,\s*|\s+and\s+)?)+)"
                       r"\s*(?:in|of)\s+Annex\s+(III|IV|V|VI)\b", re.I)


def excepted_entries(exception: str) -> set[str]:
    """The annex entries an Annex II exception names ("with the exception of entry 14 in Annex
    III" -> {"III/14"})."""
    out = set()
    for numbers, annex in _EXCEPTED.findall(exception):
        out |= {f"{annex.upper()}/{n}" for n in re.findall(r"\d+[a-z]?", numbers)}
    return out


def _reading(reading: str | None) -> str:
    return {"preservative": "as a preservative", "other": "for another purpose"}.get(
        reading or "", f"as {reading}")


def _values(entry: ListEntry, item: Item) -> dict[str, float | str | None]:
    values: dict[str, float | str | None] = {
        "entry": f"{entry.annex}/{entry.key}", "list_name": f"{entry.jurisdiction} Annex "
        f"{entry.annex}", "regulation": entry.regulation, "percent": item.percent,
        "matched": item.record.inci_name}
    export = item.exports.get((entry.jurisdiction, entry.annex))
    if export is not None:
        # which dated snapshot the finding rests on, so a filed report can name it
        values["export"] = f"{export.file_name}, file created {export.file_created:%d/%m/%Y}"
        values["list_date"] = export.last_update.isoformat()
    return values


_FOR_MIXTURES = re.compile(r"\bfor mixtures?\b", re.I)


def _judged_by_lim03(part: Part, further: str) -> bool:
    """A further maximum of the part's text that LIM03 judges itself, so no person need: the
    maximum for mixtures beside a single substance's (V/12), or one for the substances of several
    entries together (V/12a)."""
    return bool(_FOR_MIXTURES.search(further)) and (
        part.mixture_max is not None or part.joint_max is not None)


@register
class ListEntryConditions(Rule):
    """Conditions of an applying annex entry that need a person: label warnings, age limits,
    sprays, professional use, purity, and every text formdb could not structure.

    Flags: for each line matched to an entry in force whose applying part carries conditions, a
    labelling wording or unparsed text, one finding listing them to confirm by hand.
    Why: Regulation (EC) No 1223/2009 Annexes III-VI attach conditions of use and warnings that
    only a person can check against the product and its label (Art. 19(1)(d)).
    Fails: a face cream with 1.5 % Salicylic Acid (purpose active): Annex III/98 asks "not to
    be used for children under 3 years of age" on the label, and no exposure of the lungs.
    Passes: a formula whose matched entries carry no conditions.
    Options: none.
    """

    code = "LIM04"
    name = "list-conditions"
    groups = ("regulatory",)
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Any]] = {}

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        if not reference.lists:
            return
        for item in items_of(formula, reference):
            purpose, _from = line_purpose(item.line, item.record)
            for entry in item.entries:
                if entry.annex == "II" or purpose_fits(entry, purpose) is False:
                    continue
                fits = [f for f in parts_for(entry, formula, purpose) if f.fits is not False]
                lines = []
                for fit in fits:
                    part = fit.part
                    said = [*part.conditions]
                    if part.labelling:
                        said.append(f"label: {part.labelling}")
                    if part.other:
                        said.append(f"other: {part.other}")
                    said.extend(f"also: {x}" for x in part.further_limits
                                if not _judged_by_lim03(part, x))
                    said.extend(f"not structured: {u}" for u in part.unparsed)
                    if said:
                        lines.append(f"{part.name}: {' | '.join(dict.fromkeys(said))}")
                if lines:
                    yield self.finding(
                        self.default_severity,
                        f"{item.label}: conditions of {entry.title} to confirm by hand: "
                        + " || ".join(lines),
                        ingredients=[item.line.inci], values=_values(entry, item),
                        advice="confirm each condition against the product and its label")


@register
class ListEntryReading(Rule):
    """Entries whose stored reading an older formdb made: the verdicts on them may be stale.

    Flags: a line matched to an entry in force whose stored reading (made when the export was
    imported) differs from what this version of formdb reads in the same export cells: the
    maxima, parts, conditions and names LIM03 and LIM04 judged by may be an older parser's.
    One warning per entry, naming the lines.
    Why: the entries keep the export's cells verbatim; a reading is formdb's, and improves
    between versions (a misspelt name, a maximum for several entries together). A filed verdict
    should rest on the reading the running version makes; `formdb lists import` of the same
    export stores it and re-checks the stored formulas it changes.
    Fails: a body lotion with 0.8 % Salicylic Acid as a preservative, against a V/3 stored by
    a version that read its maximum as 5 %.
    Passes: entries stored by this version's reading, or no list in force.
    Options: none.
    """

    code = "LIM05"
    name = "list-reading"
    groups = ("regulatory",)
    default_severity = Severity.WARNING
    options: ClassVar[dict[str, Any]] = {}

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        if not reference.read_differently:
            return
        lines: dict[str, tuple[ListEntry, list[Item]]] = {}
        for item in items_of(formula, reference):
            for entry in item.entries:
                if entry.label in reference.read_differently:
                    lines.setdefault(entry.label, (entry, []))[1].append(item)
        for _label, (entry, items) in sorted(lines.items()):
            export = items[0].exports.get((entry.jurisdiction, entry.annex))
            file = export.file_name if export is not None else "the export"
            yield self.finding(
                self.default_severity,
                f"{entry.title}, matched by {', '.join(i.label for i in items)}: the library "
                "holds the reading of this entry that formdb made when the export was imported, "
                "and this version reads the same cells differently; the list findings on it "
                "rest on the stored reading, which may be out of date",
                ingredients=list(dict.fromkeys(i.line.inci for i in items)),
                values=_values(entry, items[0]),
                advice=f"import the same export again (`formdb lists import {file}`: it stores "
                       "this version's reading and re-checks the stored formulas it changes), "
                       "then check again; `formdb lists status` names every such entry")
