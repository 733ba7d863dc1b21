"""The fixture library of the rule cases (library.toml) and mini-formulas built from it."""

from __future__ import annotations

import hashlib
import tomllib
from collections.abc import Mapping, Sequence
from datetime import date
from functools import lru_cache
from pathlib import Path
from typing import Any

from formdb.schemas.formula import FormulaFile, ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import (
    IngredientProperties,
    IngredientRecord,
    Provenance,
    name_key,
)
from formdb.schemas.lists import ListEntry, SnapshotInfo
from formdb.schemas.reference import (
    Constituent,
    ExposureRecord,
    Incompatibility,
    LabelThreshold,
    LimitRecord,
    ReferenceData,
    SoapPair,
    ToxicologyRecord,
)

HERE = Path(__file__).resolve().parent
_RECORD_KEYS = {"inci", "synonyms", "roles", "classes", "evidence", "retired"}


@lru_cache(maxsize=1)
def _raw() -> dict[str, Any]:
    return tomllib.loads((HERE / "library.toml").read_text(encoding="utf-8"))


@lru_cache(maxsize=1)
def ingredients() -> dict[str, IngredientRecord]:
    """Every fixture ingredient, keyed by the name key of its INCI name and of each synonym."""
    out: dict[str, IngredientRecord] = {}
    for number, row in enumerate(_raw()["ingredient"], start=1):
        props = IngredientProperties(**{k: v for k, v in row.items() if k not in _RECORD_KEYS})
        record = IngredientRecord(
            id=number, inci_name=row["inci"], synonyms=tuple(row.get("synonyms", ())),
            roles=frozenset(row.get("roles", ())), classes=frozenset(row.get("classes", ())),
            retired=row.get("retired", False), properties=props, provenance={
                prop: Provenance(source=f"fixture-{kind.replace(' ', '-')}", evidence=kind)
                for prop, kind in row.get("evidence", {}).items()})
        for name in (record.inci_name, *record.synonyms):
            key = name_key(name)
            assert key not in out, f"library.toml: {name!r} appears twice"
            out[key] = record
    return out


def ingredient(name: str) -> IngredientRecord:
    try:
        return ingredients()[name_key(name)]
    except KeyError:
        raise KeyError(f"{name!r} is not in tests/rules/library.toml") from None


@lru_cache(maxsize=1)
def reference() -> ReferenceData:
    raw = _raw()
    pairs = tuple(SoapPair(**row) for row in raw.get("soap_pair", ()))
    limits = tuple(LimitRecord(**row) for row in raw.get("limit", ()))
    return ReferenceData(
        limits=limits,
        incompatibilities=tuple(Incompatibility(**row) for row in raw.get("incompatibility", ())),
        soap_pairs=pairs,
        soaps={p.soap_inci: ingredient(p.soap_inci) for p in pairs},
        acids={r.acid_inci: ingredient(r.acid_inci) for r in limits if r.acid_inci},
        exposure={row["product"]: ExposureRecord(**row) for row in raw.get("exposure", ())},
        toxicology={name_key(row["inci"]): ToxicologyRecord(**row)
                    for row in raw.get("toxicology", ())},
        label_thresholds=tuple(LabelThreshold(**row) for row in raw.get("label_threshold", ())),
        constituents=_constituents(raw))


@lru_cache(maxsize=1)
def lists_reference() -> ReferenceData:
    """reference() with the hand-written list entries of lists.toml in force, matched to the
    fixture ingredients by INCI name and CAS number (as the import's index does)."""
    raw = tomllib.loads((HERE / "lists.toml").read_text(encoding="utf-8"))
    entries = [ListEntry(**row) for row in raw["entry"]]
    snapshots = tuple(SnapshotInfo(annex=a, file_name="tests/rules/lists.toml",
                                   file_created=date(2025, 11, 11),
                                   last_update=date(2025, 10, 31), file_hash="0" * 64, entries=1)
                      for a in sorted({e.annex for e in entries}))
    matched: dict[str, tuple[ListEntry, ...]] = {}
    for record in {id(r): r for r in ingredients().values()}.values():
        names = {name_key(n) for n in (record.inci_name, *record.synonyms)}
        hits = tuple(e for e in entries if names & {name_key(n) for n in e.inci_names}
                     or set(record.cas_numbers) & set(e.cas_numbers))
        matched[name_key(record.inci_name)] = hits
    return reference().model_copy(update={"lists": snapshots, "list_entries": matched})


def _constituents(raw: Mapping[str, Any]) -> dict[str, tuple[Constituent, ...]]:
    out: dict[str, list[Constituent]] = {}
    for row in raw.get("constituent", ()):
        out.setdefault(name_key(row["mixture"]), []).append(Constituent(
            record=ingredient(row["inci"]), percent=row["percent"], source=row["source"]))
    return {key: tuple(parts) for key, parts in out.items()}


def formula(name: str, lines: Sequence[tuple[str, float]] | Sequence[Sequence[Any]],
            **fields: Any) -> ResolvedFormula:
    """A resolved mini-formula: ``lines`` are (INCI, %) pairs; ``fields`` go to FormulaFile."""
    body: Mapping[str, Any] = {"category": "leave-on", **fields}
    file = FormulaFile(name=name, ingredients=[
        {"inci": line[0], "percent": line[1]} | ({"purpose": line[2]} if len(line) > 2 else {})
        for line in lines], **body)
    resolved = tuple(
        ResolvedLine(line_no=i, given_name=line.inci, percent=line.percent, phase=line.phase,
                     ingredient=ingredient(line.inci), purpose=line.purpose)
        for i, line in enumerate(file.ingredients, start=1))
    digest = hashlib.sha256(repr((name, list(lines), sorted(fields.items()))).encode()).hexdigest()
    return ResolvedFormula(source=f"case:{name}", formula=file, lines=resolved,
                           content_hash=digest)
