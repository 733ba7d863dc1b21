"""``formdb batch``: a weigh sheet for 20 kg of a formula with a process, on the seed library,
and ``formdb price``: quotes with history that cost the batch.

Masses are checked against % w/w x batch worked by hand; the soap pair (stearic acid with
triethanolamine) is the seed's own soap pair.
"""

from __future__ import annotations

import csv
import io
from html import unescape
from pathlib import Path

import pytest
from openpyxl import load_workbook

from tests.helpers import library_state, run_formdb

CREAM = Path(__file__).parents[1] / "fixtures" / "bench_cream.toml"


def _batch(url: str, *args: str):
    return run_formdb(["--db", url, "batch", str(CREAM), *args])


def _csv_rows(url: str, *args: str) -> list[dict[str, str]]:
    result = _batch(url, "--kg", "20", "--format", "csv", *args)
    assert result.exit_code == 0, result.stderr
    return list(csv.DictReader(io.StringIO(result.stdout)))


def test_twenty_kg_sheet_scales_groups_and_checks_the_total(seeded_library_url: str) -> None:
    result = _batch(seeded_library_url, "--kg", "20")
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert "Batch 20.000 kg" in out
    # phases in process order, each with the step that first handles it
    order = [out.index(f"Phase {p} (step") for p in "ABCD"]
    assert order == sorted(order)
    assert "step 3: A+B at 75 °C, homogeniser 3000 rpm for 5 min; add B to A" in out
    assert "14,460" in out                      # 72.3 % of 20 kg on the 1 g balance
    assert "within the rounding bound" in out
    assert "Weighed by:" in out and "Checked by:" in out
    assert out.count("neutralised in the") == 2  # the stearic acid and the amine lines
    assert "not a safety assessment" in out


def test_csv_rows_carry_masses_rounding_balances_and_line_details(
        seeded_library_url: str) -> None:
    rows = {r["inci"]: r for r in _csv_rows(seeded_library_url)}
    assert float(rows["Aqua"]["target_g"]) == pytest.approx(14460.0)
    assert float(rows["Aqua"]["balance_resolution_g"]) == 1.0
    assert float(rows["Ethylhexylglycerin"]["weigh_g"]) == pytest.approx(10.0)
    assert float(rows["Ethylhexylglycerin"]["balance_resolution_g"]) == 0.01
    assert rows["Paraffinum Liquidum"]["supplier"] == "Northfield Oils"
    assert rows["Paraffinum Liquidum"]["lot"] == "NF-2291"
    assert rows["Aqua"]["note"] == "deionised"
    assert "TEA-Stearate" in rows["Triethanolamine"]["neutralised"]
    assert [r["phase"] for r in _csv_rows(seeded_library_url)][:3] == ["A", "A", "B"]


def test_odd_batch_rounds_each_line_and_the_total_stays_in_bound(
        seeded_library_url: str) -> None:
    rows = _csv_rows(seeded_library_url, "--kg", "1.337")
    # 1.337 kg: glycerin 4 % = 53.48 g (0.01 g balance), water 72.3 % = 966.651 g -> 966.7 g
    by = {r["inci"]: r for r in rows}
    assert float(by["Glycerin"]["weigh_g"]) == pytest.approx(53.48)
    assert float(by["Aqua"]["weigh_g"]) == pytest.approx(966.7)
    assert float(by["Aqua"]["rounding_g"]) == pytest.approx(966.7 - 966.651, abs=1e-6)
    total = sum(float(r["weigh_g"]) for r in rows)
    bound = sum(float(r["balance_resolution_g"]) / 2 for r in rows)
    assert abs(total - 1337.0) <= bound


def test_a_line_beyond_every_balance_is_weighed_in_portions(seeded_library_url: str) -> None:
    # 100 kg: water 72.3 % = 72,300 g, above the 60 kg of the largest default balance
    rows = {r["inci"]: r for r in _csv_rows(seeded_library_url, "--kg", "100")}
    assert rows["Aqua"]["portions"] == "2" and float(rows["Aqua"]["weigh_g"]) == 72300.0
    assert rows["Glycerin"]["portions"] == "1"
    page = unescape(_batch(seeded_library_url, "--kg", "100", "--format", "html").stdout)
    assert "in 2 portions, each at most 60,000 g (the balance's capacity)" in page


def test_evaporation_allowance_is_extra_water_in_the_water_phase(
        seeded_library_url: str) -> None:
    rows = _csv_rows(seeded_library_url, "--evaporation-percent", "2")
    allowance = [r for r in rows if r["line"] == "allowance"]
    assert len(allowance) == 1 and allowance[0]["inci"] == "Aqua"
    assert allowance[0]["phase"] == "A"
    assert float(allowance[0]["weigh_g"]) == pytest.approx(400.0)  # 2 % of 20 kg


def test_prices_cost_the_batch_and_keep_their_history(seeded_library_url: str) -> None:
    url = seeded_library_url
    for args in (["Paraffinum Liquidum", "--per-kg", "3.10", "--currency", "EUR",
                  "--supplier", "Northfield Oils", "--date", "2026-01-15"],
                 ["Paraffinum Liquidum", "--per-kg", "2.80", "--currency", "eur",
                  "--supplier", "Northfield Oils", "--date", "2026-11-02"],
                 ["Paraffinum Liquidum", "--per-kg", "1.00", "--currency", "EUR",
                  "--supplier", "Other Trading", "--date", "2026-11-20"],
                 ["Aqua", "--per-kg", "0.02", "--currency", "EUR", "--supplier", "house",
                  "--date", "2026-10-01"]):
        result = run_formdb(["--db", url, "price", "add", *args])
        assert result.exit_code == 0, result.stderr
    history = run_formdb(["--db", url, "price", "list", "Paraffinum Liquidum"]).stdout
    assert history.count("Paraffinum Liquidum:") == 3
    assert history.index("3.10 EUR") < history.index("2.80 EUR")
    rows = {r["inci"]: r for r in _csv_rows(url)}
    # the line names Northfield Oils: its latest quote (2.80), not the cheaper other supplier
    assert float(rows["Paraffinum Liquidum"]["price_per_kg"]) == pytest.approx(2.80)
    assert float(rows["Paraffinum Liquidum"]["cost"]) == pytest.approx(2.4 * 2.80)
    text = _batch(url, "--kg", "20").stdout
    # 2.4 kg x 2.80 + 14.46 kg x 0.02 = 6.72 + 0.2892 = 7.0092 EUR; per kg / 20
    assert "Cost: 7.01 EUR a batch, 0.35 EUR/kg" in text
    # 2.4 + 14.46 = 16.86 kg of the 20 kg carry a price: the cost says it is incomplete
    assert "prices cover only 16,860.00 of the 20,000.00 g weighed" in " ".join(text.split())
    assert "No price in the library for: Glycerin" in text


def test_xlsx_and_html_are_written_whole(seeded_library_url: str, tmp_path: Path) -> None:
    xlsx = tmp_path / "sheet.xlsx"
    result = _batch(seeded_library_url, "--kg", "20", "--out", str(xlsx))
    assert result.exit_code == 0, result.stderr
    sheet = load_workbook(xlsx).active
    values = [c for row in sheet.iter_rows(values_only=True) for c in row if c is not None]
    assert "Paraffinum Liquidum" in values and 14460 in values
    html = tmp_path / "sheet.html"
    assert _batch(seeded_library_url, "--out", str(html)).exit_code == 0  # batch_kg of file
    page = html.read_text(encoding="utf-8")
    assert "Weighed by:" in page and "Batch 20.000 kg" in page
    assert not [p.name for p in tmp_path.iterdir() if p.name.endswith(".part")]


def test_html_escapes_the_formulas_text(seeded_library_url: str, tmp_path: Path) -> None:
    hostile = tmp_path / "hostile.toml"
    hostile.write_text(CREAM.read_text(encoding="utf-8").replace(
        'note = "deionised"', 'note = "<script>alert(1)</script>"'), encoding="utf-8")
    result = run_formdb(["--db", seeded_library_url, "batch", str(hostile), "--format", "html"])
    assert result.exit_code == 0, result.stderr
    assert "<script>" not in result.stdout and "&lt;script&gt;" in result.stdout


@pytest.mark.parametrize(("args", "message"), [
    (["--kg", "0"], "--kg 0: the batch must be above 0"),
    (["--kg", "nan"], "'nan' is not a finite number"),
    (["--evaporation-percent", "50"], "--evaporation-percent 50"),
    (["--balance", "0.01"], "--balance '0.01': write RESOLUTION:CAPACITY"),
    (["--balance", "0:10"], "balance resolution must be at least 1e-06 g"),
    (["--format", "xlsx"], "--format xlsx needs --out"),
])
def test_bad_options_are_one_line_and_exit_2(seeded_library_url: str, args: list[str],
                                             message: str) -> None:
    before = library_state(seeded_library_url)
    result = _batch(seeded_library_url, *args)
    assert result.exit_code == 2
    assert result.stderr.count("Error:") == 1 and message in result.stderr
    assert "Traceback" not in result.stderr
    assert library_state(seeded_library_url) == before


def test_an_unwritable_out_leaves_no_file(seeded_library_url: str, tmp_path: Path) -> None:
    out = tmp_path / "missing-folder" / "sheet.html"
    result = _batch(seeded_library_url, "--kg", "20", "--out", str(out))
    assert result.exit_code == 2 and "cannot be written" in result.stderr
    assert not out.parent.exists()


def test_an_existing_sheet_is_kept_and_a_name_must_match_its_format(
        seeded_library_url: str, tmp_path: Path) -> None:
    url = seeded_library_url
    sheet = tmp_path / "sheet.csv"
    sheet.write_text("yesterday's sheet", encoding="utf-8")
    kept = _batch(url, "--kg", "20", "--out", str(sheet))
    assert kept.exit_code == 2 and "already exists" in kept.stderr and "--force" in kept.stderr
    assert sheet.read_text(encoding="utf-8") == "yesterday's sheet"
    assert _batch(url, "--kg", "20", "--out", str(sheet), "--force").exit_code == 0
    assert sheet.read_text(encoding="utf-8").startswith("phase,line,inci")
    # a name promising another format is refused, not filled with text
    for args, message in ((["--out", str(tmp_path / "sheet.pdf")], "not .pdf"),
                          (["--out", str(tmp_path / "s.xlsx"), "--format", "csv"],
                           "the name says xlsx, but --format is csv")):
        before = library_state(url)
        result = _batch(url, "--kg", "20", *args)
        assert result.exit_code == 2 and message in result.stderr, result.stderr
        assert result.stderr.count("Error:") == 1 and "Traceback" not in result.stderr
        assert library_state(url) == before
    assert not (tmp_path / "sheet.pdf").exists() and not (tmp_path / "s.xlsx").exists()
    assert _batch(url, "--kg", "20", "--out", str(tmp_path / "sheet.txt")).exit_code == 0
    assert (tmp_path / "sheet.txt").read_text(encoding="utf-8").startswith("Weigh sheet:")


@pytest.mark.parametrize(("args", "message"), [
    (["Aqua", "--per-kg", "-1", "--currency", "EUR", "--supplier", "x"], "--per-kg -1"),
    (["Aqua", "--per-kg", "1", "--currency", "EURO", "--supplier", "x"], "--currency 'EURO'"),
    (["Aqua", "--per-kg", "1", "--currency", "EUR", "--supplier", " "], "--supplier"),
    (["Aqua", "--per-kg", "1", "--currency", "EUR", "--supplier", "x", "--date",
      "2999-01-01"], "in the future"),
    (["Unobtainium", "--per-kg", "1", "--currency", "EUR", "--supplier", "x"],
     "no ingredient named 'Unobtainium'"),
])
def test_bad_prices_are_refused_and_nothing_is_written(seeded_library_url: str,
                                                       args: list[str], message: str) -> None:
    before = library_state(seeded_library_url)
    result = run_formdb(["--db", seeded_library_url, "price", "add", *args])
    assert result.exit_code == 2 and message in result.stderr
    assert result.stderr.count("Error:") == 1
    assert library_state(seeded_library_url) == before


def test_a_stored_formula_gets_its_sheet_too(seeded_library_url: str) -> None:
    url = seeded_library_url
    assert run_formdb(["--db", url, "formula", "import", str(CREAM)]).exit_code == 0
    stored = run_formdb(["--db", url, "batch", "--stored", "Larkspur bench cream, draft 4",
                         "--format", "csv"])
    assert stored.exit_code == 0, stored.stderr
    from_file = _batch(url, "--format", "csv")  # the file's own batch_kg, 20
    assert stored.stdout == from_file.stdout
    neither = run_formdb(["--db", url, "batch"])
    assert neither.exit_code == 2 and "give a formula FILE or --stored NAME" in neither.stderr
    unknown = run_formdb(["--db", url, "batch", "--stored", "No such cream"])
    assert unknown.exit_code == 2 and "no stored formula named" in unknown.stderr
