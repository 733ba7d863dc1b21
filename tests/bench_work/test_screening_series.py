"""``formdb screen``: plan a series for an oil phase, record observations, fit and store the
required HLB, and the next check uses it with its source.

The observations are invented for the test (a stability peak placed at HLB 11.2); the fit's
statistics are checked against known optima in tests/science/test_screening_fit.py. The pair's
proportions follow the lever rule with the seed's HLB values (sorbitan stearate 4.7,
polysorbate 60 14.9; Griffin 1954, science.md section 1).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from tests.helpers import library_state, run_formdb

SERIES = "Larkspur mineral oil/IPM 70:30"
PLAN = ["screen", "plan", SERIES, "--oil", "Paraffinum Liquidum=70",
        "--oil", "Isopropyl Myristate=30", "--low", "Sorbitan Stearate",
        "--high", "Polysorbate 60", "--from-hlb", "6", "--to-hlb", "14", "--step", "1",
        "--batch-g", "200"]
LOTION = """name = "Larkspur light lotion, draft 1"
category = "leave-on"
intended_type = "O/W"

[[ingredients]]
inci = "Aqua"
percent = 75.0
phase = "A"

[[ingredients]]
inci = "Paraffinum Liquidum"
percent = {oil}
phase = "B"

[[ingredients]]
inci = "Isopropyl Myristate"
percent = {ipm}
phase = "B"

[[ingredients]]
inci = "Sorbitan Stearate"
percent = 1.9
phase = "B"

[[ingredients]]
inci = "Polysorbate 60"
percent = 3.1
phase = "B"
"""


def _run(url: str, *args: str):
    return run_formdb(["--db", url, *args])


def _record_peak(url: str, peak: float = 11.2) -> None:
    for number in range(1, 10):
        hlb = 5 + number
        score = round(1 + 8 * math.exp(-((hlb - peak) ** 2) / (2 * 2.2 ** 2)), 1)
        result = _run(url, "screen", "record", SERIES, "--blend", str(number),
                      "--stability", str(score), "--after-hours", "24")
        assert result.exit_code == 0, result.stderr


def test_plan_stores_the_series_with_lever_rule_blends_and_sheets(
        seeded_library_url: str, tmp_path: Path) -> None:
    result = _run(seeded_library_url, *PLAN, "--sheets", str(tmp_path))
    assert result.exit_code == 0, result.stderr
    assert "9 weigh sheets written" in result.stdout
    # HLB 10 from 4.7 and 14.9: (14.9 - 10) / 10.2 = 48.04 % of 5 % = 2.402 % sorbitan stearate
    assert "10.00                     2.402                     2.598" in result.stdout
    sheets = sorted(p.name for p in tmp_path.glob("blend-*.html"))
    assert len(sheets) == 9
    page = (tmp_path / "blend-05.html").read_text(encoding="utf-8")
    assert "blend 05 (HLB 10)" in page and "Weighed by:" in page
    shown = _run(seeded_library_url, "screen", "show", SERIES)
    assert shown.exit_code == 0 and "Isopropyl Myristate 30 %" in shown.stdout
    again = _run(seeded_library_url, *PLAN)
    assert again.exit_code == 2 and "exists" in again.stderr


def test_a_bad_sheets_folder_is_refused_before_the_plan_is_stored(
        seeded_library_url: str, tmp_path: Path) -> None:
    url = seeded_library_url
    folder = tmp_path / "sheets"
    before = library_state(url)
    missing = _run(url, *PLAN, "--sheets", str(folder))
    assert missing.exit_code == 2 and "not a folder" in missing.stderr
    assert missing.stderr.count("Error:") == 1 and "Traceback" not in missing.stderr
    folder.mkdir()
    (folder / "blend-03.html").write_text("an earlier series' sheet", encoding="utf-8")
    taken = _run(url, *PLAN, "--sheets", str(folder))
    assert taken.exit_code == 2 and "already holds blend-03.html" in taken.stderr
    assert library_state(url) == before  # the series was not stored
    assert (folder / "blend-03.html").read_text(encoding="utf-8") == "an earlier series' sheet"
    assert [p.name for p in folder.iterdir()] == ["blend-03.html"]
    assert _run(url, *PLAN).exit_code == 0
    shown = _run(url, "screen", "show", SERIES, "--sheets", str(folder))
    assert shown.exit_code == 2 and "already holds" in shown.stderr


def test_the_series_prints_its_names_as_written(seeded_library_url: str) -> None:
    # emulsifier names longer than the 22-character column and a series name with an
    # apostrophe and a backslash: each printed in full and as typed, never cut or quoted by
    # Python's repr (which doubles the backslash)
    url, name = seeded_library_url, "O'Hare 70\\30 [b]screen[/b]"
    plan = ["screen", "plan", name, "--oil", "Paraffinum Liquidum=100",
            "--low", "Polyglyceryl-3 Diisostearate", "--high", "PEG-40 Hydrogenated Castor Oil",
            "--from-hlb", "6", "--to-hlb", "14", "--step", "1"]
    assert _run(url, *plan).exit_code == 0
    for number in range(1, 10):
        score = round(1 + 8 * math.exp(-((5 + number - 10.5) ** 2) / 9.68), 1)
        assert _run(url, "screen", "record", name, "--blend", str(number),
                    "--stability", str(score)).exit_code == 0
    shown = _run(url, "screen", "show", name)
    assert shown.exit_code == 0, shown.stderr
    header = next(line for line in shown.stdout.splitlines() if line.lstrip().startswith("blend"))
    assert "Polyglyceryl-3 Diisostearate %" in header
    assert "PEG-40 Hydrogenated Castor Oil %" in header
    # the numbers stay right-aligned under their (wider) headers
    row = next(line for line in shown.stdout.splitlines() if line.lstrip().startswith("1 "))
    assert len(row.split("  stability")[0]) == len(header.split("  observations")[0])
    fitted = _run(url, "screen", "fit", name)
    assert fitted.exit_code == 0, fitted.stderr
    assert f"Required HLB of the oil phase of '{name}': " in fitted.stdout


def test_fit_is_refused_without_a_clear_optimum(seeded_library_url: str) -> None:
    url = seeded_library_url
    assert _run(url, *PLAN).exit_code == 0
    for number in range(1, 10):
        assert _run(url, "screen", "record", SERIES, "--blend", str(number),
                    "--stability", "7").exit_code == 0
    before = library_state(url)
    result = _run(url, "screen", "fit", SERIES, "--store")
    assert result.exit_code == 2
    assert "no required HLB fitted: every observed blend scores the same" in result.stderr
    assert library_state(url) == before


def test_readings_of_different_ages_are_not_fitted_together(seeded_library_url: str) -> None:
    # every blend read after 24 h (peak 11.2), then blends 4 and 5 again after a week: their
    # latest readings are a week old while the others are a day old, so the plain fit refuses
    url = seeded_library_url
    assert _run(url, *PLAN).exit_code == 0
    _record_peak(url)
    for number, score in ((4, "2.0"), (5, "2.5")):
        assert _run(url, "screen", "record", SERIES, "--blend", str(number), "--stability",
                    score, "--after-hours", "168").exit_code == 0
    before = library_state(url)
    mixed = _run(url, "screen", "fit", SERIES, "--store")
    assert mixed.exit_code == 2 and mixed.stderr.count("Error:") == 1
    assert "of different ages (24 h: blends 1, 2, 3, 6, 7, 8, 9; 168 h: blends 4, 5)" in \
        mixed.stderr and "--after-hours" in mixed.stderr
    week = _run(url, "screen", "fit", SERIES, "--after-hours", "168")
    assert week.exit_code == 2 and "only 2 blends are observed" in week.stderr
    assert library_state(url) == before
    day = _run(url, "screen", "fit", SERIES, "--after-hours", "24", "--store")
    assert day.exit_code == 0, day.stderr
    assert "from stability after 24 h of blends" in day.stdout
    value = float(day.stdout.split(": ", 1)[1].split()[0])
    assert value == pytest.approx(11.2, abs=0.3)  # the day-old peak, not pulled by the week
    source = _run(url, "source", "show", "screen-larkspur-mineral-oil-ipm-70-30-1").stdout
    flat = " ".join(source.replace("│", " ").split())
    assert "from stability after 24 h" in flat
    assert "stability 2 (168 h)" in flat  # every reading stays attached, with its age


def test_a_measure_not_recorded_names_the_ones_that_are(seeded_library_url: str) -> None:
    url = seeded_library_url
    assert _run(url, *PLAN).exit_code == 0
    assert _run(url, "screen", "record", SERIES, "--blend", "2",
                "--separation-percent", "12").exit_code == 0
    result = _run(url, "screen", "fit", SERIES)
    assert result.exit_code == 2
    assert "no blend has a stability reading; the series has separation_percent readings" in \
        result.stderr and "--measure separation-percent" in result.stderr
    # the option takes the reading as screen record spells it, or as it is stored
    for spelling in ("separation-percent", "separation_percent"):
        fitted = _run(url, "screen", "fit", SERIES, "--measure", spelling)
        assert fitted.exit_code == 2 and "only 1 blend is observed" in fitted.stderr
    wrong = _run(url, "screen", "fit", SERIES, "--measure", "colour")
    assert wrong.exit_code == 2 and "choose stability, separation-percent or droplet-um" in \
        wrong.stderr and wrong.stderr.count("Error:") == 1


def test_stored_fit_is_used_by_the_next_check_with_its_source(seeded_library_url: str,
                                                               tmp_path: Path) -> None:
    url = seeded_library_url
    assert _run(url, *PLAN).exit_code == 0
    _record_peak(url)
    lotion = tmp_path / "lotion.toml"
    lotion.write_text(LOTION.format(oil=14.0, ipm=6.0), encoding="utf-8")
    before = json.loads(_run(url, "check", str(lotion), "--format", "json").stdout)
    fitted = _run(url, "screen", "fit", SERIES, "--store")
    assert fitted.exit_code == 0, fitted.stderr
    assert "Stored in the library as an in-house measurement" in fitted.stdout
    after = json.loads(_run(url, "check", str(lotion), "--format", "json").stdout)
    assert before["required_hlb"] != after["required_hlb"]
    assert after["required_hlb"] == pytest.approx(11.2, abs=0.3)
    text = _run(url, "check", str(lotion)).stdout
    assert "measured in-house for this oil phase" in text
    assert "screen-larkspur-mineral-oil-ipm-70-30-1" in text
    # the source is a library record: kind in-house measurement, graded measured, observations
    source = _run(url, "source", "show", "screen-larkspur-mineral-oil-ipm-70-30-1")
    assert source.exit_code == 0, source.stderr
    assert "measured" in source.stdout and "blend 6 HLB 11" in source.stdout
    # another oil phase (mineral oil alone) keeps the weight average
    other = tmp_path / "other.toml"
    other.write_text(LOTION.format(oil=10.0, ipm=10.0), encoding="utf-8")
    result = json.loads(_run(url, "check", str(other), "--format", "json").stdout)
    assert "measured in-house" not in _run(url, "check", str(other)).stdout
    assert result["required_hlb"] is not None


def _review_state(url: str, key: str) -> dict:
    shown = _run(url, "review", "status", "--format", "json")
    return {s["run_key"]: s for s in json.loads(shown.stdout)["runs"]}[key]


def test_a_filed_review_goes_stale_when_a_measured_value_would_be_taken(
        seeded_library_url: str, tmp_path: Path) -> None:
    # a review run names the library records its check used; a measured required HLB stored
    # after it changes what the check takes, so the run is stale (logged: nothing broken)
    url = seeded_library_url
    assert _run(url, *PLAN).exit_code == 0
    _record_peak(url)
    lotion = tmp_path / "lotion.toml"
    lotion.write_text(LOTION.format(oil=14.0, ipm=6.0), encoding="utf-8")
    first = _run(url, "review", "run", str(lotion))
    assert first.exit_code == 0, first.stderr
    key = first.stdout.split()[1].rstrip(":")
    assert _review_state(url, key)["state"] == "current"
    assert _run(url, "screen", "fit", SERIES, "--store").exit_code == 0
    state = _review_state(url, key)
    assert state["state"] == "stale" and state["broken"] == []
    assert "measured required HLB O/W oil phase: added to the library since the run" in \
        state["changes"]
    again = _run(url, "review", "run", str(lotion))
    newer = again.stdout.split()[1].rstrip(":")
    assert _review_state(url, newer)["state"] == "current"
    # a later fit of the same phase is taken instead: the newer run names what changed
    assert _run(url, "screen", "fit", SERIES, "--store").exit_code == 0
    changes = _review_state(url, newer)["changes"]
    assert changes == ["measured required HLB O/W oil phase: source "
                       "'screen-larkspur-mineral-oil-ipm-70-30-1' -> "
                       "'screen-larkspur-mineral-oil-ipm-70-30-2'"]
    # a formula with another oil phase takes no measurement: a further fit leaves its run be
    other = tmp_path / "other.toml"
    other.write_text(LOTION.format(oil=10.0, ipm=10.0).replace("draft 1", "draft 2"),
                     encoding="utf-8")
    done = _run(url, "review", "run", str(other))
    assert done.exit_code == 0, done.stderr
    assert _run(url, "screen", "fit", SERIES, "--store").exit_code == 0
    untouched = _review_state(url, done.stdout.split()[1].rstrip(":"))
    assert untouched["state"] == "current" and untouched["changes"] == []


@pytest.mark.parametrize(("args", "message"), [
    (["--blend", "12", "--stability", "5"], "--blend 12: series"),
    (["--blend", "1", "--stability", "11"], "--stability 11: must be from 0 to 10"),
    (["--blend", "1"], "give at least one observation"),
    (["--blend", "1", "--droplet-um", "-2"], "--droplet-um -2"),
    # a drop has a size: 0 would be the series' finest emulsion
    (["--blend", "1", "--droplet-um", "0"], "--droplet-um 0: must be from 0.001 to 10000"),
])
def test_bad_observations_are_refused(seeded_library_url: str, args: list[str],
                                      message: str) -> None:
    assert _run(seeded_library_url, *PLAN).exit_code == 0
    before = library_state(seeded_library_url)
    result = _run(seeded_library_url, "screen", "record", SERIES, *args)
    assert result.exit_code == 2 and message in result.stderr
    assert result.stderr.count("Error:") == 1
    assert library_state(seeded_library_url) == before


@pytest.mark.parametrize(("change", "message"), [
    (["--to-hlb", "16"], "goes beyond what Sorbitan Stearate and Polysorbate 60 reach"),
    (["--low", "Polysorbate 60", "--high", "Sorbitan Stearate"], "must have a lower HLB"),
    (["--step", "0"], "the step must be above 0"),
    (["--oil-percent", "95"], "--oil-percent 95"),
    (["--oil", "Unobtainium=5"], "--oil 'Unobtainium'"),
    (["--oil", "Squalane"], "write INCI=SHARE"),
])
def test_bad_plans_are_refused(seeded_library_url: str, change: list[str],
                               message: str) -> None:
    args = list(PLAN)
    for i in range(0, len(change), 2):
        option = change[i]
        if option in args and option != "--oil":
            args[args.index(option) + 1] = change[i + 1]
        else:
            args += change[i:i + 2]
    before = library_state(seeded_library_url)
    result = _run(seeded_library_url, *args)
    assert result.exit_code == 2 and message in result.stderr, result.stderr
    assert library_state(seeded_library_url) == before


def test_a_note_recorded_with_the_readings_is_shown_as_typed(seeded_library_url: str) -> None:
    """`screen record --note` was stored and never printed. The note comes back in the text
    (one line, its control and invisible characters as visible escapes, as every data text of a
    report) and in the JSON (the stored text exactly)."""
    url = seeded_library_url
    assert _run(url, *PLAN).exit_code == 0
    note = "creamed at the top\nsmell of oil \u202eevil\u202c, bell \x07"
    recorded = _run(url, "screen", "record", SERIES, "--blend", "3", "--stability", "6",
                    "--droplet-um", "4.5", "--after-hours", "24", "--note", note)
    assert recorded.exit_code == 0, recorded.stderr
    assert "the note is kept" in recorded.stdout
    assert _run(url, "screen", "record", SERIES, "--blend", "4", "--stability", "7").exit_code == 0
    shown = _run(url, "screen", "show", SERIES)
    assert shown.exit_code == 0, shown.stderr
    (line,) = [ln for ln in shown.stdout.splitlines() if ln.startswith("  blend 3, ")]
    # one recording of two readings is one note, naming both
    assert line.startswith("  blend 3, stability, droplet um after 24 h (")
    assert line.endswith(": creamed at the top\\nsmell of oil \\u202eevil\\u202c, bell \\u0007")
    assert "Notes recorded with the readings:" in shown.stdout
    assert "blend 4, " not in shown.stdout  # recorded without a note
    as_json = _run(url, "screen", "show", SERIES, "--format", "json")
    assert as_json.exit_code == 0, as_json.stderr
    blends = {b["number"]: b for b in json.loads(as_json.stdout)["blends"]}
    (kept,) = blends[3]["notes"]
    assert kept["text"] == note
    assert kept["measures"] == ["stability", "droplet_um"] and kept["after_hours"] == 24
    assert blends[3]["observations"] == {"droplet_um": 4.5, "stability": 6.0}
    assert blends[4]["notes"] == []
