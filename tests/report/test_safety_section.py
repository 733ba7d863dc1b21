"""The margin-of-safety report names the point of departure and its study's duration.

Figures: body lotion E_product 123.20 mg/kg bw/day (SCCS/1647/22 Table 3A p. 27, secondary
copy); phenoxyethanol NOAEL 357 mg/kg bw/day, rat, oral, 13 weeks (from memory, as the seed's
record); the NoG defaults without data, 50 % dermal absorption and 50 % oral bioavailability
(from memory). By hand, 5 % in a body lotion: SED = 123.2 x 5/100 x 50/100 = 3.08 mg/kg bw/day,
PoD_sys = 357 x 50/100 = 178.5, MoS = 178.5 / 3.08 = 57.95, below 100.
"""

from __future__ import annotations

import json

import pytest

from formdb.facts import compute_facts
from formdb.report import render
from formdb.rules.safety_margin import SafetyMargin
from formdb.schemas.reference import ExposureRecord, ReferenceData, ToxicologyRecord
from formdb.schemas.result import CheckResult, ProfileRef
from formdb.schemas.vocab import Role
from tests.report.factory import resolved

EXTRA = {"Phenoxyethanol": {"roles": {Role.PRESERVATIVE},
                            "props": {"solubility": "water", "density": 1.1}}}
LOTION = ExposureRecord(product="body lotion", category="leave-on", amount_g_day=7.82,
                        amount_mg_kg_bw_day=123.20, retention_factor=1.0, exposure_g_day=7.82,
                        exposure_mg_kg_bw_day=123.20, source="sccs-nog-12-table-3a")


def _checked(duration: str | None) -> CheckResult:
    tox = ToxicologyRecord(key="pe", inci="Phenoxyethanol", pod_kind="NOAEL", pod_value=357.0,
                           route="oral", species="rat", study="oral study (drinking water)",
                           source="from-memory", duration=duration)
    reference = ReferenceData(exposure={"body lotion": LOTION},
                              toxicology={"phenoxyethanol": tox})
    formula = resolved("Larkspur strong lotion", [("Water", 90.0), ("Glycerin", 5.0),
                                                   ("Phenoxyethanol", 5.0)], EXTRA,
                       product="body lotion")
    facts = compute_facts(formula, reference)
    rule = SafetyMargin()
    findings = tuple(rule.check(formula, facts, reference,
                                {"threshold": 100.0, "missing_severity": "warning"}))
    ff = formula.formula
    return CheckResult(formula=ff.name, source=formula.source, content_hash=formula.content_hash,
                       category=ff.category, product=ff.product, intended_type=ff.intended_type,
                       ph=ff.ph, profile=ProfileRef(name="default", version="1"), facts=facts,
                       findings=findings)


def test_finding_names_point_of_departure_and_duration() -> None:
    checked = _checked("13 weeks")
    [error] = [f for f in checked.findings if f.severity.value == "error"]
    assert error.values["mos"] == pytest.approx(57.95, abs=0.01)
    assert "PoD NOAEL 357 mg/kg bw/day, rat, oral, 13 weeks study" in error.message
    assert (error.values["pod_value"], error.values["pod_duration"]) == (357.0, "13 weeks")


@pytest.mark.parametrize("fmt", ["text", "html"])
def test_report_shows_duration_and_point_of_departure(fmt: str) -> None:
    text = render([_checked("13 weeks")], fmt)
    assert "Points of departure" in text
    assert "NOAEL 357 mg/kg bw/day (rat, oral, 13 weeks; oral study (drinking water)" in text
    assert "PoD NOAEL 357 mg/kg bw/day, rat, oral, 13 weeks study" in text  # the finding


def test_json_carries_the_duration() -> None:
    data = json.loads(render([_checked("90 days")], "json"))
    line = data["facts"]["exposure"]["lines"][0]
    assert (line["pod_kind"], line["pod_value"], line["pod_duration"]) == ("NOAEL", 357.0,
                                                                          "90 days")


def test_report_says_when_the_library_holds_no_duration() -> None:
    checked = _checked(None)
    text = render([checked], "text")
    assert "NOAEL 357 mg/kg bw/day (rat, oral, duration not in the library;" in text
    [error] = [f for f in checked.findings if f.severity.value == "error"]
    assert "PoD NOAEL 357 mg/kg bw/day, rat, oral study" in error.message
