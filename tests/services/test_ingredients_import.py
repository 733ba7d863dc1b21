"""Importing ingredient tables: upsert by name or synonym, units, dry runs, all-or-nothing, and
export -> import round trips (CSV and XLSX), on SQLite and PostgreSQL.

Values in the tables are handbook values with their sources (see tests/fixtures/tables): HLB of
polysorbate 80 15.0 and sorbitan oleate 4.3 (Griffin 1954; HPE6 Table IX), water 0.99705 g/mL
and 0.890 mPa·s at 25 °C (CRC Handbook).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from sqlalchemy import select

from formdb.schemas.change_log import ChangePayload
from formdb.services.library.ingredients import FieldChange, export_table, import_table
from formdb.services.library.tables import TableProblems
from formdb.store import queries
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import ChangeLogEntry
from tests.fixtures.tables.library_setup import BASE_TABLE, SETUP_USER, build_library
from tests.helpers import library_state


@pytest.fixture
def library(library_url: str) -> str:
    return build_library(library_url)


def _run(url: str, path: Path, *, dry_run: bool = False, user: str = "tester",
         reason: str | None = None):
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return import_table(session, path, user=user, reason=reason, dry_run=dry_run)
    finally:
        engine.dispose()


def _record(url: str, name: str):
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            return queries.find_ingredient(session, name)
    finally:
        engine.dispose()


def _table(tmp_path: Path, text: str, name: str = "supplier.csv") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_base_table_lands_with_values_sources_and_evidence(library: str) -> None:
    p80 = _record(library, "polysorbate 80")
    assert p80 is not None and p80.version == 1
    assert p80.p.hlb == 15.0  # HPE6 Table IX; Griffin 1954
    assert p80.provenance["hlb"].source == "hpe6"
    assert p80.provenance["hlb"].evidence.value == "published"
    assert p80.provenance["hlb"].note == "HPE6 Table IX"
    assert p80.classes == frozenset({"high-HLB ethoxylate"})
    carbomer = _record(library, "Carbomer")
    assert carbomer.p.electrolyte_sensitive is True
    assert (carbomer.p.ph_min, carbomer.p.ph_max) == (5.0, 10.0)
    assert carbomer.provenance["ph_min"].evidence.value == "rule of thumb"
    soda = _record(library, "Sodium Hydroxide")
    assert soda.p.cation_valence == 1 and soda.p.molar_mass == 39.997
    assert _record(library, "AQUA").inci_name == "Water"


def test_second_import_of_the_same_table_changes_nothing(library: str) -> None:
    before = library_state(library)
    report = _run(library, BASE_TABLE)
    assert report.added == [] and report.changed == {}
    assert len(report.unchanged) == 7
    assert library_state(library) == before


def test_upsert_by_synonym_with_units_converted(library: str, tmp_path: Path) -> None:
    # 997.05 kg/m3 is the CRC value in other units: no change. 0.9 mPa·s = 0.0009 Pa·s: a change.
    path = _table(tmp_path, "inci_name,density,viscosity_mpas,source\n"
                            "  aqua ,997.05 kg/m3,0.0009 Pa*s,crc-water\n")
    report = _run(library, path, reason="supplier sheet 2026")
    assert report.added == [] and report.unchanged == []
    assert report.changed == {"Water": [FieldChange("viscosity_mpas", "0.89", "0.9")]}
    assert report.notes and "'aqua' is a synonym of the library's 'Water'" in report.notes[0]
    water = _record(library, "Water")
    assert water.p.viscosity_mpas == 0.9 and water.p.density == 0.99705
    assert water.version == 2
    assert water.synonyms == ("Aqua",)


def test_dry_run_reports_every_kind_of_change_and_writes_nothing(library: str,
                                                                 tmp_path: Path) -> None:
    path = _table(tmp_path, "inci_name,synonyms,hlb,hlb_source,roles\n"
                            "Polysorbate 20,Polyoxyethylene 20 Sorbitan Monolaurate,16.7,hpe6,"
                            "emulsifier\n"
                            "Sorbitan Oleate,Sorbitan Monooleate,4.3,griffin-1954,\n"
                            "Polysorbate 80,,15.2,larkspur-bench,emulsifier; co-emulsifier\n")
    before = library_state(library)
    report = _run(library, path, dry_run=True)
    assert library_state(library) == before
    assert report.dry_run
    assert report.added == ["Polysorbate 20"]
    assert report.unchanged == ["Sorbitan Oleate"]
    assert report.changed == {"Polysorbate 80": [
        FieldChange("roles", "emulsifier", "co-emulsifier; emulsifier"),
        FieldChange("hlb", "15", "15.2"),
        FieldChange("hlb_source", "hpe6", "larkspur-bench"),
        FieldChange("hlb_note", "HPE6 Table IX", ""),  # the note belonged to the old value
    ]}
    # the real run does exactly what the dry run said
    report = _run(library, path)
    assert report.added == ["Polysorbate 20"] and list(report.changed) == ["Polysorbate 80"]
    assert _record(library, "Polysorbate 80").p.hlb == 15.2


def test_blank_cells_leave_values_alone(library: str, tmp_path: Path) -> None:
    path = _table(tmp_path, "inci_name,synonyms,cas,roles,hlb,hlb_source,density,density_source\n"
                            "Polysorbate 80,,,,,,,\n")
    report = _run(library, path)
    assert report.unchanged == ["Polysorbate 80"]


def test_import_writes_one_typed_log_entry_per_change(library: str, tmp_path: Path) -> None:
    path = _table(tmp_path, "inci_name,hlb,hlb_source,density,density_source\n"
                            "Sorbitan Oleate,4.3,griffin-1954,0.99,from-memory\n"
                            "Polysorbate 20,16.7,hpe6,,\n")
    _run(library, path, user="ana")
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            rows = session.scalars(select(ChangeLogEntry).where(ChangeLogEntry.user == "ana")
                                   .order_by(ChangeLogEntry.id)).all()
    finally:
        engine.dispose()
    logged = [(r.entity_key, r.action, r.entity_version, r.form, json.loads(r.payload))
              for r in rows]
    assert logged == [
        ("Sorbitan Oleate", "import", 2, 2, {"v": 1, "via": "supplier.csv", "changes": [
            {"field": "density", "old": None, "new": 0.99, "old_source": None,
             "new_source": "from-memory"}]}),
        ("Polysorbate 20", "import", 1, 2, {"v": 1, "via": "supplier.csv", "changes": [
            {"field": "inci_name", "old": None, "new": "Polysorbate 20"},
            {"field": "hlb", "old": None, "new": 16.7, "old_source": None,
             "new_source": "hpe6"}]}),
    ]
    for row in rows:  # every payload reads as the documented shape
        ChangePayload.model_validate_json(row.payload)
    assert {r.reason for r in rows} == {"imported from supplier.csv"}
    assert all(r.entity == "ingredient" for r in rows)
    assert all(r.at is not None for r in rows)


def test_one_bad_row_stops_the_whole_file(library: str, tmp_path: Path) -> None:
    path = _table(tmp_path, "inci_name,hlb,source\n"
                            "Polysorbate 20,16.7,hpe6\n"
                            "Sorbitan Laurate,8.6,griffin-1954\n"
                            "Sorbitan Palmitate,67,griffin-1954\n")
    before = library_state(library)
    with pytest.raises(TableProblems) as caught:
        _run(library, path)
    assert caught.value.problems == [
        f"{path}, row 4, column hlb: hlb 67 is out of range: it must be at least 0 and at most "
        "50."]
    assert str(caught.value) == caught.value.problems[0]
    assert library_state(library) == before


def test_two_rows_naming_one_library_ingredient_are_refused(library: str,
                                                            tmp_path: Path) -> None:
    path = _table(tmp_path, "inci_name,density,source\nWater,0.99705,crc-water\n"
                            "Aqua,0.99705,crc-water\n")
    with pytest.raises(TableProblems) as caught:
        _run(library, path)
    assert caught.value.problems == [
        f"{path}, row 3, column inci_name: 'Aqua' is the library's 'Water', which row 2 "
        "already describes."]


def _round_trip(url: str, tmp_path: Path, suffix: str) -> None:
    out = tmp_path / f"library{suffix}"
    engine = make_engine(url)
    try:
        with unit_of_work(engine) as session:
            count = export_table(session, out)
    finally:
        engine.dispose()
    before = library_state(url)
    report = _run(url, out)
    assert report.added == [] and report.changed == {}, report.changed
    assert len(report.unchanged) == count > 0
    assert library_state(url) == before


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_export_then_import_changes_nothing(library: str, tmp_path: Path, suffix: str) -> None:
    _round_trip(library, tmp_path, suffix)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_seeded_library_round_trips(seeded_library_url: str, tmp_path: Path,
                                    suffix: str) -> None:
    from formdb.resources import seed_data_dir

    if not (seed_data_dir() / "ingredients.csv").exists():
        pytest.skip("seed_data/ingredients.csv is not in this checkout yet")
    _round_trip(seeded_library_url, tmp_path, suffix)


def test_export_has_exactly_the_import_columns(library: str, tmp_path: Path) -> None:
    out = tmp_path / "library.csv"
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            export_table(session, out, role="emulsifier")
    finally:
        engine.dispose()
    with out.open(encoding="utf-8-sig") as handle:
        rows = list(csv.DictReader(handle))
    assert [r["inci_name"] for r in rows] == ["Polysorbate 80", "Sorbitan Oleate"]
    assert rows[0]["hlb"] == "15" and rows[0]["hlb_source"] == "hpe6"
    assert rows[1]["synonyms"] == "Sorbitan Monooleate"
    header = list(rows[0])
    assert header[:5] == ["inci_name", "synonyms", "cas", "roles", "classes"]
    assert "hlb_note" in header and "source" not in header


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_formula_like_cells_are_guarded_and_read_back(library: str, tmp_path: Path,
                                                      suffix: str) -> None:
    # OWASP "CSV Injection": cells starting with = + - @ run as formulas in a spreadsheet
    path = _table(tmp_path, "inci_name,synonyms,hlb,hlb_source,hlb_note\n"
                            'Polysorbate 20,@Polysorbate Twenty,16.7,hpe6,"=HYPERLINK(""x"")"\n')
    _run(library, path)
    out = tmp_path / f"export{suffix}"
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            export_table(session, out)
    finally:
        engine.dispose()
    if suffix == ".csv":
        text = out.read_text(encoding="utf-8-sig")
        assert "'=HYPERLINK" in text and "'@Polysorbate Twenty" in text
    else:
        from openpyxl import load_workbook

        sheet = load_workbook(out).active
        cells = [c for row in sheet.iter_rows(values_only=True) for c in row]
        assert "'=HYPERLINK(\"x\")" in cells
        assert all(not (isinstance(c, str) and c.startswith("=")) for c in cells)
    report = _run(library, out)
    assert report.changed == {} and report.added == []
    assert _record(library, "Polysorbate 20").provenance["hlb"].note == '=HYPERLINK("x")'


def test_setup_user_is_recorded(library: str) -> None:
    engine = make_engine(library)
    try:
        with unit_of_work(engine) as session:
            users = set(session.scalars(select(ChangeLogEntry.user)
                                        .where(ChangeLogEntry.entity == "ingredient")))
    finally:
        engine.dispose()
    assert users == {SETUP_USER}
