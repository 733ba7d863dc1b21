"""``formdb blend --search``: only compatible pairs within their use ranges, in the stated order.

Candidates are weighed-in emulsifiers on Griffin's scale (no soaps, gums, proteins or ionic
surfactants: Griffin 1954 is for non-ionics; Davies 1957 for ionics), on the right side for the
type (W/O: both lipophilic). The ranking rules (proportion, spread) are rules of thumb. The unit
cases use hand-made records, not seed data.
"""

from __future__ import annotations

import json
import re
from itertools import combinations
from pathlib import Path

import pytest

from formdb.schemas.ingredient import IngredientProperties, IngredientRecord
from formdb.schemas.reference import Incompatibility
from formdb.schemas.vocab import Role, Severity
from formdb.services.checking.blending import library_emulsifiers, rank_pairs
from formdb.store import queries
from formdb.store.db import open_library, unit_of_work
from tests.helpers import run_formdb
from tests.report.factory import formula_toml


def _library(url: str) -> tuple[dict[str, IngredientRecord], tuple[Incompatibility, ...]]:
    engine = open_library(url)
    try:
        with unit_of_work(engine) as session:
            records = {r.inci_name: r for r in library_emulsifiers(session)}
            rows = queries.load_reference_data(session).incompatibilities
    finally:
        engine.dispose()
    return records, rows


def _clash(a: IngredientRecord, b: IngredientRecord, rows: tuple[Incompatibility, ...]) -> bool:
    """An independent reading of the incompatibility table: class (or name) a with class b."""
    def marks(r: IngredientRecord) -> set[str]:
        return {c.casefold() for c in r.classes} | {r.inci_name.casefold()}
    ma, mb = marks(a), marks(b)
    return any((x in ma and y in mb) or (x in mb and y in ma)
               for x, y in ((r.class_a.casefold(), r.class_b.casefold()) for r in rows))


def _search(url: str, *args: str) -> dict:
    result = run_formdb(["--db", url, "blend", "--search", *args, "--format", "json"])
    assert result.exit_code == 0, result.stderr
    return json.loads(result.stdout)


@pytest.mark.parametrize("target", ["6", "10.5", "14"])
def test_search_returns_only_compatible_pairs_in_range(seeded_library_url: str,
                                                      target: str) -> None:
    records, rows = _library(seeded_library_url)
    data = _search(seeded_library_url, "--target", target, "--total", "5", "--top", "100")
    assert data["candidates"], "some pair reaches every target tested"
    for pair in data["candidates"]:
        low, high = records[pair["low"]["inci"]], records[pair["high"]["inci"]]
        assert not _clash(low, high, rows), (low.inci_name, high.inci_name)
        assert low.p.hlb < float(target) < high.p.hlb
        for member, record in ((pair["low"], low), (pair["high"], high)):
            if record.p.use_min_percent is not None:
                assert member["percent"] >= record.p.use_min_percent - 1e-6
            if record.p.use_max_percent is not None:
                assert member["percent"] <= record.p.use_max_percent + 1e-6
        blend = pair["low"]["fraction"] * low.p.hlb + pair["high"]["fraction"] * high.p.hlb
        assert blend == pytest.approx(float(target), abs=2e-2)


def test_soaps_gums_proteins_and_ionics_are_not_candidates(seeded_library_url: str) -> None:
    data = _search(seeded_library_url, "--target", "11", "--total", "5", "--top", "100")
    names = {m["inci"] for p in data["candidates"] for m in (p["low"], p["high"])}
    never = {"TEA-Stearate", "Sodium Stearate", "Potassium Oleate", "Acacia Senegal Gum",
             "Gelatin", "Sodium Lauryl Sulfate", "Lecithin"}
    assert names and not names & never
    left = " ".join(data["excluded_kinds"])
    assert "TEA-Stearate: a soap" in left and "Gelatin: a gum or protein" in left
    assert "Sodium Lauryl Sulfate: an ionic surfactant" in left
    # Griffin's scale is for nonionics (Griffin 1954): lecithin's quoted HLB (4-9 by source) is not
    assert "Lecithin: an amphoteric (zwitterionic) surfactant" in left


def test_a_wo_target_gets_only_lipophilic_pairs(seeded_library_url: str) -> None:
    records, _ = _library(seeded_library_url)
    data = _search(seeded_library_url, "--target", "5", "--top", "100")
    assert data["emulsion_type"] == "W/O" and data["candidates"]
    for pair in data["candidates"]:
        for member in (pair["low"], pair["high"]):
            assert records[member["inci"]].p.solubility.value == "oil", member["inci"]
        assert "both lipophilic" in " ".join(pair["reasons"])


def test_an_ow_search_has_a_hydrophilic_higher_member(seeded_library_url: str) -> None:
    records, _ = _library(seeded_library_url)
    data = _search(seeded_library_url, "--target", "7", "--type", "O/W", "--top", "100")
    assert data["emulsion_type"] == "O/W" and data["candidates"]
    for pair in data["candidates"]:
        assert records[pair["high"]["inci"]].p.solubility.value != "oil"


def test_each_rank_shows_its_reasons(seeded_library_url: str) -> None:
    result = run_formdb(["--db", seeded_library_url, "blend", "--search", "--target", "11"])
    assert "Why each ranks there:" in result.stdout
    assert "1. a lipophilic with a hydrophilic member; proportion" in result.stdout


def test_search_for_a_formula_uses_its_required_hlb(seeded_library_url: str,
                                                    tmp_path: Path) -> None:
    path = tmp_path / "lotion.toml"
    path.write_text(formula_toml("Larkspur LB-960", [
        ("Aqua", 80.0), ("Isopropyl Myristate", 16.0), ("Polysorbate 80", 2.0),
        ("Sorbitan Oleate", 2.0)], intended_type="O/W"), encoding="utf-8")
    checked = json.loads(run_formdb(["--db", seeded_library_url, "check", str(path),
                                     "--format", "json"]).stdout)
    data = _search(seeded_library_url, str(path))
    assert data["target"] == pytest.approx(checked["required_hlb"], abs=1e-2)
    assert data["total_percent"] == pytest.approx(4.0)  # the formula's own emulsifier total
    assert len(data["candidates"]) <= 10


def test_text_output_prints_at_most_ten_pairs(seeded_library_url: str) -> None:
    result = run_formdb(["--db", seeded_library_url, "blend", "--search", "--target", "11"])
    assert result.exit_code == 0, result.stderr
    assert "The best 10:" in result.stdout and "Ranked:" in result.stdout
    table = result.stdout.split("The best 10:")[1].split("Why each ranks there:")[0]
    ranks = [int(m) for m in re.findall(r"^\s*(\d+)\s{2,}", table, flags=re.MULTILINE)]
    assert ranks == list(range(1, 11))


def test_search_needs_a_target_or_a_file(seeded_library_url: str) -> None:
    result = run_formdb(["--db", seeded_library_url, "blend", "--search"])
    assert result.exit_code == 2 and "--target" in result.stderr


# ----- the ranking, on hand-made records ------------------------------------------------------

def _record(number: int, name: str, hlb: float, solubility: str, classes: tuple[str, ...] = (),
            use: tuple[float | None, float | None] = (0.5, 5.0)) -> IngredientRecord:
    props = {"hlb": hlb, "solubility": solubility, "ionic_character": "nonionic",
             "use_min_percent": use[0], "use_max_percent": use[1]}
    return IngredientRecord(id=number, inci_name=name, roles=frozenset({Role.EMULSIFIER}),
                            classes=frozenset(classes),
                            properties=IngredientProperties.model_validate(props))


ROW = Incompatibility(key="t", class_a="sulfate anionic", class_b="protein colloid",
                      severity=Severity.WARNING, reason="test", advice="test", source="test")


def test_incompatible_classes_are_excluded() -> None:
    protein = _record(1, "Protein E", 9.8, "water", ("protein colloid",))
    sulfate = _record(2, "Sulfate E", 40.0, "water", ("sulfate anionic",))
    ethoxylate = _record(3, "Ethoxylate E", 30.0, "water")
    ranked, tally = rank_pairs([protein, sulfate, ethoxylate], 20.0, 5.0, (ROW,))
    names = [(c.low.inci, c.high.inci) for c in ranked]
    assert ("Protein E", "Sulfate E") not in names
    assert ("Protein E", "Ethoxylate E") in names
    assert tally.incompatible == 1


def test_use_range_excludes_a_pair() -> None:
    low = _record(1, "Low E", 4.0, "oil", use=(0.5, 1.0))  # would need 2.5 % at 5 % total
    high = _record(2, "High E", 16.0, "water")
    ranked, tally = rank_pairs([low, high], 10.0, 5.0, ())
    assert ranked == [] and tally.use_range == 1
    ranked, _ = rank_pairs([low, high], 10.0, 2.0, ())  # at 2 % total it needs 1.0 %
    assert len(ranked) == 1 and ranked[0].low.percent == pytest.approx(1.0)


def test_ranking_prefers_lipophilic_with_hydrophilic_then_closeness() -> None:
    oil_a = _record(1, "Oil A", 8.0, "oil")
    water_b = _record(2, "Water B", 12.0, "water")
    water_c = _record(3, "Water C", 9.0, "water")  # with Water B: closer, but both hydrophilic
    water_d = _record(4, "Water D", 15.0, "water")
    ranked, _ = rank_pairs([oil_a, water_b, water_c, water_d], 10.0, 5.0, ())
    order = [(c.low.inci, c.high.inci) for c in ranked]
    assert order[0] == ("Oil A", "Water B")  # complementary, max distance 2
    assert order[1] == ("Oil A", "Water D")  # complementary, max distance 5
    assert ("Water C", "Water B") in order[2:]
    assert all(c.complementary for c in ranked[:2])


def test_every_straddling_pair_is_considered_once() -> None:
    records = [_record(i, f"E{i}", h, "oil" if h < 10 else "water", use=(None, None))
               for i, h in enumerate([2.0, 5.0, 9.0, 12.0, 16.0])]
    ranked, tally = rank_pairs(records, 10.0, 5.0, ())
    straddling = [(a, b) for a, b in combinations(records, 2)
                  if min(a.p.hlb, b.p.hlb) < 10.0 < max(a.p.hlb, b.p.hlb)]
    assert tally.considered == len(straddling) == len(ranked) == 6


def test_a_sensible_proportion_ranks_above_a_lopsided_one() -> None:
    # both complementary; Oil P with Water Q is 50:50, Oil R with Water S 90:10 (rule of thumb:
    # a minor member below a fifth of the blend is hard to weigh), though R-S is closer
    oil_p, water_q = _record(1, "Oil P", 6.0, "oil"), _record(2, "Water Q", 14.0, "water")
    oil_r, water_s = _record(3, "Oil R", 9.6, "oil"), _record(4, "Water S", 13.6, "water")
    ranked, _ = rank_pairs([oil_p, water_q, oil_r, water_s], 10.0, 5.0, ())
    by_pair = {(c.low.inci, c.high.inci): c for c in ranked}
    assert by_pair[("Oil R", "Water S")].proportion_ok is False
    order = [(c.low.inci, c.high.inci) for c in ranked]
    assert order.index(("Oil P", "Water Q")) < order.index(("Oil R", "Water S"))
    assert "minor member below 20%" in " ".join(by_pair[("Oil R", "Water S")].reasons)


def test_a_pair_that_clashes_with_the_formula_ranks_last() -> None:
    low = _record(1, "Low F", 5.0, "oil")
    protein = _record(2, "Protein F", 14.0, "water", ("protein colloid",))
    high = _record(3, "High F", 15.0, "water")
    sulfate = _record(9, "Sulfate In Formula", 40.0, "water", ("sulfate anionic",))
    ranked, _ = rank_pairs([low, protein, high], 10.0, 5.0, (ROW,), formula=[sulfate])
    assert [c.high.inci for c in ranked] == ["High F", "Protein F"]
    assert ranked[1].clashes and "clashes with the formula" in ranked[1].reasons[0]
    assert ranked[0].reasons[0] == "no clash with the formula's ingredients"


def test_a_wo_side_filter_drops_hydrophilic_partners() -> None:
    from formdb.schemas.vocab import EmulsionType
    low, oil_high = _record(1, "Low W", 2.0, "oil"), _record(2, "Oil W", 8.0, "oil")
    water_high = _record(3, "Water W", 15.0, "water")
    ranked, _ = rank_pairs([low, oil_high, water_high], 5.0, 5.0, (), EmulsionType.WO)
    assert [(c.low.inci, c.high.inci) for c in ranked] == [("Low W", "Oil W")]
