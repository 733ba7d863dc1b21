"""``check --all`` with the Commission's annex exports imported: the entries that apply are found
through the indexed match keys, a bounded number of statements per batch, and each ingredient
is matched once per run, never the ~2,400 entries scanned per line. Counted with SQLAlchemy's
``before_cursor_execute`` event; no times are asserted. Skips without ../shared/regulatory/."""

from __future__ import annotations

import math
from typing import Any

import pytest

from formdb.bench import library
from formdb.services.checking.flow import iter_check_stored
from formdb.services.lists.importing import import_lists
from formdb.store import lists as store_lists
from formdb.store.library import Library
from tests.bench.test_check_queries import FIXED, PER_BATCH, StatementCounter, counter  # noqa: F401
from tests.conftest import TEST_USER
from tests.libraries import opened
from tests.services.test_lists_import import export, needs_exports

pytestmark = [needs_exports, pytest.mark.slow]
PLAN = library.LibraryPlan(ingredients=120, formulas=80, seed=5)
LIST_LOOKUPS = 2  # per batch with new ingredients: the match keys, the entry bodies


@pytest.fixture(scope="module")
def lists_library(tmp_path_factory: pytest.TempPathFactory) -> str:
    """Generated and the five exports imported once for the module: its tests only read it."""
    url = f"sqlite:///{tmp_path_factory.mktemp('lists') / 'library.sqlite'}"
    library.generate(url, PLAN)
    with Library.open(url) as opened_library:
        import_lists(opened_library, [export(a) for a in ("II", "III", "IV", "V", "VI")],
                     user=TEST_USER)
    return url


@pytest.mark.parametrize("batch_size", [10, 40])
def test_list_matching_is_indexed(lists_library: str, counter: StatementCounter,  # noqa: F811
                                  batch_size: int, monkeypatch: pytest.MonkeyPatch) -> None:
    asked: list[int] = []
    real = store_lists.entries_for_records

    def recording(session: Any, records: Any) -> Any:
        records = list(records)
        asked.append(len(records))
        return real(session, records)

    monkeypatch.setattr(store_lists, "entries_for_records", recording)
    matched = lines = count = 0
    for result in iter_check_stored(opened(lists_library), batch_size=batch_size):
        count += 1
        lines += len(result.facts.lines)
        matched += sum(f.rule == "LIM03" for f in result.findings)
    batches = math.ceil(PLAN.formulas / batch_size)
    assert count == PLAN.formulas and matched > 0  # the lists were used
    assert counter.selects <= FIXED + (PER_BATCH + LIST_LOOKUPS) * batches, counter.statements
    assert counter.selects < lines / 5
    assert sum(asked) <= PLAN.ingredients + 120  # each ingredient matched once per run
    assert not any("FROM list_entries" in s and "list_entry_matches" not in s
                   and "WHERE list_entries.id IN" not in s for s in counter.statements)
