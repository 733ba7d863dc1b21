"""Read-only commands start lean: opening a library answers "is it at head?" without alembic (the
answers are checked against alembic's own), and ``check FILE``, ``ingredient show``, ``ingredient
list``, ``rules`` and ``--help`` load none of the heavy libraries they do not need (pandas,
openpyxl, pint, jinja2, alembic, and rapidfuzz unless a name is misspelt). Each command runs in
its own ``python -X importtime`` process; a control run of ``ingredient export`` shows the same
reading does see pandas when a command needs it; ``check FILE`` and ``ingredient show`` leave
formdb's bench-work records (schemas.bench) unloaded too,
and ``ingredient show`` the formula records (schemas.formula). No time is asserted (the benchmark
measures)."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import text

from formdb.resources import migrations_dir, seed_data_dir
from formdb.store.db import (
    _parse_literal_assignments,
    current_revision,
    head_from_files,
    head_revision,
    make_engine,
    stored_revision_plain,
)

pytestmark = pytest.mark.slow  # left out of the fast lane

HEAVY = ("alembic", "pandas", "openpyxl", "jinja2", "pint", "matplotlib", "numpy")
# loaded only to suggest a name for a misspelt one, which none of the runs below has
SUGGESTIONS = ("rapidfuzz",)


def test_head_from_files_is_alembics_head() -> None:
    assert head_from_files() == head_revision()


def _revision_file(folder: Path, revision: str, parent: str | None, extra: str = "") -> None:
    parent_text = "None" if parent is None else repr(parent)
    (folder / f"{revision}.py").write_text(
        f'"""test revision"""\nrevision: str = {revision!r}\n'
        f"down_revision: str | None = {parent_text}\n{extra}", encoding="utf-8")


@pytest.mark.parametrize("layout, expected", [
    ([("a1", None, ""), ("b2", "a1", ""), ("c3", "b2", "")], "c3"),
    ([("a1", None, ""), ("b2", "a1", ""), ("c3", "a1", "")], None),  # two heads: alembic's call
    ([("a1", None, ""), ("b2", ("a1",), "")], None),  # a merge tuple
    ([("a1", None, ""), ("b2", "a1", "branch_labels = ('x',)\n")], None),
    ([("a1", None, ""), ("b2", "zz", "")], None),  # a parent that is not there
])
def test_head_from_files_leaves_unusual_chains_to_alembic(
        tmp_path: Path, layout: list[tuple[str, object, str]], expected: str | None) -> None:
    versions = tmp_path / "versions"
    versions.mkdir()
    for revision, parent, extra in layout:
        if isinstance(parent, tuple):
            (versions / f"{revision}.py").write_text(
                f"revision = {revision!r}\ndown_revision = {parent!r}\n", encoding="utf-8")
        else:
            _revision_file(versions, revision, parent, extra)  # type: ignore[arg-type]
    assert head_from_files(tmp_path) == expected


IDENTIFIERS = ("revision", "down_revision", "branch_labels", "depends_on")


def _identifiers_of_whole_file(text: str) -> dict[str, object]:
    """The reference: the last module-level assignment of each identifier, the whole file
    parsed (literal_eval of each value; None where it is not a literal)."""
    found: dict[str, object] = {}
    for node in ast.parse(text).body:
        if isinstance(node, ast.AnnAssign | ast.Assign):
            target = node.target if isinstance(node, ast.AnnAssign) else node.targets[0]
            if isinstance(target, ast.Name) and target.id in IDENTIFIERS and node.value:
                value = node.value
                found[target.id] = value.value if isinstance(value, ast.Constant) else "?"
    return found


def _identifiers_read(file: Path) -> dict[str, object]:
    values = _parse_literal_assignments(file)
    return {k: (v if not isinstance(v, ast.AST) else "?") for k, v in values.items()
            if k in IDENTIFIERS}


def test_revision_identifiers_are_read_as_a_whole_parse_reads_them(tmp_path: Path) -> None:
    """Only the head of a revision file is parsed; the identifiers come out as a parse of the
    whole file gives them, for every bundled revision and for files that assign one again
    below a function, or whose docstring holds a line that looks like a definition."""
    files = sorted((migrations_dir() / "versions").glob("*.py"))
    crafted = {
        "again_below.py": 'revision = "a"\ndown_revision = None\n\n\ndef upgrade():\n'
                          '    pass\n\n\nrevision = "b"\n',
        "docstring.py": '"""Notes\n\ndef looks_like_code():\n"""\nrevision = "c"\n'
                        'down_revision = "b"\n\n\ndef upgrade():\n    pass\n',
        "labels_below.py": 'revision = "d"\ndown_revision = "c"\n\n\n@decorated\n'
                           'def upgrade():\n    pass\nbranch_labels = ("x",)\n',
        "no_function.py": 'revision = "e"\ndown_revision: str | None = "d"\n',
    }
    for name, source in crafted.items():
        (tmp_path / name).write_text(source, encoding="utf-8")
        files.append(tmp_path / name)
    for file in files:
        expected = _identifiers_of_whole_file(file.read_text(encoding="utf-8"))
        assert _identifiers_read(file) == expected, file.name
    assert _identifiers_read(tmp_path / "again_below.py")["revision"] == "b"
    assert _identifiers_read(tmp_path / "docstring.py")["revision"] == "c"


def test_plain_revision_read_matches_alembic(library_url: str) -> None:
    engine = make_engine(library_url)
    try:
        assert stored_revision_plain(engine) == (True, current_revision(engine))
        assert current_revision(engine) == head_revision()
    finally:
        engine.dispose()


def test_plain_revision_read_of_an_empty_database(empty_library_url: str) -> None:
    engine = make_engine(empty_library_url)
    try:
        assert stored_revision_plain(engine) == (True, None)
        assert current_revision(engine) is None
        with engine.begin() as conn:  # two version rows: branches, which alembic must judge
            conn.execute(text("CREATE TABLE alembic_version (version_num VARCHAR(32))"))
            conn.execute(text("INSERT INTO alembic_version VALUES ('a'), ('b')"))
        assert stored_revision_plain(engine) == (False, None)
    finally:
        engine.dispose()


def _loaded_modules(url: str, *args: str) -> set[str]:
    """The modules one ``python -m formdb --db URL ARGS`` process imports."""
    done = subprocess.run([sys.executable, "-X", "importtime", "-m", "formdb", "--db", url, *args],
                          capture_output=True, text=True, check=False, timeout=120)
    assert done.returncode in (0, 1), done.stderr[-2000:]
    loaded = {line.rsplit("|", 1)[-1].strip() for line in done.stderr.splitlines()
              if line.startswith("import time:")}
    assert "formdb.cli.main" in loaded, "no import lines read: -X importtime output changed?"
    return loaded


def _loaded_packages(url: str, *args: str) -> set[str]:
    """The top-level packages one ``python -m formdb --db URL ARGS`` process imports."""
    return {name.split(".")[0] for name in _loaded_modules(url, *args)}


READ_ONLY_COMMANDS = {
    "check FILE": ("check", str(seed_data_dir() / "demo" / "01-hand-cream.toml")),
    "ingredient show": ("ingredient", "show", "Glycerin"),
    "ingredient list": ("ingredient", "list"),
    "ingredient list --format json": ("ingredient", "list", "--format", "json"),
    "rules": ("rules",),
    "--help": ("--help",),
}


@pytest.mark.parametrize("command", sorted(READ_ONLY_COMMANDS))
def test_read_only_command_loads_no_heavy_library(seeded_sqlite_url: str, command: str) -> None:
    top_level = _loaded_packages(seeded_sqlite_url, *READ_ONLY_COMMANDS[command])
    unneeded = top_level & {*HEAVY, *SUGGESTIONS}
    assert not unneeded, f"formdb {command} imports {sorted(unneeded)}"


def test_the_reading_sees_a_heavy_library_a_command_needs(seeded_sqlite_url: str,
                                                          tmp_path: Path) -> None:
    """Control: exporting a table writes it with pandas, and the same reading reports it."""
    top_level = _loaded_packages(seeded_sqlite_url, "ingredient", "export",
                                 str(tmp_path / "out.csv"))
    assert "pandas" in top_level


# formdb's own modules that checking a file or showing an ingredient has no use for: the
# bench-work records (weigh sheets, prices, screening series)
UNNEEDED_FORMDB = ("formdb.schemas.bench",)


@pytest.mark.parametrize("command", ["check FILE", "ingredient show"])
def test_checking_and_showing_load_no_bench_work_records(seeded_sqlite_url: str,
                                                         command: str) -> None:
    loaded = _loaded_modules(seeded_sqlite_url, *READ_ONLY_COMMANDS[command])
    assert not loaded & set(UNNEEDED_FORMDB), f"formdb {command} imports {UNNEEDED_FORMDB}"


def test_the_reading_sees_the_bench_work_records_a_command_needs(seeded_sqlite_url: str) -> None:
    """Control: listing prices reads them as PriceRecords of formdb.schemas.bench."""
    assert "formdb.schemas.bench" in _loaded_modules(seeded_sqlite_url, "price", "list")


def test_showing_an_ingredient_loads_no_formula_records(seeded_sqlite_url: str) -> None:
    """``ingredient show`` reads one ingredient and its list entries: the formula file's and
    the resolved formula's records (schemas.formula) are not loaded; checking a file, the
    control, needs them and the same reading sees them."""
    shown = _loaded_modules(seeded_sqlite_url, *READ_ONLY_COMMANDS["ingredient show"])
    assert "formdb.schemas.formula" not in shown
    checked = _loaded_modules(seeded_sqlite_url, *READ_ONLY_COMMANDS["check FILE"])
    assert "formdb.schemas.formula" in checked
