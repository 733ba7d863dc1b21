"""``formdb label FILE``: the ingredient declaration for the label of one formula.

EU order (Regulation (EC) No 1223/2009 Art. 19(1)(g)): ingredients above 1 % in descending
order of weight, then those at 1 % or less (any order is allowed; formdb keeps descending
order so the list is reproducible), colourants last. Each name is the library's INCI name (the
name the EU list expects: a line written "Water" is declared "Aqua"). A supplier blend whose
constituents the library declares is declared as its constituents, each at its share of the
line (a blend inside a blend in turn; an undeclared rest keeps the blend's name), since the list
names ingredients, not trade mixtures; a fragrance or flavour stays one word ("parfum",
"aroma", Art. 19(1)(g)), its allergens above the labelling threshold named (ALG01's table) and
marked in the result.
"""

from __future__ import annotations

from pathlib import Path

from formdb.errors import ConfigError
from formdb.facts.allergen_table import allergen_table
from formdb.facts.composition import pieces
from formdb.schemas.formula import ResolvedFormula
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.labels import LabelDeclaration, LabelEntry
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import FactsSettings
from formdb.schemas.vocab import Role
from formdb.services.checking.flow import read_inputs, resolve_all
from formdb.services.lists.reading import with_lists
from formdb.store import queries
from formdb.store.library import Library

ORDERED_ABOVE_PERCENT = 1.0
JURISDICTIONS = ("EU",)


def declaration(formula: ResolvedFormula, reference: ReferenceData,
                jurisdiction: str = "EU") -> LabelDeclaration:
    """The declaration of one resolved formula (pure)."""
    if jurisdiction.upper() not in JURISDICTIONS:
        raise ConfigError(f"no label naming rules for jurisdiction {jurisdiction!r}",
                          hint=f"use one of: {', '.join(JURISDICTIONS)}")
    totals: dict[str, tuple[str, float, bool, list[str]]] = {}
    for ln in formula.lines:
        for piece in pieces(ln.ingredient, ln.percent, reference, whole=_one_word):
            ing = piece.record
            key = name_key(ing.inci_name)
            name, total, colourant, given = totals.get(key, (ing.inci_name, 0.0, False, []))
            if ln.given_name not in given:
                given.append(ln.given_name)
            totals[key] = (name, total + piece.percent,
                           colourant or ing.has_role(Role.COLOURANT), given)
    table = allergen_table(formula, reference, FactsSettings(label_jurisdiction=jurisdiction))
    named = set(table.must_label) if table else set()

    def group(percent: float, colourant: bool) -> str:
        if colourant:
            return "colourant"
        return "above 1 %" if percent > ORDERED_ABOVE_PERCENT else "1 % or less"

    entries = [LabelEntry(name, total, group(total, colourant), name in named, tuple(given))
               for name, total, colourant, given in totals.values()]
    listed = {name_key(e.name) for e in entries}
    entries.extend(  # allergens declared by a mixture that no line names
        LabelEntry(line.inci, line.percent, group(line.percent, False), True, tuple(line.sources))
        for line in (table.lines if table else ())
        if line.must_label and name_key(line.inci) not in listed)
    rank = {"above 1 %": 0, "1 % or less": 1, "colourant": 2}
    entries.sort(key=lambda e: (rank[e.group], -e.percent, e.name))
    return LabelDeclaration(formula=formula.name, category=formula.formula.category.value,
                            jurisdiction=jurisdiction.upper(), entries=tuple(entries),
                            allergens_named=tuple(e.name for e in entries if e.allergen))


def _one_word(record: IngredientRecord) -> bool:
    """A fragrance or flavour is declared as one word, its allergens beside it."""
    return record.has_role(Role.FRAGRANCE)


def label_file(library: Library, path: Path, jurisdiction: str = "EU") -> LabelDeclaration:
    """The Python face of ``formdb label FILE``."""
    items = read_inputs([path])
    with library.read() as session:
        reference = queries.load_reference_data(session)
        [resolved] = resolve_all(session, items)
        reference = with_lists(session, reference, [resolved])
    return declaration(resolved, reference, jurisdiction)
