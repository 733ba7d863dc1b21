"""Adding, editing, retiring and restoring ingredients: the change log, versions, conflicts and
the reason a published value needs, on SQLite and PostgreSQL.

The published values edited here are handbook values (polysorbate 80 HLB 15.0, HPE6 Table IX;
sorbitan oleate 4.3, Griffin 1954); the replacement values are made up for the test.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

import pytest
from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import Conflict, InvalidData, NotFound
from formdb.schemas.vocab import Role
from formdb.services.library.ingredients import (
    FieldChange,
    add_ingredient,
    edit_ingredient,
    ingredient_history,
    list_ingredients,
    restore_ingredient,
    retire_ingredient,
    show_ingredient,
)
from formdb.services.library.tables import TableProblems
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import ChangeLogEntry, Ingredient
from formdb.store.sealing import LibrarySession
from tests.fixtures.tables.library_setup import SETUP_USER, build_library
from tests.helpers import library_state


@pytest.fixture
def library(library_url: str) -> str:
    return build_library(library_url)


@contextmanager
def _session(url: str) -> Iterator[Session]:
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            yield session
    finally:
        engine.dispose()


def _unchanged(url: str, error: type[Exception], call, *args, **kwargs) -> Exception:
    before = library_state(url)
    with pytest.raises(error) as caught, _session(url) as session:
        call(session, *args, **kwargs)
    assert library_state(url) == before
    return caught.value


def test_edit_changes_value_bumps_version_and_logs_each_field(library: str) -> None:
    with _session(library) as session:
        report = edit_ingredient(session, "sorbitan monooleate",
                                 [("hlb", "4.4"), ("density", "0.99 g/cm3")], user="ana",
                                 source="larkspur-bench", reason="bench check, lot 7")
    assert report.inci_name == "Sorbitan Oleate" and report.version == 2
    assert report.changes == [
        FieldChange("hlb", "4.3", "4.4"), FieldChange("hlb_source", "griffin-1954",
                                                      "larkspur-bench"),
        FieldChange("density", "", "0.99"), FieldChange("density_source", "", "larkspur-bench")]
    with _session(library) as session:
        history = ingredient_history(session, "Sorbitan Oleate")
        detail = show_ingredient(session, "Sorbitan Oleate")
    edits = [h for h in history if h.action == "edit"]
    # one entry for the one change, its fields as data: numbers as numbers, sources beside them
    assert [(h.user, h.version, h.reason) for h in edits] == [("ana", 2, "bench check, lot 7")]
    assert [c.model_dump(exclude_unset=True) for c in edits[0].changes] == [
        {"field": "hlb", "old": 4.3, "new": 4.4, "old_source": "griffin-1954",
         "new_source": "larkspur-bench"},
        {"field": "density", "old": None, "new": 0.99, "old_source": None,
         "new_source": "larkspur-bench"}]
    assert {h.user for h in history if h.action == "import"} == {SETUP_USER}
    assert detail.record.p.hlb == 4.4
    assert detail.record.provenance["hlb"].evidence.value == "measured"
    assert detail.updated_by == "ana"


def test_published_value_needs_a_reason(library: str) -> None:
    error = _unchanged(library, InvalidData, edit_ingredient, "Polysorbate 80",
                       [("hlb", "15.5")], user="ana", source="larkspur-bench")
    assert "hlb of 'Polysorbate 80' is a published value (source hpe6)" in str(error)
    assert "--reason" in (error.hint or "")
    # a note of a published value is part of it too
    _unchanged(library, InvalidData, edit_ingredient, "Polysorbate 80",
               [("hlb_note", "rechecked")], user="ana")
    with _session(library) as session:
        report = edit_ingredient(session, "Polysorbate 80", [("hlb", "15.5")], user="ana",
                                 source="larkspur-bench", reason="measured by titration")
    assert report.version == 2


def test_value_of_other_evidence_changes_without_reason(library: str) -> None:
    with _session(library) as session:  # Glycerin density is from memory
        report = edit_ingredient(session, "Glycerol", [("density", "1.261")], user="ana",
                                 source="from-memory")
    assert report.changes == [FieldChange("density", "1.26", "1.261")]


def test_new_value_needs_a_source(library: str) -> None:
    error = _unchanged(library, InvalidData, edit_ingredient, "Glycerin",
                       [("hlb", "1")], user="ana")
    assert "needs its source" in str(error)


def test_stale_expected_version_is_refused_naming_who_changed_it(library: str) -> None:
    with _session(library) as session:
        edit_ingredient(session, "Glycerin", [("density", "1.261")], user="bea",
                        source="from-memory")
    error = _unchanged(library, Conflict, edit_ingredient, "Glycerin", [("density", "1.25")],
                       user="ana", source="from-memory", expect_version=1)
    message = str(error)
    assert "'Glycerin' was changed since version 1 by bea" in message
    assert "it is now version 2" in message and "UTC" in message
    with _session(library) as session:
        report = edit_ingredient(session, "Glycerin", [("density", "1.25")], user="ana",
                                 source="from-memory", expect_version=2)
    assert report.version == 3


def test_concurrent_edit_becomes_a_conflict_not_an_overwrite(library: str) -> None:
    """Two people load version 1; the second save must fail (optimistic lock)."""
    engine = make_engine(library)
    try:
        slow = LibrarySession(engine, expire_on_commit=False)
        stale = slow.scalars(select(Ingredient).where(Ingredient.inci_name == "Glycerin")).one()
        slow.commit()  # the object keeps version 1 in the slow session's identity map
        assert stale.version == 1
        with unit_of_work(engine) as session:
            edit_ingredient(session, "Glycerin", [("density", "1.261")], user="bea",
                            source="from-memory")
        with pytest.raises(Conflict) as caught:
            edit_ingredient(slow, "Glycerin", [("density", "1.25")], user="ana",
                            source="from-memory")
        slow.rollback()
        slow.close()
    finally:
        engine.dispose()
    assert "by bea" in str(caught.value) and "now version 2" in str(caught.value)
    with _session(library) as session:
        assert show_ingredient(session, "Glycerin").record.p.density == 1.261


def test_bad_edit_values_are_all_reported(library: str) -> None:
    error = _unchanged(library, TableProblems, edit_ingredient, "Carbomer",
                       [("ph_min", "15"), ("roles", "thickener; gellant")], user="ana",
                       source="rule-of-thumb")
    assert error.problems == [
        "edit 'Carbomer', field roles: 'gellant' is not a known role (choose from "
        + ", ".join(r.value for r in Role)
        + ")",
        "edit 'Carbomer', field ph_min: ph_min 15 is out of range: it must be at least 0 and "
        "at most 14"]


def test_crossed_range_is_refused(library: str) -> None:
    error = _unchanged(library, TableProblems, edit_ingredient, "Carbomer",
                       [("ph_max", "4")], user="ana", source="rule-of-thumb")
    assert "ph_min (5.0) is greater than ph_max (4.0)" in str(error)


def test_unknown_field_and_unknown_ingredient_suggest(library: str) -> None:
    error = _unchanged(library, InvalidData, edit_ingredient, "Glycerin", [("densty", "1")],
                       user="ana", source="from-memory")
    assert "did you mean 'density'?" in str(error)
    error = _unchanged(library, NotFound, edit_ingredient, "Glycerine", [("density", "1")],
                       user="ana", source="from-memory")
    assert "no ingredient 'Glycerine' in the library; did you mean 'Glycerin'" in str(error)


def test_lists_are_replaced_and_values_cleared(library: str) -> None:
    with _session(library) as session:
        report = edit_ingredient(session, "Carbomer",
                                 [("synonyms", "Polyacrylic Acid"),
                                  ("classes", "anionic polymer"), ("use_max_percent", "")],
                                 user="ana")
    assert FieldChange("classes", "anionic polymer; electrolyte-sensitive thickener",
                       "anionic polymer") in report.changes
    assert FieldChange("use_max_percent", "1", "") in report.changes
    assert FieldChange("use_max_percent_source", "rule-of-thumb", "") in report.changes
    with _session(library) as session:
        record = show_ingredient(session, "polyacrylic acid").record
    assert record.p.use_max_percent is None and "use_max_percent" not in record.provenance


def test_synonym_of_another_ingredient_is_refused(library: str) -> None:
    error = _unchanged(library, Conflict, edit_ingredient, "Glycerin",
                       [("synonyms", "Glycerol; Aqua")], user="ana")
    assert "'Aqua' already belongs to the library's 'Water'" in str(error)


def test_add_then_duplicate_add(library: str) -> None:
    with _session(library) as session:
        report = add_ingredient(session, "Polysorbate 20", [("hlb", "16.7")], user="ana",
                                source="hpe6", synonyms=["Polyoxyethylene 20 Sorbitan "
                                                         "Monolaurate"], cas=["9005-64-5"],
                                roles=["emulsifier"])
    assert report.version == 1
    assert FieldChange("inci_name", "", "Polysorbate 20") in report.changes
    assert FieldChange("hlb", "", "16.7") in report.changes
    with _session(library) as session:
        added = ingredient_history(session, "polysorbate 20")
    assert [h.action for h in added] == ["add"]
    assert [c.field for c in added[0].changes] == ["inci_name", "synonyms", "cas", "roles", "hlb"]
    assert added[0].changes[3].new == ["emulsifier"] and added[0].changes[4].new == 16.7
    error = _unchanged(library, Conflict, add_ingredient, "polysorbate  20", user="ana")
    assert "already belongs to the library's 'Polysorbate 20'" in str(error)


def test_retire_and_restore(library: str) -> None:
    with _session(library) as session:
        report = retire_ingredient(session, "Isopropyl Myristate", user="ana",
                                   reason="replaced by a lower-odour grade")
    assert report.changes == [FieldChange("retired", "no", "yes")] and report.version == 2
    with _session(library) as session:
        names = [r.inci_name for r in list_ingredients(session)]
        all_names = [r.inci_name for r in list_ingredients(session, include_retired=True)]
        assert show_ingredient(session, "Isopropyl Myristate").record.retired
    assert "Isopropyl Myristate" not in names and "Isopropyl Myristate" in all_names
    with _session(library) as session:
        again = retire_ingredient(session, "Isopropyl Myristate", user="ana", reason="again")
        assert again.changes == []
        restore_ingredient(session, "Isopropyl Myristate", user="bea", reason="back in use")
    with _session(library) as session:
        history = ingredient_history(session, "Isopropyl Myristate")
        logged = session.scalars(select(ChangeLogEntry.action).where(
            ChangeLogEntry.entity_key == "Isopropyl Myristate")).all()
    assert [(h.action, h.user, h.version, h.reason) for h in history[-2:]] == [
        ("retire", "ana", 2, "replaced by a lower-odour grade"),
        ("restore", "bea", 3, "back in use")]
    assert logged.count("retire") == 1
    error = _unchanged(library, InvalidData, retire_ingredient, "Glycerin", user="ana",
                       reason="  ")
    assert "reason" in str(error)


def test_list_by_role(library: str) -> None:
    with _session(library) as session:
        names = [r.inci_name for r in list_ingredients(session, role="Emulsifier")]
    assert names == ["Polysorbate 80", "Sorbitan Oleate"]
    error = _unchanged(library, InvalidData, list_ingredients, role="emulsifer")
    assert "did you mean 'emulsifier'?" in str(error)
