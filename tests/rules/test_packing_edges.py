"""PAK01 at its limits: a fraction on a limit to floating point's last digit is not above it.

The fraction is set on the facts (a formula whose fixture densities give exactly 0.64 or
pi/sqrt(18) cannot be written: water's 0.99705 g/mL makes every fraction irrational-looking), so
the rule alone is under test; the limits are Scott & Kilgour's random close packing 0.64 (J.
Phys. D 2 (1969) 863) and Hales' pi/sqrt(18) (Ann. Math. 162 (2005) 1065).
"""

from __future__ import annotations

from formdb.facts.compute import compute_facts
from formdb.rules.packing import Packing
from formdb.science.packing import CLOSE_PACKING
from tests.rules.library import formula, reference

OPTIONS = {"random_close_info": True, "random_close": 0.64}


def _findings(phi: float) -> list[str]:
    mini = formula("edge", [["Paraffinum Liquidum", 66.0], ["Water", 29.0],
                            ["Polysorbate 80", 5.0]], intended_type="O/W")
    facts = compute_facts(mini, reference()).model_copy(update={"dispersed_fraction": phi})
    return [f.message for f in Packing().check(mini, facts, reference(), OPTIONS)]


def test_on_random_close_packing_is_not_above_it() -> None:
    assert _findings(0.6400000000000001) == []  # 0.64 as floating point can make it
    assert any("random close packing" in m for m in _findings(0.6401))


def test_on_close_packing_is_not_above_it() -> None:
    on_limit = _findings(CLOSE_PACKING + 1e-12)
    assert on_limit and all("random close packing" in m for m in on_limit)
    assert any("0.7405" in m for m in _findings(CLOSE_PACKING + 1e-4))
