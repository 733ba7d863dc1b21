"""The bench part of the demo: a 20 kg weigh sheet of the hand cream, and the light lotion's
screening series fitted, stored and used by the next check (the lab, its prices and its
observations are invented for the demo; the arithmetic is checked here by hand)."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from formdb.cli.main import cli
from formdb.resources import seed_data_dir
from formdb.schemas.vocab import EmulsionType
from formdb.services.bench_work.demo import DEMO_PEAK_HLB, run_bench_demo
from formdb.services.checking.demo import run_demo
from formdb.store.library import Library


@pytest.fixture(scope="module")
def bench(tmp_path_factory: pytest.TempPathFactory):
    demo = run_demo(keep=tmp_path_factory.mktemp("bench") / "demo.sqlite", user="test")
    with Library.open(str(demo.library)) as library:
        yield run_bench_demo(library, seed_data_dir() / "demo", user="test")


def test_hand_cream_weigh_sheet_for_20_kg(bench) -> None:
    sheet = bench.sheet
    assert sheet.batch_g == 20000.0
    assert [g.phase for g in sheet.groups] == ["A", "B", "C"]
    water = sheet.groups[0].lines[0]
    assert water.weighed_g == 14920.0  # 74.6 % of 20 kg
    assert sheet.total_within_bound
    # 2 % evaporation water on top: 20 kg + 400 g planned
    assert sheet.planned_total_g == pytest.approx(20400.0)
    # mineral oil at its supplier's latest quote (2.35 EUR/kg): 1.6 kg -> 3.76 EUR
    oil = next(w for w in sheet.lines if w.inci == "Paraffinum Liquidum")
    assert oil.price is not None and oil.price.price_per_kg == 2.35
    assert oil.cost == pytest.approx(3.76)


def test_screening_series_gives_the_lotion_a_measured_required_hlb(bench) -> None:
    assert len(bench.series.blends) == 9
    assert abs(bench.fit.required_hlb - DEMO_PEAK_HLB) <= bench.fit.uncertainty
    before, after = bench.before.facts, bench.after.facts
    assert before.required_hlb_ow.measured_source is None
    assert after.required_hlb_ow.measured_source is not None
    assert after.required_hlb == pytest.approx(bench.fit.required_hlb)
    assert any("measured in-house" in note for note in after.notes)
    # the measurement replaces the oils' library values: no verdict rests on them now, so EVD01
    # names them no more (FormulaFacts.values_read)
    assert before.working_type == after.working_type == EmulsionType.OW
    assert {v.property for v in before.values_read} >= {"required_hlb_ow"}
    assert not {v.property for v in after.values_read} & {"required_hlb_ow", "required_hlb_wo"}


@pytest.mark.slow  # seconds per run: left out of the fast lane
def test_demo_command_shows_the_bench_part(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["demo", "--keep", str(tmp_path / "lib.sqlite"),
                                      "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    assert "Weigh sheet: Larkspur LB-110 everyday hand cream, draft 4" in result.output
    assert "Stored in the library as an in-house measurement" in result.output
    assert "graded measured), used by the check" in result.output
    assert (tmp_path / "out" / "weigh-sheet-LB-110-20kg.html").exists()
