"""LIM01 and LIM02: concentration limits of regulatory lists, and entries that exclude each other.

Limit records are data (seed_data/limits.csv); these rules only apply them: the jurisdiction
chosen by the profile, the formula's category (leave-on / rinse-off, or rows for "any"), rows for
a product type when the formula names that product (they replace the general rows of the same
entry), "as acid" conversion of salts by molar mass, sums over groups, and max 0 = not allowed.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from functools import lru_cache
from typing import Any, ClassVar

from formdb.facts.composition import substance_formula
from formdb.rules.base import Option, Rule
from formdb.rules.registry import register
from formdb.rules.scoping import line_purpose
from formdb.schemas.findings import Finding
from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import LimitRecord, ReferenceData
from formdb.schemas.result import FormulaFacts
from formdb.schemas.vocab import Severity

_EPS = 1e-9
JURISDICTION = Option(str, "EU", "jurisdiction whose limit lists apply (as in limits.csv)")


@lru_cache(maxsize=1 << 14)
def _name_keys(names: tuple[str, ...]) -> frozenset[str]:
    """Memoised: every limit row asks this of every line of every formula."""
    return frozenset(name_key(n) for n in names)


def _keys(ing: IngredientRecord) -> frozenset[str]:
    return _name_keys((ing.inci_name, *ing.synonyms))


# the name keys of the last formula asked about (LIM01 and LIM02 ask once per limit row)
_last_formula: list[tuple[ResolvedFormula, frozenset[str]]] = []


def _formula_keys(formula: ResolvedFormula) -> frozenset[str]:
    if not _last_formula or _last_formula[0][0] is not formula:
        keys = frozenset().union(*(_keys(ln.ingredient) for ln in formula.lines))
        _last_formula[:] = [(formula, keys)]
    return _last_formula[0][1]


def lines_in(row: LimitRecord, formula: ResolvedFormula) -> list[ResolvedLine]:
    """The formula lines that are one of the row's ingredients."""
    wanted = _name_keys(row.ingredients)
    if wanted.isdisjoint(_formula_keys(formula)):
        return []  # most rows: none of their ingredients is in the formula
    return [ln for ln in formula.lines if not wanted.isdisjoint(_keys(ln.ingredient))]


def applicable_rows(reference: ReferenceData, formula: ResolvedFormula,
                    jurisdiction: str) -> list[LimitRecord]:
    """Rows of the jurisdiction for the formula's category; product rows replace general ones."""
    body = formula.formula
    product = (body.product or "").strip().casefold()
    groups: dict[tuple[str, str], list[LimitRecord]] = {}
    annexes = covered_annexes(reference)
    for row in reference.limits:
        if row.jurisdiction.casefold() != jurisdiction.casefold():
            continue
        if annexes and covered(reference, row, annexes):
            continue  # an imported snapshot of this annex is in force: LIM03 applies it
        if row.category.casefold() not in (body.category.value, "any"):
            continue
        if row.product is not None and row.product.strip().casefold() != product:
            continue
        groups.setdefault((row.list_name, row.entry), []).append(row)
    out = []
    for rows in groups.values():
        specific = [r for r in rows if r.product is not None]
        out.extend(specific or rows)
    return out


@lru_cache(maxsize=1 << 10)
def _annex(entry: str) -> str:
    return entry.split("/", 1)[0].strip().upper()


def annex_of(row: LimitRecord) -> str:
    """The annex a hand-written row belongs to ("V/3" -> "V")."""
    return _annex(row.entry)


def covered_annexes(reference: ReferenceData) -> frozenset[tuple[str, str]]:
    """(jurisdiction folded, annex) of every imported snapshot in force."""
    return frozenset((s.jurisdiction.casefold(), s.annex) for s in reference.lists)


def covered(reference: ReferenceData, row: LimitRecord,
            annexes: frozenset[tuple[str, str]] | None = None) -> bool:
    """True when an imported snapshot of the row's annex is in force for its jurisdiction."""
    if not reference.lists:
        return False
    annexes = covered_annexes(reference) if annexes is None else annexes
    return (row.jurisdiction.casefold(), annex_of(row)) in annexes


def _record(reference: ReferenceData, formula: ResolvedFormula,
            inci: str) -> IngredientRecord | None:
    wanted = name_key(inci)
    for ln in formula.lines:
        if wanted in _keys(ln.ingredient):
            return ln.ingredient
    for key, record in reference.acids.items():
        if name_key(key) == wanted or wanted in _keys(record):
            return record
    return None


# salts whose cation carries two or three charges hold two or three anions of the acid in one
# formula unit (calcium sorbate Ca(C6H7O2)2): the acid they stand for is n x M(acid) per M(salt)
_MULTIVALENT = {"calcium": 2, "magnesium": 2, "zinc": 2, "barium": 2, "strontium": 2,
                "copper": 2, "aluminum": 3, "aluminium": 3}


def acid_units(inci: str) -> int:
    """How many units of the parent acid one formula unit of a salt named ``inci`` holds: 2 for a
    calcium, magnesium or zinc salt, 3 for an aluminium salt, else 1 (sodium, potassium,
    ammonium and amine salts, esters, the acid itself)."""
    words = inci.casefold().replace("-", " ").split()
    return _MULTIVALENT.get(words[0], 1) if words else 1


def figure(amount: float, limit: float | None, digits: int = 4) -> str:
    """``amount`` in ``digits`` significant figures, or in more where those would print it equal
    to the limit it is over (0.59 % sodium benzoate is 0.5000056 % as benzoic acid, over 0.5 %,
    not "0.5 % ... is over")."""
    text = f"{amount:.{digits}g}"
    if limit is not None and amount > limit + _EPS and float(text) <= limit:
        text = f"{amount:.7g}"
    return text


# Annex IV (colorants) and Annex VI (UV filters) refer each other's use to the other annex
# (VI/27 titanium dioxide: "For use as a colourant, see Annex IV, No 143")
_OTHER_USE = {"VI": "colorant", "IV": "uv filter"}


def for_other_use(annex: str, purpose: str | None) -> bool:
    """True when a line's purpose is the use the other of Annexes IV and VI governs."""
    return purpose is not None and _OTHER_USE.get(annex) == purpose


@dataclass(frozen=True)
class _Amount:
    """One line's amount on the row's basis; ``factor`` None when it cannot be converted."""

    line: ResolvedLine
    factor: float | None
    missing: tuple[str, ...] = ()

    @property
    def value(self) -> float | None:
        return None if self.factor is None else self.line.percent * self.factor


def _amount(row: LimitRecord, line: ResolvedLine, reference: ReferenceData,
            formula: ResolvedFormula) -> _Amount:
    if row.basis != "as-acid" or not row.acid_inci:
        return _Amount(line, 1.0)
    if name_key(row.acid_inci) in _keys(line.ingredient):
        return _Amount(line, 1.0)
    acid = _record(reference, formula, row.acid_inci)
    salt_mass = line.ingredient.p.molar_mass
    acid_mass = acid.p.molar_mass if acid is not None else None
    if salt_mass is None or acid_mass is None:
        missing = [n for n, m in ((line.inci, salt_mass), (row.acid_inci, acid_mass)) if m is None]
        return _Amount(line, None, tuple(missing))
    return _Amount(line, acid_units(line.ingredient.inci_name) * acid_mass / salt_mass)


def purpose_fits(row_purpose: str, purpose: str | None) -> bool | None:
    """Whether a row bound to preservative (or any other) use applies to ``purpose``."""
    if purpose is None:
        return None
    return (purpose == "preservative") == (row_purpose == "preservative")


def _purpose(line: ResolvedLine, reference: ReferenceData, jurisdiction: str) -> str | None:
    """The line's purpose; when it says none, the one use its rows bind if they bind only one
    (rows for preservative use and for other uses both: None, the formula must say)."""
    purpose = line_purpose(line, line.ingredient)[0]
    if purpose is not None:
        return purpose
    keys = _keys(line.ingredient)
    kinds = {r.purpose for r in reference.limits if r.purpose
             and r.jurisdiction.casefold() == jurisdiction.casefold()
             and not keys.isdisjoint(_name_keys(r.ingredients))}
    if len(kinds) == 1:
        return "preservative" if kinds == {"preservative"} else "other"
    return None


def _as_reading(finding: Finding, row: LimitRecord) -> Finding:
    """A finding of a row bound to one use, for a line whose purpose the formula does not say:
    a warning that names the reading, not an error."""
    if finding.severity is not Severity.ERROR:
        return finding
    reading = "if used as a preservative" if row.purpose == "preservative" else \
        "if used for a purpose other than preserving"
    return finding.model_copy(update={
        "severity": Severity.WARNING, "message": f"{reading}: {finding.message}",
        "advice": f"declare the line's purpose (purpose = \"preservative\" or another); "
                  f"{finding.advice}"})


def _either_reading(finding: Finding) -> Finding:
    """A finding of a row bound to one use, for a line whose purpose the formula does not say
    but which is over a limit read either way: it stays an error."""
    if finding.severity is not Severity.ERROR:
        return finding
    return finding.model_copy(update={
        "message": f"whether used as a preservative or not: {finding.message}",
        "advice": f"{finding.advice} (declaring the line's purpose will not lift it: the "
                  "limits for preservative use and for other uses are both exceeded)"})


def _scope(row: LimitRecord) -> str:
    if row.product:
        return row.product
    return "all products" if row.category == "any" else f"{row.category} products"


def _max(row: LimitRecord) -> float:
    """The row's maximum; asked only of rows that have one (pH-only rows never reach here)."""
    if row.max_percent is None:
        raise ValueError(f"limit row {row.key} has no maximum")
    return row.max_percent


def ph_range(row: LimitRecord | PhCondition) -> str:
    if row.ph_min is not None:
        return f"pH {row.ph_min:g} to {row.ph_max:g}" if row.ph_max is not None \
            else f"pH at least {row.ph_min:g}"
    return f"the pH {row.ph_max:g} maximum"


@dataclass(frozen=True)
class PhCondition:
    """A list entry's pH condition on a substance of the formula, in the words the library holds
    for it: an imported export's cells verbatim (the part's product-type text and its "Other"
    text), or the seed's hand-written row (its conditions, as the row's source has them)."""

    where: str  # "EU Annex III/15a part (d)", or the seed row's list and entry
    words: str
    ph_min: float | None
    ph_max: float | None
    applies: bool | None  # None: the part may apply (its scope depends on what the formula
    # does not say)
    substances: frozenset[str]  # name keys of the formula's substances it is a condition on
    seed_row: bool = False

    @property
    def summary(self) -> str:
        return self.where if not self.seed_row else f"{self.where} ({ph_range(self)})"


def ph_conditions(formula: ResolvedFormula, reference: ReferenceData,
                  jurisdiction: str) -> list[PhCondition]:
    """The list entries that set a pH limit for a substance of this formula: the seed's rows
    (LIM01 applies them) and the parts of imported entries that apply or may apply (LIM03)."""
    from formdb.rules.list_entries import items_of
    from formdb.rules.scoping import parts_for

    out = [PhCondition(where=_where(row), words=row.conditions or "", ph_min=row.ph_min,
                       ph_max=row.ph_max, applies=True,
                       substances=frozenset(name_key(ln.inci) for ln in present),
                       seed_row=True)
           for row in applicable_rows(reference, formula, jurisdiction)
           if (row.ph_min is not None or row.ph_max is not None)
           and (present := lines_in(row, formula))]
    for item in items_of(formula, reference):
        purpose, _from = line_purpose(item.line, item.record)
        for entry in item.entries:
            for fit in parts_for(entry, formula, purpose):
                part = fit.part
                if fit.fits is not False and (part.ph_max is not None or part.ph_min is not None):
                    words = "; ".join(f'"{text}"' for text in (part.scope.text, part.other)
                                      if text)
                    out.append(PhCondition(
                        where=f"{entry.label} {part.name}", words=words, ph_min=part.ph_min,
                        ph_max=part.ph_max, applies=fit.fits,
                        substances=frozenset({name_key(item.record.inci_name)})))
    merged: dict[tuple[str, str], PhCondition] = {}
    for cond in out:  # one entry's part named by several lines: one condition on them all
        key = (cond.where, cond.words)
        if key in merged:
            cond = replace(cond, applies=merged[key].applies or cond.applies,
                           substances=merged[key].substances | cond.substances)
        merged[key] = cond
    return list(merged.values())


def legal_ph_limits(formula: ResolvedFormula, reference: ReferenceData,
                    jurisdiction: str) -> list[str]:
    """Where the pH of this formula is limited by a list entry, named (ALK02 stays quiet)."""
    return list(dict.fromkeys(c.summary for c in ph_conditions(formula, reference,
                                                               jurisdiction)))


def _where(row: LimitRecord) -> str:
    return f"{row.jurisdiction} {row.list_name}, entry {row.entry}"


def _base_values(row: LimitRecord) -> dict[str, float | str | None]:
    values: dict[str, float | str | None] = {
        "entry": row.entry, "list_name": row.list_name, "jurisdiction": row.jurisdiction,
        "category": row.category, "product": row.product, "max_percent": row.max_percent,
        "basis": row.basis, "aggregate": row.aggregate, "conditions": row.conditions,
        "list_date": row.list_date.isoformat(), "source": row.source}
    values.update({k: v for k, v in (("ph_min", row.ph_min), ("ph_max", row.ph_max))
                   if v is not None})  # only rows that limit the pH say so
    return values


@register
class ConcentrationLimit(Rule):
    """An ingredient, or a group summed, is over the limit of a regulatory list.

    Flags: a line over the maximum % of a limit record for the profile's jurisdiction and the
    formula's category (leave-on / rinse-off; rows for a product type replace the general rows
    when the formula names that product). Salts limited "as acid" are converted by molar mass
    (% x M(acid) / M(salt)); "sum" records add up every listed ingredient present (paraben
    groups); a maximum of 0 means not allowed in that category. A salt without the molar masses
    to convert is reported (info, or a warning when it is over the limit as-is). An ingredient
    on several lines, or reached through declared mixtures, is judged by its total. A row bound
    to one use (preservative, or other uses) applies by the line's purpose; when the formula
    does not say it, a finding is a warning naming the reading, but an error when the line is
    over a limit read either way (salicylic acid 0.6 % in a lipstick: V/3 and III/98 (c)).
    Why: limits in Annexes III, V and VI of Regulation (EC) No 1223/2009 apply to the
    ready-for-use product, many "as acid" or summed over a group; going over them makes the
    product unlawful. The bundled limits are a dated snapshot: check the current consolidated
    text.
    Fails: leave-on with Sodium Benzoate 0.6 %: 0.6 x 122.12 / 144.10 = 0.508 % as benzoic acid,
    over 0.5 % (Annex V entry 1).
    Passes: leave-on with Sodium Benzoate 0.55 %: 0.466 % as benzoic acid.
    Options: jurisdiction (default "EU"): which limit lists apply.
    """

    code = "LIM01"
    name = "concentration-limit"
    groups = ("regulatory",)
    default_severity = Severity.ERROR
    options: ClassVar[dict[str, Option]] = {"jurisdiction": JURISDICTION}

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        jurisdiction = options["jurisdiction"]
        if not any(r.jurisdiction.casefold() == jurisdiction.casefold()
                   for r in reference.limits):
            yield self.finding(
                Severity.INFO,
                f"no limit records for jurisdiction {jurisdiction!r}: concentration limits "
                "were not checked", values={"jurisdiction": jurisdiction},
                advice="load the limit lists for this jurisdiction, or choose another one in "
                       "the profile ([rules.LIM01] jurisdiction)")
            return
        formula = substance_formula(formula, reference)  # limits apply to constituents too
        pending: list[tuple[Finding, LimitRecord, set[str]]] = []
        for row in applicable_rows(reference, formula, jurisdiction):
            present = [ln for ln in lines_in(row, formula)
                       if not for_other_use(annex_of(row), line_purpose(ln, ln.ingredient)[0])]
            undecided: set[str] = set()
            if row.purpose:  # the row binds one use: lines declared for another one are out
                fits = {ln.inci: purpose_fits(row.purpose, _purpose(ln, reference, jurisdiction))
                        for ln in present}
                present = [ln for ln in present if fits[ln.inci] is not False]
                undecided = {name for name, fit in fits.items() if fit is None}
            if not present:
                continue
            amounts = [_amount(row, ln, reference, formula) for ln in present]
            found: Iterable[Finding] = []
            if row.max_percent is None:
                pass  # a row that limits the product's pH only
            elif row.max_percent <= 0:
                found = [self._forbidden(row, present, formula)]
            elif row.aggregate == "sum":
                found = self._sum(row, amounts)
            else:
                found = [f for amount in amounts for f in self._each(row, amount)]
            found = [*found, *self._ph(row, present, formula)]
            pending.extend((finding, row, undecided & set(finding.ingredients))
                           for finding in found)
        # a line whose purpose the formula does not say, over a preservative row and over a row
        # for other uses alike, is over a limit whichever it is: that stays an error
        readings: dict[str, set[bool]] = {}
        for finding, row, names in pending:
            if finding.severity is Severity.ERROR and row.purpose:
                for name in names:
                    readings.setdefault(name, set()).add(row.purpose == "preservative")
        either = {name for name, kinds in readings.items() if len(kinds) == 2}
        for finding, row, names in pending:
            if not names:
                yield finding
            elif names <= either:
                yield _either_reading(finding)
            else:
                yield _as_reading(finding, row)

    def _ph(self, row: LimitRecord, present: list[ResolvedLine],
            formula: ResolvedFormula) -> Iterable[Finding]:
        """The product's stated pH against the row's pH range (III/15a: up to pH 11)."""
        if row.ph_min is None and row.ph_max is None:
            return
        names = [ln.inci for ln in present]
        values = _base_values(row)
        ph = formula.formula.ph
        values["ph"] = ph
        if ph is None:
            yield self.finding(
                Severity.WARNING,
                f"{' + '.join(names)}: {_where(row)} limits the product to {ph_range(row)}, and "
                "the formula states no pH", ingredients=names, values=values,
                advice="measure the pH of a batch and state it (ph = ...) so the limit is checked")
            return
        if (row.ph_max is not None and ph > row.ph_max + _EPS) or \
                (row.ph_min is not None and ph < row.ph_min - _EPS):
            yield self.finding(
                self.default_severity,
                f"pH {ph:g} with {' + '.join(names)} is outside {ph_range(row)} for "
                f"{_scope(row)} ({_where(row)})", ingredients=names, values=values,
                advice=f"bring the pH within {ph_range(row)} (less base, or an acid)"
                       + (f" ({row.conditions})" if row.conditions else ""))

    def _forbidden(self, row: LimitRecord, present: list[ResolvedLine],
                   formula: ResolvedFormula) -> Finding:
        names = [ln.inci for ln in present]
        values = _base_values(row)
        values["percent"] = sum(ln.percent for ln in present)
        where = row.product or f"{formula.formula.category.value} products"
        return self.finding(
            self.default_severity,
            f"{' + '.join(names)} is not allowed in {where} ({_where(row)})",
            ingredients=names, values=values,
            advice=f"remove {' and '.join(names)}; choose an ingredient allowed in {where}")

    def _each(self, row: LimitRecord, amount: _Amount,
              extra: Mapping[str, float | str | None] | None = None) -> Iterable[Finding]:
        line = amount.line
        values = _base_values(row)
        values["percent"] = line.percent
        values.update(extra or {})
        if amount.value is None:
            yield self._unconvertible(row, [amount], values)
            return
        values["percent_as_acid" if row.basis == "as-acid" else "percent_on_basis"] = \
            amount.value
        values["conversion_factor"] = amount.factor
        if amount.value <= _max(row) + _EPS:
            return
        if row.aggregate == "sum":
            values["total_percent"] = amount.value
        as_acid = ""
        if row.basis == "as-acid" and amount.factor != 1.0:
            as_acid = f" = {figure(amount.value, _max(row), 3)} % as {row.acid_inci}"
        highest = _max(row) / amount.factor if amount.factor else _max(row)
        yield self.finding(
            self.default_severity,
            f"{line.inci} {line.percent:g} %{as_acid} is over the {_max(row):g} % limit "
            f"for {_scope(row)} ({_where(row)})",
            ingredients=[line.inci], values=values,
            advice=f"reduce {line.inci} to at most {highest:.3g} %"
                   + (f" ({row.conditions})" if row.conditions else ""))

    def _sum(self, row: LimitRecord, amounts: list[_Amount]) -> Iterable[Finding]:
        if len(amounts) == 1:  # one member of the group present: judged as on its own
            yield from self._each(row, amounts[0])
            return
        values = _base_values(row)
        names = [a.line.inci for a in amounts]
        values["percent"] = sum(a.line.percent for a in amounts)
        if any(a.value is None for a in amounts):
            yield self._unconvertible(row, amounts, values)
            return
        total = sum(a.value for a in amounts if a.value is not None)
        values["total_percent"] = total
        if total <= _max(row) + _EPS:
            return
        basis = " as acid" if row.basis == "as-acid" else ""
        parts = " + ".join(f"{a.line.inci} {a.value:.3g}" for a in amounts if a.value is not None)
        yield self.finding(
            self.default_severity,
            f"{parts} = {total:.3g} %{basis} together, over the {_max(row):g} % limit of "
            f"the sum for {_scope(row)} ({_where(row)})",
            ingredients=names, values=values,
            advice=f"bring the total of {', '.join(names)} to at most {_max(row):g} %"
                   f"{basis}")

    def _unconvertible(self, row: LimitRecord, amounts: list[_Amount],
                       values: dict[str, float | str | None]) -> Finding:
        missing = sorted({m for a in amounts for m in a.missing})
        names = [a.line.inci for a in amounts]
        as_is = sum(a.line.percent for a in amounts)
        values["missing_molar_mass"] = ", ".join(missing)
        over = as_is > _max(row) + _EPS
        return self.finding(
            Severity.WARNING if over else Severity.INFO,
            f"{' + '.join(names)} cannot be expressed as {row.acid_inci} for {_where(row)}: "
            f"no molar mass for {', '.join(missing)}"
            + (f"; as-is {as_is:g} % is over the {_max(row):g} % limit" if over else ""),
            ingredients=names, values=values,
            advice=f"add the molar mass of {', '.join(missing)} to the library so the limit "
                   "can be checked as acid")


@register
class ExclusiveEntries(Rule):
    """Two regulatory entries that may not be used in the same product are both present.

    Flags: an ingredient of one limit entry present together with an ingredient of an entry the
    first one excludes (the ``excludes`` column of the limit records), in the profile's
    jurisdiction, whatever the category.
    Why: some preservative entries are mutually exclusive by law, e.g. methylisothiazolinone
    alone (Annex V entry 57) and the 3:1 methylchloroisothiazolinone/methylisothiazolinone
    mixture (Annex V entry 39), Regulation (EU) No 1003/2014.
    Fails: a rinse-off with Methylisothiazolinone and Methylchloroisothiazolinone (and
    Methylisothiazolinone).
    Passes: a rinse-off with Methylisothiazolinone alone.
    Options: jurisdiction (default "EU"): which limit lists apply.
    """

    code = "LIM02"
    name = "exclusive-entries"
    groups = ("regulatory",)
    default_severity = Severity.ERROR
    options: ClassVar[dict[str, Option]] = {"jurisdiction": JURISDICTION}

    def check(self, formula: ResolvedFormula, facts: FormulaFacts, reference: ReferenceData,
              options: Mapping[str, Any]) -> Iterable[Finding]:
        jurisdiction = options["jurisdiction"].casefold()
        rows = [r for r in reference.limits if r.jurisdiction.casefold() == jurisdiction]
        present: dict[str, list[str]] = {}
        labels: dict[str, LimitRecord] = {}
        for row in rows:
            names = [ln.inci for ln in lines_in(row, formula)]
            if names:
                key = row.entry.casefold()
                present.setdefault(key, [])
                present[key].extend(n for n in names if n not in present[key])
                labels.setdefault(key, row)
        seen: set[tuple[str, str]] = set()
        for row in rows:
            key = row.entry.casefold()
            if key not in present:
                continue
            for other in row.excludes:
                other_key = other.casefold()
                pair = tuple(sorted((key, other_key)))
                if other_key not in present or pair in seen or other_key == key:
                    continue
                seen.add(pair)  # type: ignore[arg-type]
                first, second = present[key], present[other_key]
                if set(first) == set(second):
                    continue  # one ingredient listed under both entries is not two entries
                other_row = labels[other_key]
                yield self.finding(
                    self.default_severity,
                    f"{', '.join(first)} ({_where(row)}) and {', '.join(second)} "
                    f"({_where(other_row)}) may not be used in the same product",
                    ingredients=[*first, *second],
                    values={"entry": row.entry, "excluded_entry": other_row.entry,
                            "list_name": row.list_name, "jurisdiction": row.jurisdiction,
                            "source": row.source, "list_date": row.list_date.isoformat()},
                    advice="keep one of the two entries and remove the other")
