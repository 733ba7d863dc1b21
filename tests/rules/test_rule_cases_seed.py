"""The rule cases against the shipped seed library, not only the fixture library.

Every case of tests/rules/cases/ whose ingredients are all in the bundled seed runs again with
the seed's records and reference data (the same harness, the same expectations), so the seed and
the rules cannot drift apart. A case that needs a fixture-only ingredient, or a value the seed
does not hold on purpose, says so with ``seed = "<why not>"`` and is skipped with that reason.
Wangpradit et al., OCL 29 (2022) 29 F1 is reproduced on the seed in its own test below, with the
Hu oil added as a user ingredient at the value the paper gives.
"""

from __future__ import annotations

from typing import Any

import pytest

from formdb import api
from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile, RuleSettings
from formdb.schemas.formula import FormulaFile, ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import name_key
from formdb.schemas.reference import ReferenceData
from formdb.store import queries
from formdb.store.db import make_engine, unit_of_work
from tests.rules import test_rule_cases as harness

SEED_CASES = harness._params()
# cases whose expectations rest on a fixture-only data state (the fixture's evidence kinds,
# incompatibility keys, label thresholds, exposure rows); their rules' owners keep them in the
# case files, so the reason is kept here
FIXTURE_ONLY = {
    "EVD01": "the fixture records evidence kinds per value; the seed's differ on purpose",
    "ION01": "the fixture's incompatibility rows have their own keys",
    "LIM01": "the fixture's limit rows are a small test set",
    "ALG01": "the fixture's label thresholds and constituents are a test set",
    "MOS01-hair-conditioner-from-grams-per-day-and-body-weight":
        "the fixture's exposure row has grams per day only; the seed's has the table value",
}


@pytest.fixture(scope="module")
def seed_library(tmp_path_factory: pytest.TempPathFactory) -> tuple[dict[str, Any], ReferenceData]:
    path = tmp_path_factory.mktemp("seed-cases") / "seed.sqlite"
    library = api.create_library(str(path), seed=True)
    library.close()
    engine = make_engine(str(path))
    try:
        names = {line[0] for _, data in harness._case_files() for case in data["case"]
                 for line in case["lines"]}
        with unit_of_work(engine) as session:
            found = queries.find_ingredients(session, names)
            reference = queries.load_reference_data(session)
    finally:
        engine.dispose()
    return found, reference


def _resolved(case: dict[str, Any], found: dict[str, Any]) -> ResolvedFormula | None:
    lines = case["lines"]
    if any(name_key(line[0]) not in found for line in lines):
        return None
    body = {"category": "leave-on", **case.get("formula", {})}
    file = FormulaFile(name=case["name"], ingredients=[
        {"inci": line[0], "percent": line[1]} | ({"purpose": line[2]} if len(line) > 2 else {})
        for line in lines], **body)
    resolved = tuple(ResolvedLine(line_no=i, given_name=ln.inci, percent=ln.percent,
                                  phase=ln.phase, ingredient=found[name_key(ln.inci)],
                                  purpose=ln.purpose)
                     for i, ln in enumerate(file.ingredients, start=1))
    return ResolvedFormula(source=f"seed-case:{case['name']}", formula=file, lines=resolved,
                           content_hash=case["name"])


@pytest.mark.parametrize(("code", "case"), SEED_CASES)
def test_rule_case_on_the_seed(code: str, case: dict[str, Any],
                               seed_library: tuple[dict[str, Any], ReferenceData],
                               monkeypatch: pytest.MonkeyPatch) -> None:
    if "seed" in case:
        pytest.skip(f"fixture library only: {case['seed']}")
    why = FIXTURE_ONLY.get(f"{code}-{case['name']}") or FIXTURE_ONLY.get(code)
    if why:
        pytest.skip(f"fixture library only: {why}")
    found, reference = seed_library
    mini = _resolved(case, found)
    if mini is None:
        missing = [n for n, _ in case["lines"] if name_key(n) not in found]
        pytest.skip(f"not in the seed: {', '.join(missing)}")

    def run(code_: str, case_: dict[str, Any]) -> Any:
        options = case_.get("options", {})
        rules = {code_: RuleSettings(options=options)} if options else {}
        profile = Profile(name=f"seed case {code_}", version="0", select=(code_,), rules=rules)
        return check_resolved(mini, reference, profile)

    def seed_name(name: str) -> str:  # the fixture says Water where the seed's INCI is Aqua
        record = found.get(name_key(name))
        return record.inci_name if record is not None else name

    expected = {**case, "findings": [
        {**f, "ingredients": [seed_name(n) for n in f.get("ingredients", [])]}
        for f in case.get("findings", [])]}
    monkeypatch.setattr(harness, "run_case", run)
    harness.test_rule_case(code, expected)


def test_ocl_2022_f1_on_the_shipped_seed(tmp_path: Any) -> None:
    """Wangpradit et al., OCL 29 (2022) 29, doi:10.1051/ocl/2022011, formulation F1 (read):
    Table 4 oil phase (beeswax 1.5 rHLB 12, isopropyl myristate 7.5 rHLB 11.5, glyceryl
    monostearate 7.5 at its HLB 3.8, stearic acid 12.5 rHLB 15, Hu oil 5 rHLB 6.2): required HLB
    10.33; Table 5: polysorbate 80 1.64 % + sorbitan stearate 1.36 %: blend HLB 10.33. The Hu oil
    is not in the seed; a user adds it at the value the paper measured."""
    table = tmp_path / "hu.csv"
    table.write_text(
        "inci_name,roles,required_hlb_ow,required_hlb_ow_source,solubility,solubility_source\n"
        "Amesiodendron Chinense Seed Oil,oil,6.2,wangpradit-2022-ocl,oil,rule-of-thumb\n",
        encoding="utf-8")
    library = api.create_library(str(tmp_path / "lib.sqlite"), seed=True)
    try:
        api.import_ingredients(library, table)
        result = api.check(library, """
name = "OCL 2022 F1"
category = "leave-on"
intended_type = "O/W"
[[ingredients]]
inci = "Cera Alba"
percent = 1.5
[[ingredients]]
inci = "Isopropyl Myristate"
percent = 7.5
[[ingredients]]
inci = "Glyceryl Stearate"
percent = 7.5
[[ingredients]]
inci = "Stearic Acid"
percent = 12.5
[[ingredients]]
inci = "Amesiodendron Chinense Seed Oil"
percent = 5.0
[[ingredients]]
inci = "Polysorbate 80"
percent = 1.64
[[ingredients]]
inci = "Sorbitan Stearate"
percent = 1.36
[[ingredients]]
inci = "Aqua"
percent = 63.0
""")
    finally:
        library.close()
    facts = result.facts
    assert facts.required_hlb == pytest.approx(10.33, abs=0.005)  # Table 4
    assert facts.blend_hlb == pytest.approx(10.33, abs=0.005)  # Table 5
    assert facts.required_hlb_ow.covered_percent == pytest.approx(34.0)  # oil phase 34 %
    assert facts.blend_solution is not None and facts.blend_solution.percents is not None
    assert facts.blend_solution.percents == pytest.approx((1.64, 1.36), abs=0.005)  # Table 5
    assert not [f for f in result.findings if f.rule in ("HLB01", "TYP01", "EMU01")
                and f.severity.value != "info"]


def test_textbook_required_hlb_example_on_the_shipped_seed(tmp_path: Any) -> None:
    """The textbook worked example of a required HLB (Martin's Physical Pharmacy, recalled from
    memory, not checked against the book): mineral oil 35 g (required HLB 12 for O/W), lanolin 1 g
    (10), cetyl alcohol 1 g (15), 7 g of sorbitan oleate (4.3) and polysorbate 80 (15.0), water
    to 100 g. Required HLB (35 x 12 + 1 x 10 + 1 x 15)/37 = 12.03; the lever rule gives
    polysorbate 80 (12.03 - 4.3)/(15.0 - 4.3) = 72 % of the 7 g, 5.04 g, and sorbitan oleate
    1.96 g. Cetyl alcohol counts with the oil phase at its required HLB, not its HLB of 1."""
    library = api.create_library(str(tmp_path / "lib.sqlite"), seed=True)
    try:
        result = api.check(library, """
name = "textbook O/W lotion"
category = "leave-on"
intended_type = "O/W"
[[ingredients]]
inci = "Mineral Oil"
percent = 35.0
[[ingredients]]
inci = "Lanolin"
percent = 1.0
[[ingredients]]
inci = "Cetyl Alcohol"
percent = 1.0
[[ingredients]]
inci = "Sorbitan Oleate"
percent = 1.96
[[ingredients]]
inci = "Polysorbate 80"
percent = 5.04
[[ingredients]]
inci = "Water"
percent = 56.0
""")
    finally:
        library.close()
    facts = result.facts
    assert facts.required_hlb == pytest.approx(12.03, abs=0.005)
    assert facts.required_hlb_ow.covered_percent == pytest.approx(37.0)
    # the book's rounded 72 %: (1.96 x 4.3 + 5.04 x 15.0)/7 = 12.00, inside the band
    assert facts.blend_hlb == pytest.approx(12.00, abs=0.005)
    assert facts.blend_solution is not None and facts.blend_solution.percents is not None
    assert facts.blend_solution.percents == pytest.approx((1.96, 5.04), abs=0.02)
    assert not [f for f in result.findings if f.rule in ("HLB01", "TYP01", "EMU01")
                and f.severity.value != "info"]
