"""Hand-built check results for report tests that need no library.

The ingredient values are those the reports are checked against elsewhere: sorbitan oleate 4.3 and
polysorbate 80 15.0 (PMC4137601 Table 2), isopropyl myristate required HLB 11.5 and stearic acid
15 (Wangpradit et al., OCL 29 (2022) 29, Table 4); densities from memory (water 0.997 g/mL at
25 degC is the CRC Handbook value). These records are test fixtures, not seed data.
"""

from __future__ import annotations

from typing import Any

from formdb.facts import compute_facts
from formdb.schemas.findings import Finding
from formdb.schemas.formula import FormulaFile, ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientProperties, IngredientRecord
from formdb.schemas.reference import ReferenceData
from formdb.schemas.result import CheckResult, ProfileRef
from formdb.schemas.vocab import Role, Severity

RECORDS: dict[str, dict[str, Any]] = {
    "Water": {"roles": {Role.WATER}, "props": {"solubility": "water", "density": 0.997,
                                                "viscosity_mpas": 0.89}},
    "Sorbitan Oleate": {"roles": {Role.EMULSIFIER},
                        "props": {"hlb": 4.3, "solubility": "oil", "density": 0.99,
                                  "ionic_character": "nonionic"}},
    "Polysorbate 80": {"roles": {Role.EMULSIFIER},
                       "props": {"hlb": 15.0, "solubility": "water", "density": 1.07,
                                 "ionic_character": "nonionic"}},
    "Isopropyl Myristate": {"roles": {Role.OIL},
                            "props": {"required_hlb_ow": 11.5, "solubility": "oil",
                                      "density": 0.85}},
    "Glycerin": {"roles": {Role.HUMECTANT}, "props": {"solubility": "water", "density": 1.26}},
    "Squalane": {"roles": {Role.OIL}, "props": {"solubility": "oil", "density": 0.81}},
}


Spec = dict[str, Any]
Line = tuple[str, float] | tuple[str, float, str]


def record(name: str, number: int, extra: dict[str, Spec] | None = None) -> IngredientRecord:
    spec = {**RECORDS, **(extra or {})}[name]
    return IngredientRecord(id=number, inci_name=name, roles=frozenset(spec["roles"]),
                            properties=IngredientProperties.model_validate(spec["props"]))


def resolved(name: str, lines: list[Line], extra: dict[str, Spec] | None = None,
             **keys: Any) -> ResolvedFormula:
    """A resolved formula; ``lines`` are (INCI, %) or (INCI, %, phase letter)."""
    full = [(ln[0], ln[1], ln[2] if len(ln) > 2 else None) for ln in lines]  # type: ignore[misc]
    formula = FormulaFile.model_validate({
        "name": name, "category": "leave-on",
        "ingredients": [{"inci": i, "percent": p, "phase": ph} for i, p, ph in full], **keys})
    out = [ResolvedLine(line_no=n, given_name=i, percent=p, phase=ph,
                        ingredient=record(i, n, extra))
           for n, (i, p, ph) in enumerate(full, start=1)]
    return ResolvedFormula(source=f"{name}.toml", formula=formula, lines=tuple(out),
                           content_hash="0" * 64)


def result(name: str = "Larkspur test lotion", lines: list[Line] | None = None,
           findings: tuple[Finding, ...] = (), extra: dict[str, Spec] | None = None,
           **keys: Any) -> CheckResult:
    """A checked formula: the facts worked out by the rules' own ``compute_facts``."""
    formula = resolved(name, lines or [
        ("Water", 72.0, "A"), ("Glycerin", 3.0, "A"), ("Isopropyl Myristate", 20.0, "B"),
        ("Sorbitan Oleate", 1.5, "B"), ("Polysorbate 80", 3.5, "A")], extra, **keys)
    facts = compute_facts(formula, ReferenceData())
    ff = formula.formula
    return CheckResult(formula=ff.name, source=formula.source, content_hash=formula.content_hash,
                       category=ff.category, product=ff.product, intended_type=ff.intended_type,
                       ph=ff.ph, profile=ProfileRef(name="default", version="1"), facts=facts,
                       findings=findings)


def finding(rule: str = "T001", severity: Severity = Severity.WARNING,
            message: str = "a test finding", ingredients: tuple[str, ...] = ("Water",),
            advice: str | None = "do something") -> Finding:
    return Finding(rule=rule, name="test-rule", severity=severity, message=message,
                   ingredients=ingredients, advice=advice)


def formula_toml(name: str, lines: list[tuple[str, Any]], **keys: Any) -> str:
    """The TOML text of a formula file (``lines``: (INCI, percent) pairs, percent as given)."""
    import tomli_w

    data: dict[str, Any] = {"name": name, "category": "leave-on", **keys}
    data["ingredients"] = [{"inci": inci, "percent": pct} for inci, pct in lines]
    return tomli_w.dumps(data)
