"""One ingredient as a row of cells (the import/export format), validated into ``IngredientIn``.

A row is a ``Cells`` dict keyed by the export columns. Import, edit and export all pass through
it: the library's state is rendered to cells, a file row or an ``--set`` is laid over them, and the
result is validated and rendered again, so "changed" means the canonical text differs.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from itertools import compress
from operator import itemgetter

from pydantic import ValidationError

from formdb.schemas.cells import render_property
from formdb.schemas.ingredient import (
    PROPERTY_NAMES,
    IngredientIn,
    IngredientProperties,
    name_key,
    normalise_inci,
)
from formdb.services.library.ingredient_fields import (
    KNOWN_COLUMNS,
    LIST_FIELDS,
    NAME_COLUMN,
    SHARED_SOURCE,
    FieldProblem,
    did_you_mean,
    export_columns,
    join_list,
    normalise_column,
    parse_list_item,
    parse_property,
    split_list,
)
from formdb.services.library.tables import Problem, RawTable

Cells = dict[str, str]
# (column, problem) pairs for one row; the caller adds the file and row
CellProblems = list[tuple[str | None, str]]


def empty_cells() -> Cells:
    return dict.fromkeys(export_columns(), "")


def render_ingredient(item: IngredientIn) -> Cells:
    """The canonical cells of a validated ingredient (lists sorted, numbers shortest)."""
    cells = empty_cells()
    cells[NAME_COLUMN] = item.inci_name
    cells["synonyms"] = join_list(sorted(item.synonyms, key=str.casefold))
    cells["cas"] = join_list(sorted(item.cas_numbers))
    cells["roles"] = join_list(sorted(r.value for r in item.roles))
    cells["classes"] = join_list(sorted(item.classes))
    for prop in PROPERTY_NAMES:
        value = getattr(item.properties, prop)
        if value is None:
            continue
        cells[prop] = render_property(prop, value)
        cells[f"{prop}_source"] = item.sources.get(prop, "")
        cells[f"{prop}_note"] = item.notes.get(prop, "")
    return cells


def _source_problems(wanting: Mapping[tuple[str, str], list[str]],
                     sources: Mapping[str, str]) -> CellProblems:
    """One problem per source cell: a value without a source, or a key the library lacks.

    ``wanting`` maps (column, key) to the properties that take their source from that cell, so a
    bad key in a shared ``source`` column is reported once per row, not once per value.
    """
    problems: CellProblems = []
    for (column, key), props in wanting.items():
        which = " and ".join(props)
        if not key:
            has = "has a value" if len(props) == 1 else "have values"
            problems.append((column, f"{which} {has} but no source; fill {column} with a key of "
                             "the sources table, or rule-of-thumb / from-memory"))
        elif key not in sources:
            problems.append((column, f"unknown source key {key!r} for {which}"
                             f"{did_you_mean(key, sources)}; use a key of the sources table, "
                             "or rule-of-thumb / from-memory"))
    return problems


_PROPERTY_COLUMNS = tuple((prop, f"{prop}_source", f"{prop}_note") for prop in PROPERTY_NAMES)
_NOTE_COLUMNS = frozenset(note for _prop, _source, note in _PROPERTY_COLUMNS)


# A table repeats its cells (a vocabulary word, a source, a number to a few digits: a 50,000-row
# table has about 60,000 distinct property cells in 270,000), and reading one is a pure function
# of the column and the text, so each is read once: one dict of readings per property, looked
# up without a call (all emptied when they hold _READINGS_KEPT between them); a cell that
# cannot be read is not kept.
_READINGS_KEPT = 1 << 16
_readings: dict[str, dict[str, object]] = {prop: {} for prop in PROPERTY_NAMES}
_kept = 0


def _property_value(prop: str, text: str) -> object:
    """``parse_property(prop, text)``, kept in ``_readings``."""
    global _kept
    value = parse_property(prop, text)
    if _kept >= _READINGS_KEPT:
        for readings in _readings.values():
            readings.clear()
        _kept = 0
    _readings[prop][text] = value
    _kept += 1
    return value


@lru_cache(maxsize=1 << 14)
def _list_cell(column: str, cell: str) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The items of a list cell in stored form, without repeats, and what is wrong with each
    item that cannot be read."""
    items: list[str] = []
    unread: list[str] = []
    for raw in split_list(cell):
        try:
            items.append(parse_list_item(column, raw))
        except FieldProblem as exc:
            unread.append(str(exc))
    return tuple(dict.fromkeys(items)), tuple(unread)


def validate_cells(cells: Mapping[str, str], sources: Mapping[str, str],
                   source_columns: Mapping[str, str] | None = None,
                   ) -> tuple[IngredientIn | None, CellProblems]:
    """Every problem of one row, or the validated ingredient when there are none.

    ``sources`` maps source keys to their evidence kind; ``source_columns`` names the column a
    property's source came from (a shared ``source`` column), for the problem text.
    """
    problems: CellProblems = []
    name = normalise_inci(cells.get(NAME_COLUMN, ""))
    if not name:
        problems.append((NAME_COLUMN, "the INCI name is missing; every row needs one"))
    lists: dict[str, tuple[str, ...]] = {}
    for column in LIST_FIELDS:
        cell = cells.get(column, "")
        if not cell:
            lists[column] = ()
            continue
        items, unread = _list_cell(column, cell)
        lists[column] = items
        if unread:
            problems += [(column, text) for text in unread]
    for synonym in lists["synonyms"]:
        if name and name_key(synonym) == name_key(name):
            problems.append(("synonyms", f"synonym {synonym!r} repeats the INCI name"))
    values: dict[str, object] = {}
    chosen: dict[str, str] = {}
    notes: dict[str, str] = {}
    # the properties whose cell holds something (a few of the 25 on most rows), picked in C
    for prop, source_column, note_column in compress(_PROPERTY_COLUMNS,
                                                     map(cells.get, PROPERTY_NAMES)):
        text = cells[prop]
        read = _readings[prop]
        if text in read:
            values[prop] = read[text]
        else:
            try:
                values[prop] = _property_value(prop, text)
            except FieldProblem as exc:
                problems.append((prop, str(exc)))
        chosen[prop] = cells.get(source_column, "")
        if cells.get(note_column, ""):
            notes[prop] = cells[note_column]
    keys = chosen.values()
    if "" in keys or not all(map(sources.__contains__, keys)):  # a source missing or unknown
        wanting: dict[tuple[str, str], list[str]] = {}
        for prop, key in chosen.items():
            source_column = f"{prop}_source"
            column = source_columns.get(prop, source_column) if source_columns else source_column
            wanting.setdefault((column, key), []).append(prop)
        problems += _source_problems(wanting, sources)
    if problems:
        return None, problems
    try:
        item = IngredientIn(
            inci_name=name, synonyms=lists["synonyms"], cas_numbers=lists["cas"],
            roles=lists["roles"], classes=lists["classes"],
            properties=IngredientProperties.model_validate(values),
            sources=chosen, notes=notes)
    except ValidationError as exc:
        for error in exc.errors():
            loc = [str(part) for part in error["loc"]]
            located = next((part for part in loc if part in KNOWN_COLUMNS), None)
            message = error["msg"].removeprefix("Value error, ")
            problems.append((located, message))
        return None, problems
    return item, []


@dataclass(slots=True)  # one per row of a table of tens of thousands
class FileRow:
    """One data row of an import file, as cells, with where each cell came from."""

    row: int
    given: Cells  # the file's non-blank cells, and its note columns' cells even when blank
    source_columns: dict[str, str] = field(default_factory=dict)


def _letters(index: int) -> str:
    from openpyxl.utils import get_column_letter  # not at import: show/list never load openpyxl

    return get_column_letter(index + 1)


def read_ingredient_rows(table: RawTable) -> tuple[list[FileRow], list[Problem]]:
    """Map the header onto the known columns and every data row onto cells.

    A shared ``source`` column fills ``P_source`` for each property value on its row that has no
    source of its own.
    """
    problems: list[Problem] = []
    columns: dict[int, str] = {}
    shown: dict[str, str] = {}
    for index, header in enumerate(table.header):
        if not header:
            continue
        column = normalise_column(header)
        if column not in KNOWN_COLUMNS:
            problems.append(Problem(table.file, f"unknown column {header!r}"
                                    f"{did_you_mean(column, sorted(KNOWN_COLUMNS))}",
                                    table.header_row, header))
        elif column in shown:
            problems.append(Problem(table.file, f"column {header!r} appears twice (also as "
                                    f"{shown[column]!r})", table.header_row, header))
        else:
            columns[index] = column
            shown[column] = header
    if NAME_COLUMN not in shown:  # rows cannot be told apart; their cells are not read
        problems.append(Problem(table.file, "there is no inci_name column; the header row needs "
                                "one (and one column per property)", table.header_row))
        return [], problems
    rows: list[FileRow] = []
    width = len(table.header)
    mapped = sorted(columns.items())  # (index, column) in the file's order
    mapped_columns = [column for _index, column in mapped]
    # a full row's mapped cells in one call; the extra index 0 keeps the result a tuple when
    # only one column is mapped (zip leaves it out)
    pick = itemgetter(*(index for index, _column in mapped), 0)
    headless = [i for i in range(width) if i not in columns and not table.header[i]]
    has_shared = SHARED_SOURCE in shown

    def headless_cell(number: int, index: int, text: str) -> Problem:
        return Problem(table.file, f"the cell {text[:40]!r} is in a column without a header",
                       number, _letters(index))

    # a blank cell is left out of a row's cells (it changes nothing), but for a note column's
    # (it clears the note): a 50,000-row table of 60 columns holds mostly blank cells
    notes = [column for column in mapped_columns if column in _NOTE_COLUMNS]
    for number, cells in table.rows:
        given: Cells
        if len(cells) == width:  # as read_table gives them: every row as wide as the header
            texts = pick(cells)
            # the non-blank cells, picked in C (texts has one more item: see pick)
            given = dict(compress(zip(mapped_columns, texts, strict=False), texts))
            problems += [headless_cell(number, index, cells[index])
                         for index in headless if cells[index]]
        else:
            given = {}
            for index, text in enumerate(cells):
                if index in columns:
                    if text:
                        given[columns[index]] = text
                elif text and (index >= width or not table.header[index]):
                    problems.append(headless_cell(number, index, text))
        for column in notes:
            given.setdefault(column, "")
        row = FileRow(number, given)
        if has_shared:  # without the column there is nothing to fill in
            shared = given.pop(SHARED_SOURCE, "")
            for prop, source_column, _note_column in _PROPERTY_COLUMNS:
                if given.get(prop) and not given.get(source_column):
                    given[source_column] = shared
                    if source_column not in shown:
                        row.source_columns[prop] = shown[SHARED_SOURCE]
        rows.append(row)
    return rows, problems


def header_labels(table: RawTable) -> dict[str, str]:
    return {normalise_column(h): h for h in table.header if h}


def overlay(base: Mapping[str, str], row: FileRow) -> Cells:
    """The library's cells with the file's non-empty cells laid over them.

    A blank cell leaves the library's value alone. A note follows its value: when the file gives a
    new value or source but has no note column, the old note is dropped.
    """
    cells = dict(base)
    given = row.given
    for column in (NAME_COLUMN, *LIST_FIELDS):
        if given.get(column):
            cells[column] = given[column]
    for prop, source_column, note_column in _PROPERTY_COLUMNS:
        value = given.get(prop)
        if not value:
            continue
        source = given.get(source_column, "")
        moved = (not _same_value(prop, value, base.get(prop, ""))
                 or source != base.get(source_column, ""))
        cells[prop], cells[source_column] = value, source
        if note_column in given:
            cells[note_column] = given[note_column]
        elif moved:
            cells[note_column] = ""
    return cells


def missing_only(base: Mapping[str, str], row: FileRow,
                 inci: str) -> tuple[FileRow, list[str]]:
    """The row reduced to the cells that fill a blank of the library (``init --seed`` on an
    existing library never overwrites a value the team set), and a line for each cell it
    leaves alone because the library already holds another value."""
    kept: Cells = {}
    left: list[str] = []
    for column, value in row.given.items():
        if column == NAME_COLUMN or not value:
            kept[column] = value
            continue
        prop = column.removesuffix("_source").removesuffix("_note")
        stored = base.get(prop, "") if prop in PROPERTY_NAMES else base.get(column, "")
        if not stored:
            kept[column] = value
        elif (column in LIST_FIELDS and _items(value) != _items(stored)) or \
                (column in PROPERTY_NAMES and not _same_value(prop, value, stored)):
            left.append(f"{inci}: {column} kept {stored!r} (seed {value!r})")
    return FileRow(row.row, kept, row.source_columns), left


def _items(cell: str) -> set[str]:
    return {item.strip().casefold() for item in split_list(cell)}


def _same_value(prop: str, text: str, stored: str) -> bool:
    """True when two cells mean the same value ('997.05 kg/m3' and '0.99705' do)."""
    if not stored:
        return False
    try:
        return bool(parse_property(prop, text) == parse_property(prop, stored))
    except FieldProblem:
        return text == stored
