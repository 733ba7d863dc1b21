"""``formdb ingredient ...`` as a user runs it: output, exit codes, one ``Error:`` line.

Library values are handbook values (polysorbate 80 HLB 15, HPE6 Table IX; sorbitan oleate 4.3,
Griffin 1954; water 0.99705 g/mL, CRC Handbook); edits use made-up replacement values.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.fixtures.tables.library_setup import build_library
from tests.helpers import library_state, recorded_as, run_as


@pytest.fixture
def library(library_url: str) -> str:
    return build_library(library_url)


def _formdb(url: str, *args: str, user: str = "ana"):
    return run_as(user, ["--db", url, "ingredient", *args])


def test_list_formats(library: str) -> None:
    table = _formdb(library, "list", "--role", "emulsifier")
    assert table.exit_code == 0, table.stderr
    assert "Polysorbate 80" in table.stdout and "Sorbitan Oleate" in table.stdout
    assert "Glycerin" not in table.stdout and "2 ingredient(s)." in table.stdout
    as_csv = _formdb(library, "list", "--format", "csv")
    lines = as_csv.stdout.splitlines()
    assert lines[0].startswith("inci_name,roles,hlb,")
    assert "Polysorbate 80,emulsifier,15,,,water,nonionic,1,no" in lines
    as_json = json.loads(_formdb(library, "list", "--format", "json").stdout)
    p80 = next(r for r in as_json if r["inci_name"] == "Polysorbate 80")
    assert p80["properties"]["hlb"] == 15.0
    assert p80["provenance"]["hlb"]["evidence"] == "published"


def test_show_prints_every_property_with_source_and_evidence(library: str) -> None:
    result = _formdb(library, "show", "sorbitan monooleate")
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert out.startswith("Sorbitan Oleate  (version 1;")
    assert "synonyms: Sorbitan Monooleate" in out and "CAS: 1338-43-8" in out
    hlb_line = next(line for line in out.splitlines() if " hlb " in line)
    for words in ("4.3", "griffin-1954", "published", "Griffin, W.C."):
        assert words in hlb_line, hlb_line
    from formdb.schemas.ingredient import PROPERTY_NAMES

    for prop in PROPERTY_NAMES:
        assert f" {prop} " in out
    assert "not a safety assessment" in out


def test_show_reads_the_ingredient_once(library: str) -> None:
    """The list entries it prints are looked up for the record ``show`` has read, not for a
    second reading of the same ingredient (counted with SQLAlchemy's cursor event)."""
    from sqlalchemy import event
    from sqlalchemy.engine import Engine

    statements: list[str] = []

    def count(_conn: object, _cursor: object, statement: str, *_args: object) -> None:
        statements.append(" ".join(statement.split()))

    event.listen(Engine, "before_cursor_execute", count)
    try:
        result = _formdb(library, "show", "sorbitan monooleate")
    finally:
        event.remove(Engine, "before_cursor_execute", count)
    assert result.exit_code == 0, result.stderr
    reads = [s for s in statements if s.startswith("SELECT") and " FROM ingredients " in s]
    assert len(reads) == 1, reads


def test_show_unknown_name_suggests(library: str) -> None:
    result = _formdb(library, "show", "Polysorbate 8")
    assert result.exit_code == 2
    assert result.stderr.count("Error:") == 1
    assert "no ingredient 'Polysorbate 8' in the library; did you mean 'Polysorbate 80'" \
        in result.stderr


def test_edit_history_and_conflict(library: str) -> None:
    edited = _formdb(library, "edit", "Glycerin", "--set", "density=1261 kg/m3",
                     "--source", "from-memory", "--expect-version", "1", user="bea")
    assert edited.exit_code == 0, edited.stderr
    assert "changed Glycerin (now version 2):" in edited.stdout
    assert "density: 1.26 -> 1.261" in edited.stdout
    before = library_state(library)
    late = _formdb(library, "edit", "Glycerin", "--set", "density=1.25", "--source",
                   "from-memory", "--expect-version", "1", user="ana")
    assert late.exit_code == 2
    assert library_state(library) == before
    lines = late.stderr.strip().splitlines()
    bea = recorded_as(library, "bea")
    assert len(lines) == 1 and lines[0].startswith("Error: 'Glycerin' was changed since "
                                                   f"version 1 by {bea}")
    assert "--expect-version 2" in lines[0]
    history = _formdb(library, "history", "glycerol")
    assert history.exit_code == 0
    row = next(line for line in history.stdout.splitlines() if " edit " in line
               and " density " in line)
    for words in (bea, "1.26", "1.261", " 2 "):
        assert words in row, row
    assert "larkspur-setup" in history.stdout and "import" in history.stdout
    # what a history can vouch for: on SQLite no server records changes made around formdb
    around = "no server records changes made outside formdb"
    assert (around in history.stdout) == library.startswith("sqlite"), history.stdout


def test_published_value_edit_without_reason(library: str) -> None:
    before = library_state(library)
    result = _formdb(library, "edit", "Polysorbate 80", "--set", "hlb=15.4", "--source",
                     "larkspur-bench")
    assert result.exit_code == 2
    assert library_state(library) == before
    assert result.stderr.startswith("Error: hlb of 'Polysorbate 80' is a published value")
    assert "--reason" in result.stderr
    ok = _formdb(library, "edit", "Polysorbate 80", "--set", "hlb=15.4", "--source",
                 "larkspur-bench", "--reason", "bench value, lot 12")
    assert ok.exit_code == 0 and "hlb: 15 -> 15.4" in ok.stdout


def test_edit_with_several_bad_values_prints_each(library: str) -> None:
    before = library_state(library)
    result = _formdb(library, "edit", "Carbomer", "--set", "ph_min=-1", "--set",
                     "use_max_percent=lots", "--source", "rule-of-thumb")
    assert result.exit_code == 2
    assert library_state(library) == before
    errors = [line for line in result.stderr.splitlines() if line.startswith("Error:")]
    assert len(errors) == 2
    assert errors[0] == ("Error: edit 'Carbomer', field ph_min: ph_min -1 is out of range: it "
                         "must be at least 0 and at most 14.")
    # the last problem line also carries the next step
    assert errors[1].startswith(
        "Error: edit 'Carbomer', field use_max_percent: 'lots' is not a number; "
        "use_max_percent takes a number at least 0 and at most 100 % w/w. Next: ")


def test_malformed_set_is_a_usage_error(library: str) -> None:
    result = _formdb(library, "edit", "Carbomer", "--set", "ph_min")
    assert result.exit_code == 2 and "is not field=value" in result.stderr


def test_add_retire_restore(library: str) -> None:
    added = _formdb(library, "add", "Polysorbate 20", "--set", "hlb=16.7", "--source", "hpe6",
                    "--cas", "9005-64-5", "--role", "emulsifier", "--synonym",
                    "Polyoxyethylene 20 Sorbitan Monolaurate")
    assert added.exit_code == 0, added.stderr
    assert "added Polysorbate 20 (now version 1):" in added.stdout
    bad_cas = _formdb(library, "add", "Propylene Glycol", "--cas", "57-55-5")
    assert bad_cas.exit_code == 2
    assert "field cas: CAS number '57-55-5' fails its check digit" in bad_cas.stderr
    needs_reason = _formdb(library, "retire", "Polysorbate 20")
    assert needs_reason.exit_code == 2 and "--reason" in needs_reason.stderr
    retired = _formdb(library, "retire", "Polysorbate 20", "--reason", "discontinued")
    assert retired.exit_code == 0 and "retired: no -> yes" in retired.stdout
    assert "Polysorbate 20" not in _formdb(library, "list").stdout
    assert "Polysorbate 20" in _formdb(library, "list", "--include-retired").stdout
    assert "RETIRED" in _formdb(library, "show", "Polysorbate 20").stdout
    restored = _formdb(library, "restore", "Polysorbate 20", "--reason", "back in stock")
    assert restored.exit_code == 0 and "retired: yes -> no" in restored.stdout
    history = _formdb(library, "history", "Polysorbate 20").stdout
    assert "discontinued" in history and "back in stock" in history


def test_import_dry_run_output(library: str, tmp_path: Path) -> None:
    path = tmp_path / "supplier.csv"
    path.write_text("inci_name,hlb,density,source\n"
                    "Polysorbate 20,16.7,1.1,hpe6\n"
                    "Aqua,,0.998,crc-water\n"
                    "Sorbitan Oleate,4.3,,griffin-1954\n", encoding="utf-8")
    before = library_state(library)
    result = _formdb(library, "import", str(path), "--dry-run")
    assert result.exit_code == 0, result.stderr
    assert library_state(library) == before
    lines = result.stdout.splitlines()
    assert "would be added: Polysorbate 20" in lines
    assert "would be changed: Water" in lines
    assert "  density: 0.99705 -> 0.998" in lines
    assert "  density_note: at 25 °C -> (none)" in lines
    assert "would be left alone: Sorbitan Oleate" in lines
    assert lines[-1] == ("1 would be added, 1 would be changed, 1 left alone "
                         "(dry run: nothing was written).")
    real = _formdb(library, "import", str(path), "--reason", "supplier sheet")
    assert real.exit_code == 0 and real.stdout.splitlines()[-1] == \
        "1 added, 1 changed, 1 left alone."
    assert library_state(library) != before


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_export_import_round_trip_through_the_cli(library: str, tmp_path: Path,
                                                  suffix: str) -> None:
    out = tmp_path / f"library{suffix}"
    exported = _formdb(library, "export", str(out))
    assert exported.exit_code == 0 and "wrote 7 ingredient(s)" in exported.stdout
    before = library_state(library)
    again = _formdb(library, "import", str(out))
    assert again.exit_code == 0, again.stderr
    assert again.stdout.splitlines()[-1] == "0 added, 0 changed, 7 left alone."
    assert library_state(library) == before


def test_export_to_an_unknown_format_is_refused(library: str, tmp_path: Path) -> None:
    result = _formdb(library, "export", str(tmp_path / "library.json"))
    assert result.exit_code == 2 and "only .csv and .xlsx are written" in result.stderr
    assert not (tmp_path / "library.json").exists()


def test_every_subcommand_has_help() -> None:
    from formdb.cli.ingredients import ingredient_group

    for name, command in ingredient_group.commands.items():
        assert command.help and command.help.strip(), name


def test_notes_and_reasons_print_as_written(library: str) -> None:
    """Library text is data, not terminal markup: brackets in a note or a reason (a citation
    number, a tag someone typed) and emoji codes are printed as typed in show and history
    (Rich would otherwise read "[b]" as a style and drop it, and ":warning:" as an emoji)."""
    note = "[12] [b]x[/b] :warning:"
    edited = _formdb(library, "edit", "Glycerin", "--set", f"density_note={note}",
                     "--reason", "leaflet [v2]", user="bea")
    assert edited.exit_code == 0, edited.stderr
    shown = _formdb(library, "show", "Glycerin")
    assert shown.exit_code == 0, shown.stderr
    density = next(line for line in shown.stdout.splitlines() if " density " in line)
    assert note in density, density
    history = _formdb(library, "history", "Glycerin")
    assert "leaflet [v2]" in history.stdout, history.stdout


@pytest.mark.parametrize(("option", "value"), [
    ("--synonym", "PEG-20 Sorbitan Laurate; Tween-like"),
    ("--synonym", "Polysorbate [20] &amp;"),
    ("--role", "emulsifier;solvent"),
])
def test_an_item_with_the_list_separator_is_refused(library: str, option: str,
                                                    value: str) -> None:
    """One --synonym is one name: a ';' in it used to split it into two synonyms (and a trailing
    one, as in '&amp;', vanished), so the library held other names than the ones typed."""
    before = library_state(library)
    result = _formdb(library, "add", "Polysorbate 20", "--set", "hlb=16.7", "--source", "hpe6",
                     "--role", "emulsifier", option, value)
    assert result.exit_code == 2
    assert result.stderr.count("Error:") == 1 and "Traceback" not in result.stderr
    assert f"{option} {value!r}: holds ';'" in result.stderr
    assert library_state(library) == before
