"""formdb's public Python API: everything the command line does, as functions.

Open a library once and pass it to every call; each call is one unit of work, and a block
``with library.read():`` (or ``write()``) makes several calls share one snapshot or one
transaction, exactly as one command does. The functions return the same pydantic records that
``--format json`` prints (``CheckResult.to_contract_json()`` is that JSON).

    from formdb import api

    library = api.create_library("larkspur.sqlite", seed=True)
    result = api.check(library, Path("cream.toml"))
    print(result.facts.blend_hlb, [f.rule for f in result.findings])

A formula is given as a ``Path`` to a TOML file, as TOML text (a ``str``) or as a mapping with
the keys of the formula file. Bad input raises ``formdb.errors.InvalidData`` (a ``FormdbError``)
naming the file, row and field, and the library is left as it was. Changes are recorded under
the identity that was authenticated (``library.user``: the PostgreSQL login, or on SQLite the
operating-system account); a ``user=`` that names someone else is refused
(``formdb.store.identity.ClaimRefused``).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Mapping, Sequence
from datetime import date
from pathlib import Path
from typing import Any

from formdb.errors import InvalidData
from formdb.rules.profiles import Profile, chosen_profile
from formdb.schemas.bench import PriceRecord, ScreeningFit, ScreeningSeries, WeighSheet
from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.result import CheckResult
from formdb.store.library import Library

FormulaGiven = Path | str | Mapping[str, Any]
ProfileGiven = Profile | str | None


def _acting(library: Library, user: str | None) -> str:
    """The authenticated identity; ``user`` only as a check (see the module docstring)."""
    return library.identify(user)


# ----- the library ------------------------------------------------------------------------------

def open_library(url: str = "formdb.sqlite") -> Library:
    """The library at ``url`` (a SQLite file path or a ``postgresql+psycopg://`` URL), at the
    newest schema; ``formdb.errors.SchemaOutdated`` when it is missing or older."""
    return Library.open(url)


def create_library(url: str = "formdb.sqlite", *, seed: bool = False,
                   user: str | None = None) -> Library:
    """Create (or upgrade) the library at ``url`` and open it; ``seed`` loads the bundled
    ingredient library, limit lists and profiles (what ``formdb init --seed`` does)."""
    from formdb.services.seed.setup import init_library
    from formdb.store.identity import accept_claim, identify_location

    actual, dialect = identify_location(url)
    init_library(url, seed=seed, user=accept_claim(actual, user, dialect))
    return Library.open(url)


# ----- checking ---------------------------------------------------------------------------------

def _as_input(formula: FormulaGiven, label: str | None) -> Any:
    from formdb.services.checking.flow import input_from_text, read_inputs

    if isinstance(formula, Path):
        return read_inputs([formula])[0]
    if isinstance(formula, str):
        return input_from_text(formula, label or "<formula text>")
    if isinstance(formula, Mapping):
        import tomli_w

        try:
            text = tomli_w.dumps(dict(formula))
        except (TypeError, ValueError) as exc:
            raise InvalidData(f"{label or '<formula mapping>'}: cannot be written as a formula "
                              f"file ({exc})", hint="use the keys and types of the formula "
                              "file (README)") from None
        return input_from_text(text, label or "<formula mapping>")
    raise TypeError(f"a formula is a Path, TOML text or a mapping, not {type(formula).__name__}")


def check(library: Library, formula: FormulaGiven, *, profile: ProfileGiven = "default",
          label: str | None = None) -> CheckResult:
    """Check one formula against the library (``formdb check FILE``)."""
    return check_many(library, [formula], profile=profile, labels=[label])[0]


def check_many(library: Library, formulas: Iterable[FormulaGiven], *,
               profile: ProfileGiven = "default",
               labels: Iterable[str | None] | None = None) -> list[CheckResult]:
    """Check several formulas in one snapshot; the problems of every input are raised at once."""
    from formdb.services.checking.flow import check_inputs

    given = list(formulas)
    names = list(labels) if labels is not None else [None] * len(given)
    items = [_as_input(f, n) for f, n in zip(given, names, strict=True)]
    return check_inputs(library, items, chosen_profile(profile))


def check_stored(library: Library, *, profile: ProfileGiven = "default") -> Iterator[CheckResult]:
    """Check every formula stored in the library, one result at a time (``check --all``)."""
    from formdb.services.checking.flow import iter_check_stored

    return iter_check_stored(library, chosen_profile(profile))


# ----- ingredients ------------------------------------------------------------------------------

def list_ingredients(library: Library, *, role: str | None = None,
                     include_retired: bool = False) -> list[IngredientRecord]:
    """The library's ingredients (``formdb ingredient list --format json``)."""
    from formdb.services.library.ingredients import list_ingredients as listed

    with library.read() as session:
        return listed(session, role=role, include_retired=include_retired)


def show_ingredient(library: Library, name: str) -> IngredientRecord:
    """One ingredient by INCI name or synonym, every value with its provenance."""
    from formdb.services.library.ingredients import show_ingredient as shown

    with library.read() as session:
        return shown(session, name).record


def import_ingredients(library: Library, path: Path, *, user: str | None = None,
                       reason: str | None = None, dry_run: bool = False) -> Any:
    """Import a CSV or XLSX ingredient table, all rows or none (``formdb ingredient import``);
    returns the report of what was (or would be) added and changed."""
    from formdb.services.library.ingredients import import_table

    with library.write() as session:
        return import_table(session, path, user=_acting(library, user), reason=reason,
                            dry_run=dry_run)


# ----- the bench: weigh sheets, prices, screening series ----------------------------------------

def weigh_sheet(library: Library, formula: FormulaGiven | None = None, *,
                stored: str | None = None, batch_kg: float | None = None,
                evaporation_percent: float = 0.0,
                balances: Sequence[tuple[float, float]] | None = None,
                label: str | None = None) -> WeighSheet:
    """The weigh sheet of a batch (``formdb batch``): a formula (as for ``check``) or the
    stored formula named ``stored``, every line scaled to ``batch_kg`` (else the formula's
    ``batch_kg``), rounded to the balance that weighs it (``balances``: (resolution g,
    capacity g) pairs, default the bench of the README), grouped by phase in process order,
    with the total checked and the cost from the library's prices. Render it as the command
    does with ``formdb.report.weigh_sheet.render_sheet(sheet, "text" | "csv" | "xlsx" |
    "html")``."""
    from formdb.science.weighing import DEFAULT_BALANCES, Balance
    from formdb.services.bench_work.weigh_sheets import weigh_sheet_for_input

    try:
        bench = DEFAULT_BALANCES if balances is None else tuple(
            Balance(resolution_g=r, capacity_g=c) for r, c in balances)
    except ValueError as exc:
        raise InvalidData(f"balances: {exc}") from None
    item = None if formula is None else _as_input(formula, label)
    return weigh_sheet_for_input(library, item, batch_kg, balances=bench,
                                 evaporation_percent=evaporation_percent, stored=stored)


def add_price(library: Library, inci: str, price_per_kg: float, currency: str, supplier: str,
              *, quoted_on: date | None = None, note: str | None = None,
              user: str | None = None) -> PriceRecord:
    """Record a price quote (``formdb price add``); earlier quotes stay as the history."""
    from formdb.services.bench_work.prices import add_price as add

    return add(library, inci, price_per_kg, currency, supplier, user=_acting(library, user),
               quoted_on=quoted_on, note=note)


def prices(library: Library, inci: str | None = None) -> list[PriceRecord]:
    """Every quote of one ingredient, or of all, oldest first (``formdb price list``)."""
    from formdb.services.bench_work.prices import price_history

    return price_history(library, inci)


def plan_screening(library: Library, name: str, *, low: str, high: str,
                   oils: Sequence[tuple[str, float]] = (), formula: Path | None = None,
                   from_hlb: float = 6.0, to_hlb: float = 16.0, step: float = 1.0,
                   oil_percent: float = 20.0, emulsifier_percent: float = 5.0,
                   batch_g: float = 100.0, emulsion_type: str = "O/W",
                   user: str | None = None) -> ScreeningSeries:
    """Plan and store a screening series (``formdb screen plan``): the oil phase given as
    (INCI, share) pairs or taken from a formula file, emulsified with the pair ``low``/``high``
    at blend HLBs from ``from_hlb`` to ``to_hlb``; each blend with its weigh sheet
    (``series.sheets``)."""
    from formdb.schemas.vocab import EmulsionType
    from formdb.services.bench_work.screening import plan_series

    return plan_series(library, name, user=_acting(library, user), oils=list(oils),
                       formula=formula, low=low, high=high, start=from_hlb, stop=to_hlb,
                       step=step, oil_percent=oil_percent,
                       emulsifier_percent=emulsifier_percent, batch_g=batch_g,
                       emulsion_type=EmulsionType(emulsion_type))


def screening_series(library: Library, name: str, *,
                     with_sheets: bool = False) -> ScreeningSeries:
    """A stored series: its blends and what was observed of each (``formdb screen show``)."""
    from formdb.services.bench_work.screening import show_series

    return show_series(library, name, with_sheets=with_sheets)


def record_screening(library: Library, name: str, blend: int, *,
                     stability: float | None = None, separation_percent: float | None = None,
                     droplet_um: float | None = None, after_hours: float | None = None,
                     note: str | None = None, user: str | None = None) -> ScreeningSeries:
    """Record what the lab saw of one blend (``formdb screen record``); returns the series."""
    from formdb.services.bench_work.screening import record_observations

    values = {k: v for k, v in (("stability", stability),
                                ("separation_percent", separation_percent),
                                ("droplet_um", droplet_um)) if v is not None}
    return record_observations(library, name, blend, values, user=_acting(library, user),
                               after_hours=after_hours, note=note)


def fit_screening(library: Library, name: str, *, measure: str = "stability",
                  store: bool = False, user: str | None = None,
                  after_hours: float | None = None) -> ScreeningFit:
    """The required HLB fitted to a series with its uncertainty (``formdb screen fit``);
    ``store`` keeps it as an in-house measurement that the next check uses; ``after_hours``
    picks the readings of that age. Raises ``InvalidData`` saying why when the series has no
    clear optimum or its latest readings are of different ages."""
    from formdb.services.bench_work.screening import fit_series

    return fit_series(library, name, measure=measure, store=store,
                      user=_acting(library, user), after_hours=after_hours)


# ----- the review flow --------------------------------------------------------------------------

def run_review(library: Library, source: Path | str, *, profile: ProfileGiven = None,
               user: str | None = None) -> Any:
    """Check a formula file (or ``stored:NAME``) and store an immutable review run."""
    from formdb.services.review.runs import run_review as run

    return run(library, str(source), profile, user=_acting(library, user))


def sign_review(library: Library, run_key: str, meaning: str, *, signing_key: Any,
                user: str | None = None, reason: str | None = None,
                justifications: Sequence[str] = ()) -> Any:
    """Sign a current, signable review run with the signer's Ed25519 private key
    (``formdb review sign``; load the key with ``formdb.services.review.keys
    .load_private_key``). "approved" with open items needs a justification for each
    (``"N=why"`` or ``"RULE=why"``); "rejected" needs a reason."""
    from formdb.services.review.runs import sign_run

    return sign_run(library, run_key, meaning, user=_acting(library, user),
                    signing_key=signing_key, reason=reason,
                    justifications=list(justifications))


def review_status(library: Library) -> Any:
    """Every review run with its state (current, stale, superseded), kind (signable or draft)
    and signatures, each verified; the chain problems found and the review policy."""
    from formdb.services.review.runs import review_status as status

    return status(library)


def filed_review(library: Library, run_key: str) -> Any:
    """A stored run as filed: its result, records and signatures (``formdb review report``)."""
    from formdb.services.review.runs import filed_run

    return filed_run(library, run_key)


__all__ = ["Library", "add_price", "check", "check_many", "check_stored", "create_library",
           "filed_review", "fit_screening", "import_ingredients", "list_ingredients",
           "open_library", "plan_screening", "prices", "record_screening", "review_status",
           "run_review", "screening_series", "show_ingredient", "sign_review", "weigh_sheet"]
