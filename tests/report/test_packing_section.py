"""The report's packing verdict follows PAK01: none where estimated densities leave the fraction
on both sides of a limit (limits: pi/sqrt(18), Hales, Ann. Math. 162 (2005) 1065; random close
packing 0.64, Scott & Kilgour, J. Phys. D 2 (1969) 863)."""

from __future__ import annotations

from formdb.report.blocks import Lines
from formdb.report.sections import packing_section
from formdb.schemas.vocab import Role
from tests.report.factory import result

# an oil without a library density: estimated at the oil phase's mean, and for the range anywhere
# in 0.75-1.0 g/mL (science.density.USUAL_DENSITY for an oil, rule of thumb)
UNKNOWN = {"Unknown Seed Oil": {"roles": {Role.OIL}, "props": {"solubility": "oil"}}}


def _lines(lines: list[tuple[str, float]]) -> dict[str, tuple[str, str]]:
    facts = result(lines=lines, extra=UNKNOWN, intended_type="O/W").facts
    (block,) = packing_section(facts).blocks
    assert isinstance(block, Lines)
    return {ln.label: (ln.value, ln.flag) for ln in block.items}


def test_a_range_across_close_packing_gives_no_verdict() -> None:
    # 40 g at 0.85 + 30 g unknown (at the mean 0.85: 82.35 mL) over 25 g water at 0.997 and 5 g
    # polysorbate 80 at 1.07 (29.75 mL): phi 0.735; with the unknown at 1.0 77.06/106.81 =
    # 0.721, at 0.75 87.06/116.81 = 0.745
    shown = _lines([("Isopropyl Myristate", 40.0), ("Unknown Seed Oil", 30.0), ("Water", 25.0),
                    ("Polysorbate 80", 5.0)])
    assert shown["Range of φ"][0].startswith("0.721 to 0.745")
    assert shown["Verdict"] == ("none: the densities estimated leave the fraction on both sides "
                                "of a packing limit; add them to the library", "warn")


def test_known_densities_keep_their_verdict_and_no_range() -> None:
    shown = _lines([("Isopropyl Myristate", 70.0), ("Water", 25.0), ("Polysorbate 80", 5.0)])
    assert "Range of φ" not in shown
    assert shown["Verdict"][1] == "warn" and "random close packing" in shown["Verdict"][0]
