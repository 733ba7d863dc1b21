"""Check formulas against the library: read, resolve every name, run the profile's rules.

The flow (DESIGN.md section 2): file -> FormulaFile -> names resolved in the store -> a frozen
ResolvedFormula -> rules -> CheckResult. The database is read once per batch of formulas; rules
never touch it.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, chosen_profile
from formdb.schemas.formula import FormulaFile, ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import CheckResult
from formdb.services.library.formula_files import (
    content_hash,
    parse_formula_text,
    read_formula_file,
)
from formdb.services.lists.reading import with_lists
from formdb.store import queries
from formdb.store.formulas import iter_stored_formulas
from formdb.store.library import Library


@dataclass(frozen=True)
class FormulaInput:
    """A formula to check: its validated content, the exact text, and where it came from."""

    formula: FormulaFile
    text: str
    label: str


def library_product_types(session: Session) -> dict[str, str]:
    """Product types of the library's exposure table (the seed's SCCS Notes of Guidance rows
    and every row the team added with `formdb exposure add`), each with its category."""
    from sqlalchemy import select

    from formdb.store.models import ExposureEntry

    rows = session.execute(select(ExposureEntry.product, ExposureEntry.category)
                           .order_by(ExposureEntry.product))
    return dict(rows.all())


def _product_problem(formula: FormulaFile, label: str, known: Mapping[str, str],
                     ) -> tuple[str, str] | None:
    """(the key at fault, the problem): an unknown product type, or one whose category in the
    exposure table is not the formula's: a body lotion is leave-on, and checked as rinse-off it
    would meet the rinse-off limits (sodium benzoate 2.5 % as acid instead of 0.5 %) and the
    rinse-off exposure."""
    if formula.product is None:
        return None
    wanted = formula.product.strip().casefold()
    category = next((c for p, c in known.items() if p.casefold() == wanted), None)
    if category is None:
        return "product", (f"{label}, key product: {formula.product!r} is not a known product "
                           f"type (known: {', '.join(known)}; `formdb exposure add` adds one)")
    if category.strip().casefold() != formula.category.value:
        return "category", (f"{label}, key category: {formula.category.value!r} contradicts "
                            f"product {formula.product!r}, a {category} product in the library's "
                            f"exposure table (category = \"{category}\", or the product type "
                            "meant)")
    return None


def read_inputs(paths: Iterable[Path]) -> list[FormulaInput]:
    """Read and validate every file before anything is checked (all-or-nothing input); the
    problems of every file are reported together."""
    def read(path: Path) -> FormulaInput:
        formula, text = read_formula_file(path)
        return FormulaInput(formula, text, str(path))

    return _every_item(read, paths)


def input_from_text(text: str, label: str) -> FormulaInput:
    formula = parse_formula_text(text, label)
    return FormulaInput(formula, text, label)


def resolve(item: FormulaInput, found: dict[str, IngredientRecord],
            session: Session, products: Mapping[str, str] | None = None) -> ResolvedFormula:
    """Attach library ingredients to every line; unknown names are one input error each, and
    so is a product type the library's exposure table lacks."""
    problems = []
    keys: set[str] = set()  # the keys with a problem, for the next step to suggest
    if item.formula.product is not None:
        known = products if products is not None else library_product_types(session)
        if found_problem := _product_problem(item.formula, item.label, known):
            key, problem = found_problem
            keys.add(key)
            problems.append(problem)
    lines = []
    for number, line in enumerate(item.formula.ingredients, start=1):
        record = found.get(name_key(line.inci))
        if record is None:
            suggestions = queries.suggest_names(session, line.inci)
            hint = f"; did you mean {', '.join(suggestions)}?" if suggestions else ""
            keys.add("inci")
            problems.append(f"{item.label}, ingredients row {number}, key inci: "
                            f"unknown ingredient {line.inci!r}{hint}")
            continue
        lines.append(ResolvedLine(line_no=number, given_name=line.inci, percent=line.percent,
                                  phase=line.phase, ingredient=record, purpose=line.purpose))
    if problems:
        raise InvalidData.of(problems, hint="; ".join(
            step for key, step in _NEXT_STEP.items() if key in keys))
    return ResolvedFormula(source=item.label, formula=item.formula, lines=tuple(lines),
                           content_hash=content_hash(item.text))


_NEXT_STEP = {
    "inci": "add the ingredient to the library (`formdb ingredient add`) or correct its name",
    "product": "add the product type (`formdb exposure add`) or correct its name",
    "category": "correct the category or the product type",
}


def resolve_all(session: Session, items: list[FormulaInput],
                known: dict[str, IngredientRecord] | None = None) -> list[ResolvedFormula]:
    """Resolve every name of ``items`` in one bulk lookup.

    ``known`` (name key -> record) carries records from earlier batches of the same transaction:
    only names not in it are looked up, and what is found is added to it. It grows with the
    library's size, never with the number of formulas.
    """
    names = {line.inci for item in items for line in item.formula.ingredients}
    if known is None:
        found = queries.find_ingredients(session, names)
    else:
        wanted = {n for n in names if name_key(n) not in known}
        if wanted:
            known.update(queries.find_ingredients(session, wanted))
        found = known
    products = (library_product_types(session)
                if any(item.formula.product is not None for item in items) else {})
    return _every_item(lambda item: resolve(item, found, session, products), items)


def _every_item(step: Callable[[Any], Any], items: Iterable[Any]) -> list[Any]:
    """``step`` over every item; the problems of all items are raised together, so a run over
    several files names every bad line at once and nothing goes on with half of them."""
    done, problems, hint = [], [], None
    for item in items:
        try:
            done.append(step(item))
        except InvalidData as exc:
            problems.extend(exc.problems)
            hint = hint or exc.hint
    if problems:
        raise InvalidData.of(problems, hint=hint)
    return done


def check_inputs(library: Library, items: list[FormulaInput],
                 profile: Profile | str | None = None) -> list[CheckResult]:
    """Check already-read formulas against the library at ``library``."""
    chosen = chosen_profile(profile)
    with library.read() as session:
        reference = queries.load_reference_data(session)
        resolved = resolve_all(session, items)
        reference = with_lists(session, reference, resolved)
    return [check_resolved(formula, reference, chosen) for formula in resolved]


def check_files(library: Library, paths: Iterable[Path],
                profile: Profile | str | None = None) -> list[CheckResult]:
    """The Python face of ``formdb check FILE...``: the same records ``--format json`` prints."""
    return check_inputs(library, read_inputs(paths), profile)


def count_stored(library: Library) -> int:
    """How many formulas the library stores (for a progress bar)."""
    from sqlalchemy import func, select

    from formdb.store.models import StoredFormula

    with library.read() as session:
        return int(session.scalar(select(func.count()).select_from(StoredFormula)) or 0)


def iter_check_stored(library: Library, profile: Profile | str | None = None,
                      batch_size: int = 200) -> Iterator[CheckResult]:
    """Check every stored formula, a batch at a time (names resolved in bulk per batch)."""
    chosen = chosen_profile(profile)
    with library.read() as session:
        reference: ReferenceData = queries.load_reference_data(session)
        known: dict[str, IngredientRecord] = {}  # records met so far: one build per run
        batch: list[FormulaInput] = []
        for stored in iter_stored_formulas(session):
            batch.append(input_from_text(stored.content, f"stored:{stored.name}"))
            if len(batch) >= batch_size:
                formulas = resolve_all(session, batch, known)
                reference = with_lists(session, reference, formulas)
                for formula in formulas:
                    yield check_resolved(formula, reference, chosen)
                batch = []
        formulas = resolve_all(session, batch, known)
        reference = with_lists(session, reference, formulas)
        for formula in formulas:
            yield check_resolved(formula, reference, chosen)
