"""The filed report of a review run (``formdb review report``): HTML for printing, or JSON.

Both come from one plain-data document (``review_document``), so the two say the same thing.
The HTML is one standalone file, autoescaped by Jinja2, laid out for A4 printing: every page
carries "page x of y" with the run key and the formula name, table headers repeat on each
page, a heading never ends a page, and the signatures stay together
(tests/report/test_review_print.py prints it with Chromium and reads the PDF back). The report
shows what it verified: BROKEN beside a run whose record no longer matches its hashes, INVALID
beside a signature that does not verify against the signer's enrolled key, and the head of
every hash chain, to keep with the filed copy.
"""

from __future__ import annotations

import json
from dataclasses import asdict
from typing import Any

from markupsafe import Markup

from formdb.report.blocks import Section
from formdb.report.cautions import ListSnapshot, cautions
from formdb.report.html import environment
from formdb.report.review_status import waived
from formdb.report.sections import hlb_section, packing_section, prediction_section
from formdb.report.view import finding_groups
from formdb.schemas.lists import HAND_WRITTEN, export_list_name
from formdb.schemas.result import CheckResult, round_value

NOT_A_SUBSTITUTE = (
    "A filed review record does not replace the qualified safety assessor, nor the ethics "
    "committee that must approve a trial on people; it records what the screening found on the "
    "date shown, against the library as it stood then.")
TEMPLATE = "review.html.j2"


# the rules whose advice belongs to each science section ("What to do")
SECTION_RULES = {"HLB balance": ("HLB01", "EMU01"), "Emulsion type": ("TYP01",),
                 "Dispersed phase": ("PAK01",)}


def css_string(text: str) -> Markup:
    """``text`` as a quoted CSS string for the page footer: every character but letters,
    digits and a few marks written as a CSS escape, so nothing in it can end the string or the
    style element."""
    safe = " -.,:;()"
    body = "".join(c if (c.isalnum() and c.isascii()) or c in safe else f"\\{ord(c):06x}"
                   for c in text)
    return Markup(f'"{body}"')


def _section(section: Section, result: CheckResult) -> dict[str, Any]:
    """A report section as plain data, with the advice of its rules' findings."""
    codes = SECTION_RULES.get(section.title, ())
    advice = [{"rule": f.rule, "severity": f.severity.value, "message": f.message,
               "advice": f.advice or ""} for f in result.findings if f.rule in codes]
    return {"title": section.title,
            "blocks": [{"kind": b.kind, **({"lines": [asdict(i) for i in b.items]}
                                           if b.kind == "lines" else {}),
                        **({"headers": list(b.headers), "rows": [list(r) for r in b.rows],
                            "numeric": list(b.numeric), "title": b.title}
                           if b.kind == "table" else {}),
                        **({"notes": list(b.items), "title": b.title}
                           if b.kind == "notes" else {})} for b in section.blocks],
            "what_to_do": advice}


def _science(result: CheckResult) -> list[dict[str, Any]]:
    facts = result.facts
    return [_section(s, result) for s in (hlb_section(facts), prediction_section(result),
                                          packing_section(facts))]


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
    # a "limit" record is a hand-written row; an imported entry is recorded as a "list entry"
    # ("EU Annex V/3"), and the rows of an annex an export covered were not applied
    imported = {r["key"].rsplit("/", 1)[0] for r in filed.records if r["kind"] == "list entry"}
    seen = {(r["values"]["jurisdiction"], r["values"]["list_name"] + HAND_WRITTEN,
             r["values"]["list_date"]) for r in filed.records if r["kind"] == "limit"
            and f"{r['values']['jurisdiction']} Annex "
                f"{r['values']['list_name'].rsplit(' ', 1)[-1]}" not in imported}
    # the exports the run's list findings rest on (their values name export and date)
    for finding in filed.result.findings:
        values = finding.values
        if values.get("export") and values.get("list_date"):
            jurisdiction, _, annex = str(values["list_name"]).partition(" Annex ")
            seen.add((jurisdiction, export_list_name(annex, str(values["export"])),
                      str(values["list_date"])))
    return [ListSnapshot(*s) for s in sorted(seen)]


def review_document(filed: Any) -> dict[str, Any]:
    """Every section of the filed report as plain data (the JSON report is exactly this)."""
    result, state, facts = filed.result, filed.state, filed.result.facts
    exposure = facts.exposure
    allergens = facts.allergens
    policy = filed.policy or {}
    return {
        "header": {"run_key": state.run_key, "run_hash": state.run_hash,
                   "formula": result.formula, "formula_hash": filed.formula_hash,
                   "formula_source": state.source, "library_hash": filed.library_hash,
                   "profile": filed.profile_name, "profile_version": filed.profile_version,
                   "profile_hash": state.profile_hash, "profile_origin": state.profile_origin,
                   "kind": state.kind, "formdb_version": filed.formdb_version,
                   "created_at": state.created_at, "created_by": state.created_by,
                   "state": state.state, "superseded_by": state.superseded_by,
                   "changes": state.changes, "category": result.category.value,
                   "product": result.product, "verified": filed.verified,
                   "broken": state.broken, "chain_problems": list(filed.problems)},
        "policy": policy,
        "verdict": "open items" if filed.open_items else "ready for trial",
        "science": _science(result),
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
                              f"{m.pod_route}"
                              + (f", {m.pod_duration}" if m.pod_duration else "")
                              + f"; {m.pod_source})",
                       "mos": None if m.mos is None else round(m.mos, 1),
                       "below_threshold": m.below_threshold, "steps": list(m.steps)}
                      for m in exposure.lines]},
        "compatibility": [{"rule": f.rule, "severity": f.severity.value, "message": f.message,
                           "advice": f.advice} for f in result.findings
                          if f.rule in ("ION01", "PH01")],
        "findings": [{"rule": f.rule, "severity": f.severity.value, "message": f.message,
                      "advice": f.advice or ""} for f in result.findings],
        "finding_counts": {g.severity: len(g.items) for g in finding_groups(result.findings)},
        "open_items": [{"item": n, **item} for n, item in enumerate(filed.open_items, 1)],
        "signatures": [{"number": s.number, "signer": s.signer, "signed_by": s.signed_by,
                        "meaning": s.meaning, "signed_at": s.signed_at, "reason": s.comment,
                        "waivers": s.waivers, "waived": waived(s.waivers), "key_id": s.key_id,
                        "run_hash": s.run_hash,
                        "check": s.check, "valid": s.valid, "superseded_by": s.superseded_by}
                       for s in state.signatures],
        "chain_heads": [{"chain": table, "head_row": head_id, "head_hash": head_hash,
                         "intact": intact} for table, head_id, head_hash, intact in filed.heads],
        "cautions": [*cautions([result], _snapshots(filed)), NOT_A_SUBSTITUTE],
    }


def render_review(filed: Any, fmt: str) -> str:
    doc = review_document(filed)
    if fmt == "json":
        return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    footer = css_string(f"Review record {doc['header']['run_key']} - {doc['header']['formula']}")
    return environment().get_template(TEMPLATE).render(doc=doc, footer=footer)
