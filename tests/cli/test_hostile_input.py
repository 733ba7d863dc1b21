"""The fuzz suite (issue 15): hostile input through the real command, on every input surface.

Each example runs ``formdb`` in-process through its entry point and must end in a result
(exit 0, or 1 for a check with error findings) or in one clear refusal: exit 2, every stderr
line an ``Error:`` line, no traceback, and the library exactly as it was (a deterministic dump
compared before and after). Exit 70 (an internal error) fails the example.

Hypothesis with a fixed seed (``derandomize=True``: the same examples every run, no example
database). The counts below run in CI (the default ``ci`` hypothesis profile), 3,550 examples in
all; ``FORMDB_HYPOTHESIS_PROFILE=deep`` draws three times as many. Each example is kept cheap
instead of drawn less often: the command runs in-process, input files are rewritten in one
module folder, a writing command starts from a file copy of the same small library, and the
library is dumped (the "unchanged" check) only when its file's bytes changed:

    formula files (check as text, JSON or HTML;      700
      label, blend, batch, formula import)
    profiles (check --profile FILE)                  450
    CSV import tables                                500
    XLSX import tables (and damaged workbooks)       250
    record imports (source, toxicology, exposure,    300
      mixture)
    ingredient edit --set                            500
    backup archives (db restore --yes)               200 (100 with one damage, 100 with 2-3)
    list exports (names in, list/export out)         300 (150 each to CSV, XLSX)
    regulatory list import (annex-shaped text)       200
    random bytes as formula, CSV, XLSX, profile      150

SQLite only: the refusals come from the same code on both backends, and the backend-specific
paths (transactions, restore, concurrency) have their own tests on both in
tests/cli/test_hostile_regressions.py and tests/store. Names and values are made up.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import shutil
import sqlite3
import zipfile
from collections.abc import Callable
from pathlib import Path

import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from formdb.cli.main import EXIT_INTERNAL
from tests.fixtures.tables.library_setup import build_library
from tests.helpers import CliResult, fuzz_examples, library_state, run_formdb

pytestmark = pytest.mark.slow  # the fuzz lane: left out of `pytest -m "not slow"`


def _settings(count: int) -> settings:
    # the full count in CI (3x under the deep profile); no shrinking: every example runs the
    # real command, so shrinking a failure would take many minutes; the failing example is
    # printed as found
    return settings(max_examples=fuzz_examples(count), deadline=None, derandomize=True,
                    database=None, suppress_health_check=list(HealthCheck),
                    phases=[Phase.explicit, Phase.generate])


class Scratch:
    """One folder for a module's input files, each name rewritten by every example (a fresh
    numbered folder per example costs more than the command it feeds)."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder

    def file(self, name: str, data: str | bytes | None = None) -> Path:
        """``name`` in the folder, written with ``data`` (text as UTF-8, lone surrogates kept
        as they are) or, without data, removed so that a command may create it."""
        path = self.folder / name
        if data is None:
            path.unlink(missing_ok=True)
        elif isinstance(data, bytes):
            path.write_bytes(data)
        else:
            path.write_text(data, encoding="utf-8", errors="surrogatepass", newline="")
        return path

    def no_database(self, name: str) -> Path:
        """``name`` with no SQLite file (nor write-ahead log or shared memory) there."""
        for end in ("-wal", "-shm", ""):
            self.file(name + end)
        return self.folder / name


class LibraryState:
    """The library's state (``tests.helpers.library_state``), taken again only when the SQLite
    file's bytes (and its write-ahead log's) changed: equal bytes are the same rows, so an
    unchanged library costs a hash, and any change in the bytes is judged by comparing the
    states, every row of every table."""

    def __init__(self, url: str) -> None:
        from formdb.store.db import sqlite_path

        path = sqlite_path(url)
        assert path is not None
        self.url, self.files = url, (path, path.with_name(path.name + "-wal"))
        self._key, self._dump = b"", ""

    def key(self) -> bytes:
        digest = hashlib.sha256()
        for path in self.files:
            if path.exists():
                digest.update(path.name.encode() + b"\0" + path.read_bytes())
        return digest.digest()

    def snapshot(self) -> tuple[bytes, str]:
        key = self.key()
        if key != self._key:
            self._key, self._dump = key, library_state(self.url)
        return self._key, self._dump

    def unchanged_since(self, before: tuple[bytes, str]) -> bool:
        return self.key() == before[0] or library_state(self.url) == before[1]


NASTY = ["'", '"', ";", "--", "'; DROP TABLE ingredients; --", "<script>alert(1)</script>",
         "&amp;", "\x00", "\x1b[31m", "\x1b]0;owned\x07", "\u202e", "\u200b", "\r\n", "\r",
         "=1+1", "@SUM(A1)", "+1", "-1", "%s", "{0}", "\\", "１２", "١٢", "💧", "Glуcerin",
         "\ufeff", "\x9b2J", "a" * 300, "\t", "Ǆ", "ﬁ", "e\u0301"]
NUMBERS = ["nan", "NaN", "inf", "-inf", "1e308", "1e999", "-1e999", "-3", "0", "12.5", "5e-324",
           "1,5", "9" * 400, "0x1A", "1e-400", "", " ", "twelve", "١٢", "１２", "4.3 %",
           "0.9 g/cm3", "850 kg/m3", "12 parsecs", "true", "[1]", "1_000", "+7", ".5"]
FIELDS = ["hlb", "required_hlb_ow", "required_hlb_wo", "density", "ph_min", "ph_max",
          "solubility", "ionic_character", "electrolyte_sensitive", "use_min_percent",
          "use_max_percent", "molar_mass", "synonyms", "cas", "roles", "classes", "inci_name",
          "no_such_field", "", "hlb_source", "=cmd"]
INGREDIENTS = ["Aqua", "Glycerin", "Cetyl Alcohol", "Sorbitan Oleate", "Polysorbate 80",
               "Paraffinum Liquidum", "Steareth-2", "Sodium Chloride", "Unknown Larkspur Oil"]

nasty_text = st.one_of(st.sampled_from(NASTY), st.text(max_size=12),
                       st.lists(st.sampled_from(NASTY), min_size=2, max_size=4).map("".join))
number_text = st.one_of(st.sampled_from(NUMBERS),
                        st.floats(allow_nan=True, allow_infinity=True).map(repr),
                        st.integers(min_value=-(10 ** 30), max_value=10 ** 30).map(str))


@pytest.fixture(scope="module")
def library(tmp_path_factory: pytest.TempPathFactory) -> str:
    """A small library (the Larkspur test table): quick to dump after every example."""
    from formdb.services.seed.setup import init_library

    url = f"sqlite:///{tmp_path_factory.mktemp('fuzz') / 'library.sqlite'}"
    init_library(url, seed=False, user="larkspur-fuzz")
    return build_library(url)


@pytest.fixture(scope="module")
def scratch(tmp_path_factory: pytest.TempPathFactory) -> Scratch:
    return Scratch(tmp_path_factory.mktemp("inputs"))


@pytest.fixture(scope="module")
def pristine(library: str, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A copy of the small library as built, for tests that start every example from it."""
    from formdb.store.db import sqlite_path

    source = sqlite_path(library)
    assert source is not None and not source.with_name(source.name + "-wal").exists()
    copy = tmp_path_factory.mktemp("pristine") / "library.sqlite"
    shutil.copyfile(source, copy)
    return copy


def _fresh_copy(pristine: Path, scratch: Scratch) -> str:
    """A new copy of the pristine library (a file copy: far cheaper than building one)."""
    target = scratch.no_database("copy.sqlite")
    shutil.copyfile(pristine, target)
    return f"sqlite:///{target}"


_STATES: dict[str, LibraryState] = {}


def _clean(result: CliResult, allowed: tuple[int, ...] = (0, 1, 2)) -> None:
    """A result or one clear refusal; never an internal error or a traceback."""
    assert result.exit_code != EXIT_INTERNAL, result.stderr
    assert "Traceback" not in result.stderr + result.stdout, result.stderr
    assert "internal problem" not in result.stderr, result.stderr
    assert result.exit_code in allowed, result
    if result.exit_code == 2:
        lines = [line for line in result.stderr.splitlines() if line.strip()]
        assert lines, result
        # click's own usage errors print a usage line before their Error: line
        assert all(line.startswith(("Error: ", "Usage: ", "Try '")) for line in lines), lines
        assert any(line.startswith("Error: ") for line in lines)
    for stream in (result.stdout, result.stderr):  # nothing raw reaches the terminal
        assert "\x1b" not in stream and "\u202e" not in stream and "\x9b" not in stream


def _run(url: str, args: list[str], *, writes: bool) -> CliResult:
    state = _STATES.get(url) or _STATES.setdefault(url, LibraryState(url))
    before = state.snapshot() if writes else None
    result = run_formdb(["--db", url, *args])
    _clean(result)
    if before is not None and result.exit_code == 2:
        assert state.unchanged_since(before), "a refused command changed the library"
    return result


def _toml_string(text: str) -> str:
    return json.dumps(text)  # a JSON string literal is a valid TOML basic string


# --- formula files ---------------------------------------------------------------------------

# The strategies a composite draws from are made once, here: one made inside it is a new
# object on every draw, whose properties (labels, emptiness) Hypothesis works out again each
# time, which cost more than the formula command it fed. The same draws as before.
def _toml_number_or(default: str) -> Callable[[str], str]:
    return lambda t: t if _is_toml_number(t) else default


CATEGORIES = st.sampled_from(["leave-on", "rinse-off", "x"])
FORMULA_KEYS = st.lists(st.sampled_from(["product", "intended_type", "ph", "batch_kg", "kind",
                                         "nonsense"]), max_size=3, unique=True)
FORMULA_VALUE = st.one_of(number_text.map(_toml_number_or("1")), nasty_text.map(_toml_string))
DEPTHS = st.integers(1, 3000)
INGREDIENT_COUNTS = st.integers(0, 40)
INCI_NAMES = st.one_of(st.sampled_from(INGREDIENTS), nasty_text)
DAMAGED = st.integers(0, 9)
SPLICED = st.text(max_size=20)


@st.composite
def formula_text(draw: st.DrawFn) -> str:
    lines = [f"name = {_toml_string(draw(nasty_text) or 'x')}"]
    category = draw(CATEGORIES)
    lines.append(f"category = {_toml_string(category)}")
    for key in draw(FORMULA_KEYS):
        value = draw(FORMULA_VALUE)
        lines.append(f"{key} = {value}")
    if draw(st.booleans()):
        depth = draw(DEPTHS)
        lines.append("deep = " + "[" * depth + "]" * depth)
    count = draw(INGREDIENT_COUNTS)
    for _ in range(count):
        inci = draw(INCI_NAMES)
        percent = draw(number_text)
        lines += ["[[ingredients]]", f"inci = {_toml_string(inci)}",
                  f"percent = {percent if _is_toml_number(percent) else _toml_string(percent)}"]
        if draw(st.booleans()):
            lines.append(f"phase = {_toml_string(draw(nasty_text))}")
    text = "\n".join(lines) + "\n"
    if draw(DAMAGED) == 0:  # a damaged file: bytes cut or spliced
        cut = draw(st.integers(0, len(text)))
        text = text[:cut] + draw(SPLICED) + text[cut:]
    return text


def _is_toml_number(text: str) -> bool:
    import tomllib

    try:
        value = tomllib.loads(f"x = {text}")["x"]
    except (tomllib.TOMLDecodeError, RecursionError):
        return False
    return isinstance(value, int | float) and not isinstance(value, bool)


FORMULA_COMMANDS = {  # every command that reads a formula file, and whether it writes
    "check text": (["check", "--format", "text"], False),
    "check json": (["check", "--format", "json"], False),
    "check html": (["check", "--format", "html"], False),
    "label": (["label"], False),
    "blend": (["blend"], False),
    "batch": (["batch", "--format", "csv"], False),
    "formula import": (["formula", "import"], True),
}


@_settings(700)
@given(text=formula_text(), command=st.sampled_from(sorted(FORMULA_COMMANDS)))
def test_fuzz_formula_files(library: str, pristine: Path, scratch: Scratch, text: str,
                            command: str) -> None:
    path = scratch.file("fuzz.toml", text)
    args, writes = FORMULA_COMMANDS[command]
    url = _fresh_copy(pristine, scratch) if writes else library
    result = _run(url, [*args, str(path)], writes=writes)
    if command == "check json" and result.exit_code in (0, 1):
        json.loads(result.stdout)


# --- profiles --------------------------------------------------------------------------------

PROFILE_OPTIONS = {"HLB01": ["tolerance"], "BAL01": ["tolerance"], "PAK01": ["random_close",
                   "random_close_info"], "MOS01": ["threshold", "missing_severity"],
                   "GAP01": ["severity"], "EVD01": ["from_memory_severity"], "NOPE": ["x"]}
FACTS = ["droplet_diameter_um", "surface_excess_mg_m2", "body_weight_kg",
         "default_dermal_absorption_percent", "default_oral_bioavailability_percent",
         "hlb_wo_max", "hlb_ow_min", "bancroft_margin", "no_such_fact"]


PARENTS = st.sampled_from(["default", "strict", "nope", "../x.toml", "p.toml"])
SELECTED = st.lists(st.sampled_from(["all", "HLB01", "x", ""]), max_size=3)
PROFILE_VALUE = st.one_of(number_text.map(_toml_number_or("1e12")), nasty_text.map(_toml_string),
                          st.sampled_from(["true", "[]", "{}"]))
FACT_KEYS = st.lists(st.sampled_from(FACTS), max_size=3, unique=True)
RULE_CODES = st.lists(st.sampled_from(sorted(PROFILE_OPTIONS)), max_size=3, unique=True)
RULE_KEYS = {code: st.lists(st.sampled_from([*options, "severity", "enabled"]), min_size=1,
                            max_size=2, unique=True)
             for code, options in PROFILE_OPTIONS.items()}


@st.composite
def profile_text(draw: st.DrawFn) -> str:
    lines = [f"name = {_toml_string(draw(nasty_text) or 'p')}", 'version = "1"']
    if draw(st.booleans()):
        parent = draw(PARENTS)
        lines.append(f"extends = {_toml_string(parent)}")
    if draw(st.booleans()):
        chosen = draw(SELECTED)
        lines.append(f"select = {json.dumps(chosen)}")

    def value() -> str:
        return draw(PROFILE_VALUE)

    facts = draw(FACT_KEYS)
    if facts:
        lines.append("[facts]")
        lines += [f"{key} = {value()}" for key in facts]
    for code in draw(RULE_CODES):
        lines.append(f"[rules.{code}]")
        keys = draw(RULE_KEYS[code])
        lines += [f"{key} = {value()}" for key in keys]
    return "\n".join(lines) + "\n"


@_settings(450)
@given(text=profile_text(), fmt=st.sampled_from(["text", "html"]))  # html: the chart's axis
def test_fuzz_profiles(library: str, scratch: Scratch, text: str, fmt: str) -> None:
    profile = scratch.file("p.toml", text)
    formula = scratch.file("f.toml", 'name = "Larkspur fuzz cream"\ncategory = "leave-on"\n'
                           '[[ingredients]]\ninci = "Aqua"\npercent = 80\n'
                           '[[ingredients]]\ninci = "Sorbitan Oleate"\npercent = 5\n'
                           '[[ingredients]]\ninci = "Polysorbate 80"\npercent = 5\n'
                           '[[ingredients]]\ninci = "Paraffinum Liquidum"\npercent = 10\n')
    _run(library, ["check", str(formula), "--profile", str(profile), "--format", fmt],
         writes=False)


# --- CSV and XLSX tables ---------------------------------------------------------------------

HEADER = ["inci_name", "synonyms", "cas", "roles", "hlb", "density", "ph_min", "ph_max",
          "solubility", "source", "hlb_source", "unknown", ""]


HEADERS = st.lists(st.sampled_from(HEADER), min_size=1, max_size=6, unique=True)
ROW_COUNTS = st.integers(0, 6)
SOURCE_CELLS = st.sampled_from(["rule-of-thumb", "from-memory", "nope", ""])
CAS_CELLS = st.sampled_from(["7732-18-5", "0000-00-0", "٧٧٣٢-١٨-٥", "50-00-0", "1-1-1", ""])
OTHER_CELLS = st.one_of(number_text, nasty_text)


@st.composite
def table_rows(draw: st.DrawFn) -> list[list[str]]:
    header = draw(HEADERS)
    if draw(st.booleans()) and "inci_name" not in header:
        header.insert(0, "inci_name")
    rows = [header]
    for _ in range(draw(ROW_COUNTS)):
        row = []
        for column in header:
            if column == "inci_name":
                row.append("Larkspur " + draw(nasty_text))
            elif column in ("source", "hlb_source"):
                row.append(draw(SOURCE_CELLS))
            elif column == "cas":
                row.append(draw(CAS_CELLS))
            else:
                row.append(draw(OTHER_CELLS))
        if draw(st.booleans()) and row:
            row = row[:draw(st.integers(0, len(row)))]  # ragged
        rows.append(row)
    return rows


@_settings(500)
@given(rows=table_rows(), ending=st.sampled_from(["\n", "\r\n", "\r"]),
       delimiter=st.sampled_from([",", ";", "\t"]), damage=st.integers(0, 5),
       dry_run=st.booleans())
def test_fuzz_csv_import(pristine: Path, scratch: Scratch, rows: list[list[str]], ending: str,
                         delimiter: str, damage: int, dry_run: bool) -> None:
    buffer = io.StringIO()
    csv.writer(buffer, delimiter=delimiter, lineterminator=ending).writerows(rows)
    text = buffer.getvalue()
    if damage == 0:
        text = text.replace('"', "", 1)  # an unbalanced quote
    elif damage == 1:
        text += "x" * 140_000  # a cell beyond any bound
    path = scratch.file("fuzz.csv", text)
    _run(_fresh_copy(pristine, scratch),
         ["ingredient", "import", str(path), *(["--dry-run"] if dry_run else [])], writes=True)


@_settings(250)
@given(rows=table_rows(), damage=st.integers(0, 4), formulas=st.booleans())
def test_fuzz_xlsx_import(pristine: Path, scratch: Scratch, rows: list[list[str]], damage: int,
                          formulas: bool) -> None:
    from openpyxl import Workbook

    book = Workbook()
    sheet = book.active
    assert sheet is not None
    for row in rows:
        cells: list[object] = []
        for cell in row:
            text = "".join(ch for ch in cell if ch.isprintable() or ch == " ")
            if formulas and text.startswith("="):
                cells.append(text)  # a real formula cell
            else:
                try:
                    cells.append(float(text) if text.strip() and math.isfinite(float(text))
                                 else text)
                except ValueError:
                    cells.append(text)
        try:
            sheet.append(cells)
        except Exception:  # openpyxl refuses some characters itself: write what it takes
            sheet.append(["".join(ch for ch in str(c) if ch.isalnum()) for c in cells])
    path = scratch.file("fuzz.xlsx")
    book.save(path)
    if damage == 0:
        data = path.read_bytes()
        path.write_bytes(data[: len(data) // 2])  # cut short
    elif damage == 1:
        with zipfile.ZipFile(path, "a") as archive:
            archive.writestr("xl/worksheets/sheet1.xml", "<not xml")
    _run(_fresh_copy(pristine, scratch), ["ingredient", "import", str(path)], writes=True)


# --- evidence records and mixtures: their own import tables -----------------------------------

def _record_columns() -> dict[str, tuple[str, ...]]:
    from formdb.services.library.evidence import KINDS
    from formdb.services.library.mixtures import COLUMNS

    return {**{name: tuple(kind.columns) for name, kind in KINDS.items()}, "mixture": COLUMNS}


RECORD_COLUMNS = _record_columns()


@_settings(300)
@given(data=st.data(), kind=st.sampled_from(sorted(RECORD_COLUMNS)),
       ending=st.sampled_from(["\n", "\r\n", "\r"]), dry_run=st.booleans())
def test_fuzz_record_imports(pristine: Path, scratch: Scratch, data: st.DataObject, kind: str,
                             ending: str, dry_run: bool) -> None:
    """source, toxicology, exposure and mixture import: their columns (some left out, some
    unknown) with hostile, numeric or plausible cells."""
    columns = RECORD_COLUMNS[kind]
    header = data.draw(st.lists(st.sampled_from([*columns, "unknown", ""]), min_size=1,
                                max_size=len(columns) + 1, unique=True))
    plausible = st.sampled_from([*INGREDIENTS, "rule-of-thumb", "from-memory", "50", "100",
                                 "leave-on", "handbook", "estimate", "yes", "2024-01-31"])
    rows = [header] + [
        [data.draw(st.one_of(plausible, nasty_text, number_text)) for _ in header]
        for _ in range(data.draw(st.integers(0, 5)))]
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator=ending).writerows(rows)
    path = scratch.file(f"{kind}.csv", buffer.getvalue())
    _run(_fresh_copy(pristine, scratch),
         [kind, "import", str(path), *(["--dry-run"] if dry_run else [])], writes=True)


# --- ingredient edit --set -------------------------------------------------------------------

@_settings(500)
@given(field=st.sampled_from(FIELDS), value=st.one_of(number_text, nasty_text),
       source=st.sampled_from(["rule-of-thumb", "from-memory", "nope", "", "\x1b[2J"]),
       reason=nasty_text, version=st.one_of(st.none(), number_text, st.integers(-5, 10 ** 25)),
       name=st.sampled_from(["Sorbitan Oleate", "Aqua", "Nope", "sorbitan  oleate", "Glуcerin"]))
def test_fuzz_edit_set(pristine: Path, scratch: Scratch, field: str, value: str, source: str,
                       reason: str, version: object, name: str) -> None:
    args = ["ingredient", "edit", name, "--set", f"{field}={value}", "--source", source,
            "--reason", reason or "fuzz"]
    if version is not None:
        args += ["--expect-version", str(version)]
    _run(_fresh_copy(pristine, scratch), args, writes=True)


# --- backup archives -------------------------------------------------------------------------

@pytest.fixture(scope="module")
def backup_parts(library: str, tmp_path_factory: pytest.TempPathFactory) -> dict[str, bytes]:
    archive = tmp_path_factory.mktemp("backup") / "library.zip"
    assert run_formdb(["--db", library, "db", "backup", str(archive)]).exit_code == 0
    with zipfile.ZipFile(archive) as z:
        return {name: z.read(name) for name in z.namelist()}


def _mutations(parts: dict[str, bytes]) -> list[Callable[[dict[str, bytes], st.DrawFn],
                                                        dict[str, bytes]]]:
    def manifest_field(p: dict[str, bytes], draw: st.DrawFn) -> dict[str, bytes]:
        if "manifest.json" not in p:  # dropped by an earlier mutation
            return p
        data = json.loads(p["manifest.json"])
        key = draw(st.sampled_from(["format", "revision", "tables", "extra"]))
        data[key] = draw(st.one_of(st.none(), st.integers(), nasty_text, st.lists(st.integers(),
                                                                                  max_size=3),
                                   st.dictionaries(st.text(max_size=5), st.integers(-3, 3),
                                                   max_size=3)))
        return {**p, "manifest.json": json.dumps(data).encode()}

    def drop_part(p: dict[str, bytes], draw: st.DrawFn) -> dict[str, bytes]:
        if not p:
            return p
        gone = draw(st.sampled_from(sorted(p)))
        return {k: v for k, v in p.items() if k != gone}

    def mangle_line(p: dict[str, bytes], draw: st.DrawFn) -> dict[str, bytes]:
        tables = sorted(k for k in p if k.startswith("tables/"))
        if not tables:
            return p
        name = draw(st.sampled_from(tables))
        lines = p[name].decode().splitlines() or ["{}"]
        index = draw(st.integers(0, len(lines) - 1))
        try:  # an earlier mutation may have left a line that is not JSON
            row = json.loads(lines[index])
        except ValueError:
            row = {}
        row = row if isinstance(row, dict) else {}
        if row and draw(st.booleans()):
            key = draw(st.sampled_from(sorted(row)))
            row[key] = draw(st.one_of(st.none(), st.integers(-(2 ** 70), 2 ** 70), nasty_text,
                                      st.floats(), st.lists(st.integers(), max_size=2)))
            lines[index] = json.dumps(row)
        else:
            lines[index] = draw(st.sampled_from(["[", "{}", "null", "[1,2]", '{"id": 1}',
                                                 "\x00", '{"a":' * 50]))
        if draw(st.booleans()):
            lines.append(lines[index])  # a row twice
        return {**p, name: ("\n".join(lines) + "\n").encode()}

    def add_part(p: dict[str, bytes], draw: st.DrawFn) -> dict[str, bytes]:
        return {**p, draw(st.sampled_from(["tables/planted.jsonl", "../evil", "x.sql"])):
                draw(st.binary(max_size=30))}

    return [manifest_field, drop_part, mangle_line, add_part]


@pytest.mark.parametrize("damages", [(1, 1), (2, 3)])  # two halves: xdist runs them apart
@_settings(100)
@given(data=st.data())
def test_fuzz_backup_archives(backup_parts: dict[str, bytes], scratch: Scratch,
                              damages: tuple[int, int], data: st.DataObject) -> None:
    parts = dict(backup_parts)
    for _ in range(data.draw(st.integers(*damages))):
        mutate = data.draw(st.sampled_from(_mutations(parts)))
        parts = mutate(parts, data.draw)
    archive = scratch.file("mutated.zip")
    with zipfile.ZipFile(archive, "w") as z:
        for name, blob in parts.items():
            z.writestr(name, blob)
    if data.draw(st.integers(0, 9)) == 0:
        raw = archive.read_bytes()
        archive.write_bytes(raw[: data.draw(st.integers(0, len(raw)))])
    target = scratch.no_database("target.sqlite")
    result = run_formdb(["--db", f"sqlite:///{target}", "db", "restore", str(archive),
                         "--yes"])
    _clean(result)
    if result.exit_code == 2 and target.exists():
        connection = sqlite3.connect(target)
        try:  # nothing was restored, not even the schema
            assert connection.execute("SELECT count(*) FROM sqlite_master").fetchone() == (0,)
        finally:
            connection.close()


# --- list exports: names in, listings and exports out ----------------------------------------

@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])  # two halves: xdist runs them apart
@_settings(150)
@given(name=nasty_text, synonym=nasty_text, fmt=st.sampled_from(["table", "csv", "json"]))
def test_fuzz_list_exports(pristine: Path, scratch: Scratch, name: str, synonym: str, fmt: str,
                           suffix: str) -> None:
    library = _fresh_copy(pristine, scratch)  # the same small library for every example
    _run(library, ["ingredient", "add", f"Larkspur {name}", "--synonym", synonym,
                   "--reason", "fuzz"], writes=True)
    listed = _run(library, ["ingredient", "list", "--format", fmt], writes=False)
    assert listed.exit_code == 0
    if fmt == "csv":
        cells = [c for row in csv.reader(io.StringIO(listed.stdout)) for c in row]
        assert not [c for c in cells if c.startswith(("=", "+", "-", "@", "\t", "\r"))]
    elif fmt == "json":
        json.loads(listed.stdout)
    out = scratch.file(f"library{suffix}")
    exported = _run(library, ["ingredient", "export", str(out)], writes=False)
    assert exported.exit_code == 0 and out.exists()
    if suffix == ".csv":
        with out.open(encoding="utf-8-sig", newline="") as f:
            cells = [c for row in csv.reader(f) for c in row]
        assert not [c for c in cells if c.startswith(("=", "+", "-", "@", "\t", "\r"))]
    back = _run(library, ["ingredient", "import", str(out), "--dry-run"], writes=False)
    assert back.exit_code == 0 and "0 would be added, 0 would be changed" in back.stdout


# --- the regulatory list import --------------------------------------------------------------

@_settings(200)
@given(annex=st.sampled_from(["II", "III", "IV", "V", "VI", "VII", "X", ""]),
       dates=st.sampled_from(["31/10/2025", "32/13/2025", "", "yesterday", "١/١/٢٠٢٥"]),
       cells=st.lists(st.lists(st.one_of(nasty_text, number_text), min_size=0, max_size=18),
                      max_size=5))
def test_fuzz_list_import(pristine: Path, scratch: Scratch, annex: str, dates: str,
                          cells: list[list[str]]) -> None:
    """Annex-shaped text with invented rows (the layout of the Commission's exports, none of
    their content)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow([f"File creation date: {dates}"])
    writer.writerow([f"ANNEX {annex}", f"Last update: {dates}"])
    writer.writerow(["LARKSPUR FUZZ LIST"])
    writer.writerow(["Substance identification", "Conditions"])
    writer.writerow(["Reference Number", "Chemical name / INN",
                     "Name of Common Ingredients Glossary", "CAS Number", "EC Number",
                     "Product Type, body parts",
                     "Maximum concentration in ready for use preparation", "Other",
                     "Wording of conditions of use and warnings", "Regulation",
                     "Other Directives/Regulations", "SCCS opinions", "Chemical/IUPAC Name",
                     "Identified INGREDIENTS or substances e.g.", "CMR", "Update Date"])
    writer.writerows(cells)
    path = scratch.file(f"Larkspur_Annex_{annex or 'none'}.txt", buffer.getvalue())
    _run(_fresh_copy(pristine, scratch), ["lists", "import", str(path)], writes=True)


# --- random bytes ----------------------------------------------------------------------------

@_settings(150)
@given(data=st.binary(max_size=800),
       where=st.sampled_from(["formula", "csv", "xlsx", "profile"]))
def test_fuzz_random_bytes(library: str, pristine: Path, scratch: Scratch, data: bytes,
                           where: str) -> None:
    if where == "formula":
        _run(library, ["check", str(scratch.file("b.toml", data))], writes=False)
    elif where == "profile":
        formula = scratch.file("f100.toml", 'name = "x"\ncategory = "leave-on"\n'
                               '[[ingredients]]\ninci = "Aqua"\npercent = 100\n')
        _run(library, ["check", str(formula), "--profile", str(scratch.file("b-p.toml", data))],
             writes=False)
    else:
        _run(_fresh_copy(pristine, scratch),
             ["ingredient", "import", str(scratch.file(f"t.{where}", data))], writes=True)
