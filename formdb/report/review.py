"""The filed report of a review run (``formdb review report``): HTML for printing, or JSON.

Both come from one plain-data document (``review_document``), so the two say the same thing.
The HTML is one standalone file, autoescaped by Jinja2, laid out for A4 printing.
"""

from __future__ import annotations

import json
from typing import Any

from formdb.report.cautions import ListSnapshot, cautions
from formdb.report.html import environment
from formdb.schemas.result import round_value

NOT_A_SUBSTITUTE = (
    "A filed review record does not replace the qualified safety assessor, nor the ethics "
    "committee that must approve a trial on people; it records what the screening found on the "
    "date shown, against the library as it stood then.")
TEMPLATE = "review.html.j2"


def _num(key: str, value: Any) -> Any:
    return round_value(key, value) if isinstance(value, float) else value


def _limits(filed: Any) -> list[dict[str, Any]]:
    category = filed.result.category.value
    flagged: dict[tuple[str, str], Any] = {}
    for f in filed.result.findings:
        if f.rule.startswith("LIM") and f.values.get("entry"):
            flagged[(str(f.values.get("list_name")), str(f.values["entry"]))] = f
    rows = []
    for rec in filed.records:
        if rec["kind"] != "limit":
            continue
        v = rec["values"]
        product = (v.get("product") or "").casefold()
        applies = v["category"] in (category, "any") and (
            not product or product == (filed.result.product or "").casefold())
        hit = flagged.get((v["list_name"], v["entry"])) if applies else None
        if not applies:
            verdict = ("not applicable (" + (v.get("product") or f"{v['category']} only")
                       + ")")
        elif hit is not None:
            verdict = f"{hit.severity.value}: {hit.message}"
        else:
            verdict = "within the limit"
        rows.append({"cited": f"{v['jurisdiction']} {v['list_name']}, entry {v['entry']} "
                              f"(list of {v['list_date']})",
                     "ingredients": ", ".join(v["ingredients"]),
                     "category": v["category"], "max_percent": v["max_percent"],
                     "conditions": v.get("conditions") or "", "verdict": verdict,
                     "flagged": hit is not None})
    return rows


def _snapshots(filed: Any) -> list[ListSnapshot]:
    seen = {(r["values"]["jurisdiction"], r["values"]["list_name"], r["values"]["list_date"])
            for r in filed.records if r["kind"] == "limit"}
    return [ListSnapshot(*s) for s in sorted(seen)]


def review_document(filed: Any) -> dict[str, Any]:
    """Every section of the filed report as plain data (the JSON report is exactly this)."""
    result, state, facts = filed.result, filed.state, filed.result.facts
    exposure = facts.exposure
    allergens = facts.allergens
    return {
        "header": {"run_key": state.run_key, "run_hash": state.run_hash,
                   "formula": result.formula, "formula_hash": filed.formula_hash,
                   "formula_source": state.source, "library_hash": filed.library_hash,
                   "profile": filed.profile_name, "profile_version": filed.profile_version,
                   "formdb_version": filed.formdb_version, "created_at": state.created_at,
                   "created_by": state.created_by, "state": state.state,
                   "superseded_by": state.superseded_by, "changes": state.changes,
                   "category": result.category.value, "product": result.product},
        "verdict": "open items" if filed.open_items else "ready for trial",
        "substances": [{"inci": s.inci, "percent": _num("percent", s.percent),
                        "sources": list(s.sources)} for s in facts.substances]
        or [{"inci": ln.inci, "percent": _num("percent", ln.percent),
             "sources": [f"line {ln.line_no}"]} for ln in facts.lines],
        "label": None if filed.label is None else {
            "jurisdiction": filed.label.jurisdiction, "text": filed.label.text,
            "entries": [{"name": e.name, "percent": _num("percent", e.percent),
                         "group": e.group, "allergen": e.allergen}
                        for e in filed.label.entries]},
        "limits": _limits(filed),
        "allergens": None if allergens is None else {
            "threshold_percent": allergens.threshold_percent,
            "cited": f"{allergens.jurisdiction} {allergens.list_name}, entry {allergens.entry} "
                     f"(list of {allergens.list_date})",
            "lines": [{"inci": a.inci, "percent": _num("percent", a.percent),
                       "sources": list(a.sources), "must_label": a.must_label}
                      for a in allergens.lines],
            "must_label": list(allergens.must_label)},
        "margin_of_safety": None if exposure is None else {
            "product": exposure.product, "exposure_mg_kg_bw_day":
                _num("exposure", exposure.exposure_mg_kg_bw_day),
            "exposure_source": exposure.exposure_source, "threshold": exposure.threshold,
            "defaults_used": list(exposure.defaults_used), "steps": list(exposure.steps),
            "missing_pod": list(exposure.missing_pod),
            "lines": [{"inci": m.inci, "percent": _num("percent", m.percent),
                       "dermal_absorption_percent": m.dermal_absorption_percent,
                       "absorption_default": m.dermal_absorption_default,
                       "sed_mg_kg_bw_day": _num("sed", m.sed_mg_kg_bw_day),
                       "pod": f"{m.pod_kind} {m.pod_value:g} {m.pod_unit} ({m.species}, "
                              f"{m.pod_route}; {m.pod_source})",
                       "mos": None if m.mos is None else round(m.mos, 1),
                       "below_threshold": m.below_threshold, "steps": list(m.steps)}
                      for m in exposure.lines]},
        "compatibility": [{"rule": f.rule, "severity": f.severity.value, "message": f.message,
                           "advice": f.advice} for f in result.findings
                          if f.rule in ("ION01", "PH01")],
        "findings": [{"rule": f.rule, "severity": f.severity.value, "message": f.message}
                     for f in result.findings],
        "open_items": filed.open_items,
        "signatures": [{"signer": s.signer, "signed_by": s.signed_by, "meaning": s.meaning,
                        "signed_at": s.signed_at, "comment": s.comment,
                        "run_hash": s.run_hash} for s in state.signatures],
        "cautions": [*cautions([result], _snapshots(filed)), NOT_A_SUBSTITUTE],
    }


def render_review(filed: Any, fmt: str) -> str:
    doc = review_document(filed)
    if fmt == "json":
        return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    return environment().get_template(TEMPLATE).render(doc=doc)
