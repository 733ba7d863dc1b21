"""Property-based: any valid ingredient row survives import -> export -> import unchanged, in CSV
and in XLSX, whatever its numbers, lists, notes or formula-like text."""

from __future__ import annotations

import csv
import math
import shutil
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from formdb.schemas.ingredient import PROPERTY_NAMES, IngredientProperties
from formdb.schemas.vocab import COMPAT_CLASSES, Role
from formdb.services.library.ingredient_fields import (
    _bounds,
    export_columns,
    format_number,
    property_kind,
)
from formdb.services.library.ingredients import export_table, import_table
from formdb.store.db import make_engine, unit_of_work, upgrade_to_head
from tests.fixtures.tables.library_setup import SOURCES, add_sources
from tests.helpers import examples

# CAS numbers with right check digits: water, glycerin, polysorbate 80, sorbitan oleate,
# propylene glycol, isopropyl myristate (CAS Registry; each passes cas_is_valid)
CAS = ["7732-18-5", "56-81-5", "9005-65-6", "1338-43-8", "57-55-6", "110-27-0"]
SOURCE_KEYS = [s["key"] for s in SOURCES] + ["rule-of-thumb", "from-memory"]
WORD = st.text(alphabet="ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789 -/()",
               min_size=1, max_size=24).map(lambda s: " ".join(s.split())).filter(bool)
# a note may look like a formula; one that starts with an apostrophe is the guard's own mark
NOTE = st.text(alphabet="abcdefghijklmnopqrstuvwxyz0123456789 ,;.'\"=+-@()%°µ", max_size=30) \
    .map(str.strip).filter(lambda s: not s.startswith("'"))


@pytest.fixture(scope="module")
def template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("roundtrip") / "template.sqlite"
    engine = make_engine(str(path))
    try:
        upgrade_to_head(engine)
    finally:
        engine.dispose()
    add_sources(str(path))
    return path


def _number(prop: str) -> st.SearchStrategy[float | int]:
    low, low_open, high, high_open = _bounds(prop)
    if property_kind(prop)[0] == "int":
        return st.integers(int(low), int(high))
    return st.floats(low, high, exclude_min=low_open, exclude_max=high_open,
                     allow_nan=False, allow_infinity=False)


def _value(prop: str) -> st.SearchStrategy[str]:
    kind, enum_cls = property_kind(prop)
    if kind == "choice":
        return st.sampled_from([m.value for m in enum_cls])  # type: ignore[union-attr]
    if kind == "bool":
        return st.sampled_from(["yes", "no"])
    return _number(prop).map(format_number)


@st.composite
def rows(draw: st.DrawFn) -> dict[str, str]:
    name = draw(WORD)
    synonyms = draw(st.lists(WORD.map(lambda s: "@" + s if len(s) % 5 == 0 else s),
                             max_size=3, unique_by=str.casefold))
    synonyms = [s for s in synonyms if s.casefold() != name.casefold()]
    cells = dict.fromkeys(export_columns(), "")
    cells.update({
        "inci_name": name, "synonyms": "; ".join(synonyms),
        "cas": "; ".join(draw(st.lists(st.sampled_from(CAS), unique=True, max_size=2))),
        "roles": "; ".join(draw(st.lists(st.sampled_from([r.value for r in Role]), unique=True,
                                         max_size=3))),
        "classes": "; ".join(draw(st.lists(st.sampled_from(list(COMPAT_CLASSES)), unique=True,
                                           max_size=2))),
    })
    for prop in draw(st.lists(st.sampled_from(PROPERTY_NAMES), unique=True, max_size=8)):
        cells[prop] = draw(_value(prop))
        cells[f"{prop}_source"] = draw(st.sampled_from(SOURCE_KEYS))
        cells[f"{prop}_note"] = draw(NOTE)
    for low, high in (("ph_min", "ph_max"), ("use_min_percent", "use_max_percent")):
        if cells[low] and cells[high] and float(cells[low]) > float(cells[high]):
            cells[low], cells[high] = cells[high], cells[low]
    return cells


@settings(max_examples=examples(40), deadline=None,  # a tenth under the ci profile
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(row=rows(), suffix=st.sampled_from([".csv", ".xlsx"]))
def test_any_valid_row_survives_export_and_import(template: Path, row: dict[str, str],
                                                  suffix: str) -> None:
    with tempfile.TemporaryDirectory() as folder:
        work = Path(folder)
        url = str(work / "library.sqlite")
        shutil.copyfile(template, url)
        source = work / "row.csv"
        with source.open("w", encoding="utf-8", newline="") as handle:
            writer = csv.DictWriter(handle, fieldnames=list(row))
            writer.writeheader()
            writer.writerow(row)  # formula-like cells as a supplier's file would hold them
        engine = make_engine(url)
        try:
            with unit_of_work(engine) as session:
                first = import_table(session, source, user="prop", reason=None)
                assert first.added == [row["inci_name"]]
                out = work / f"export{suffix}"
                assert export_table(session, out) == 1
            with unit_of_work(engine) as session:
                again = import_table(session, out, user="prop", reason=None, dry_run=True)
            assert again.changed == {} and again.unchanged == [row["inci_name"]]
            with unit_of_work(engine) as session:
                from formdb.store.queries import find_ingredient

                record = find_ingredient(session, row["inci_name"])
        finally:
            engine.dispose()
    assert record is not None
    for prop in PROPERTY_NAMES:
        stored = getattr(record.p, prop)
        if not row[prop]:
            assert stored is None
            continue
        kind, _ = property_kind(prop)
        if kind in ("float", "int"):
            assert math.isclose(stored, float(row[prop]), rel_tol=0, abs_tol=0), prop
        elif kind == "bool":
            assert stored is (row[prop] == "yes")
        else:
            assert stored.value == row[prop]
        assert record.provenance[prop].source == row[f"{prop}_source"]
        assert (record.provenance[prop].note or "") == row[f"{prop}_note"]
    assert sorted(record.synonyms) == sorted(s for s in row["synonyms"].split("; ") if s)
    assert IngredientProperties.model_validate(record.p.model_dump()) == record.p
    assert {r.value for r in record.roles} == {r for r in row["roles"].split("; ") if r}
