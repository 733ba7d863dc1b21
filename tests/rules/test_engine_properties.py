"""Any mix of fixture ingredients checks without error and gives numbers in their ranges."""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from formdb.rules.engine import check_resolved
from formdb.rules.profiles import load_profile
from tests.rules.library import formula, ingredients, reference

NAMES = sorted({record.inci_name for record in ingredients().values()})
PROFILE = load_profile("strict")

lines = st.lists(st.tuples(st.sampled_from(NAMES),
                           st.floats(min_value=0.001, max_value=60, allow_nan=False)),
                 min_size=1, max_size=9, unique_by=lambda line: line[0])


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(lines=lines, kind=st.sampled_from([None, "O/W", "W/O"]),
       ph=st.one_of(st.none(), st.floats(min_value=2, max_value=10)),
       category=st.sampled_from(["leave-on", "rinse-off"]))
def test_any_formula_checks(lines, kind, ph, category) -> None:  # type: ignore[no-untyped-def]
    mini = formula("random", lines, intended_type=kind, ph=ph, category=category)
    result = check_resolved(mini, reference(), PROFILE)
    facts = result.facts
    assert abs(facts.percent_total - sum(p for _, p in lines)) < 1e-9
    if facts.dispersed_fraction is not None:
        assert 0.0 <= facts.dispersed_fraction <= 1.0
    for soap in facts.soaps:
        assert soap.soap_percent > 0 and soap.acid_left_percent >= 0
    mass = facts.phases.oil_percent + facts.phases.water_percent + facts.phases.other_percent
    assert abs(mass - facts.percent_total) < 1e-6  # neutralisation conserves mass
    if facts.blend_hlb is not None:
        hlbs = [e.hlb for e in facts.emulsifiers if e.hlb is not None]
        assert min(hlbs) - 1e-9 <= facts.blend_hlb <= max(hlbs) + 1e-9
    keys = [(-f.severity.rank, f.rule) for f in result.findings]
    assert keys == sorted(keys)
    assert all(f.advice for f in result.findings)
    result.to_contract_json()
