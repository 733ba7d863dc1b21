"""orjson writes the change log's sealed texts byte for byte as ``json`` does.

The seal's canonical text and a new ingredient's payload are written by orjson on the import's
hot path, while ``formdb audit verify`` (and every chain already in a library) goes by
``json.dumps(..., ensure_ascii=False, separators=(",", ":"))``. So:
- every code point that UTF-8 can hold is escaped the same way by both (checked for all of
  them, in slices); a lone surrogate, which orjson refuses, takes json's way as before;
- a float is never written by orjson itself (it writes 1e-05 as 0.00001): it goes in as the
  text json gives it, NaN and Infinity included;
- the seal's row hash and an added ingredient's payload equal the verifier's and the general
  path's for generated rows and ingredients (Hypothesis, more examples than the suite's
  profile because each is microseconds).
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from typing import Any

import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from formdb.schemas.ingredient import IngredientIn, IngredientProperties
from formdb.schemas.vocab import IonicCharacter, Role, Solubility
from formdb.services.library.ingredient_log import added_payload, fields_of, typed_changes
from formdb.store.change_log import FORM, float_json, payload_text
from formdb.store.sealing import GENESIS, canonical, row_hash, seal

EXAMPLES = 300


def _json(value: Any) -> bytes:
    return json.dumps(value, ensure_ascii=False, separators=(",", ":")).encode("utf-8")


def test_every_code_point_is_escaped_as_json_escapes_it() -> None:
    points = [p for p in range(0x110000) if not 0xD800 <= p <= 0xDFFF]
    for start in range(0, len(points), 512):
        text = "".join(map(chr, points[start:start + 512]))
        assert orjson.dumps([text, None]) == _json([text, None]), hex(points[start])
    for point in range(0x80):  # one by one where the escapes are
        assert orjson.dumps(chr(point)) == _json(chr(point)), point


def test_a_lone_surrogate_is_refused_by_orjson() -> None:
    # why the seal and the payload fall back to json for such a text
    with pytest.raises(orjson.JSONEncodeError):
        orjson.dumps("\ud800")


@settings(max_examples=EXAMPLES)
@given(st.floats(allow_nan=True, allow_infinity=True))
def test_a_float_is_written_as_json_writes_it(value: float) -> None:
    assert orjson.dumps([float_json(value)]) == _json([value])


# texts as they may reach the log: any code point, now and then a lone surrogate
texts = st.text() | st.builds(lambda a, b: a + "\udc80" + b, st.text(), st.text())


def _entry(user: str, key: str, reason: str | None, payload: str, version: int | None
           ) -> dict[str, Any]:
    return {"at": datetime(2026, 12, 5, 11, 0, 0, 123456, tzinfo=UTC), "user": user,
            "entity": "ingredient", "entity_key": key, "entity_version": version,
            "action": "import", "form": FORM, "payload": payload, "reason": reason}


@settings(max_examples=EXAMPLES)
@given(user=texts, key=texts, reason=st.none() | texts, note=texts,
       version=st.none() | st.integers(min_value=-2**70, max_value=2**70))
def test_the_seal_hashes_the_verifiers_canonical_text(user: str, key: str, reason: str | None,
                                                     note: str, version: int | None) -> None:
    payload = payload_text([{"field": "hlb", "old": None, "new": 1e-05, "new_note": note}])
    rows = [_entry(user, key, reason, payload, version), _entry("lab", "x", None, "{}", 1)]
    try:
        head = seal("change_log", rows, 7, GENESIS)
    except UnicodeEncodeError:  # a lone surrogate cannot be hashed as UTF-8, as always
        with pytest.raises(UnicodeEncodeError):
            row_hash(GENESIS, canonical("change_log", {**rows[0], "id": 7,
                                                       "prev_hash": GENESIS}))
        return
    prev = GENESIS
    for row in rows:  # what formdb audit verify recomputes
        assert row["prev_hash"] == prev
        prev = row_hash(prev, canonical("change_log", row))
        assert row["row_hash"] == prev
    assert head == prev


bounded = {  # (low, high) of each float property, as IngredientProperties bounds them
    "hlb": (0.0, 50.0), "required_hlb_ow": (0.0, 20.0), "density": (0.5, 3.0),
    "molar_mass": (1e-9, 100000.0), "viscosity_mpas": (1e-9, 1e7), "eacn": (-20.0, 60.0),
    "hld_cc": (-10.0, 10.0), "neutralisation_water": (0.0, 1.0)}


@st.composite
def ingredients(draw: st.DrawFn) -> IngredientIn:
    values: dict[str, Any] = {}
    for prop, (low, high) in bounded.items():
        if draw(st.booleans()):
            values[prop] = draw(st.floats(low, high) | st.sampled_from(
                [low, high, 1e-05, 1e-7, 5e-324, 0.1, -0.0, 1e16, 12345678.9])
                .filter(lambda v, lo=low, hi=high: lo <= v <= hi))
    if draw(st.booleans()):
        values["cation_valence"] = draw(st.integers(1, 3))
    if draw(st.booleans()):
        values["ethoxylated"] = draw(st.booleans())
    if draw(st.booleans()):
        values["solubility"] = draw(st.sampled_from(list(Solubility)))
    if draw(st.booleans()):
        values["ionic_character"] = draw(st.sampled_from(list(IonicCharacter)))
    sources = {prop: draw(texts) for prop in values}
    notes = {prop: draw(texts) for prop in values if draw(st.booleans())}
    return IngredientIn(
        inci_name=draw(st.sampled_from(["Cetyl Alcohol", "Glyceryl Stearate", "Ceteth-20"])),
        synonyms=tuple(draw(st.lists(st.sampled_from(["Hexadecanol", "Palmityl Alcohol",
                                                       'Odd "Quoted" Ésterol'])))),
        cas_numbers=tuple(draw(st.lists(st.sampled_from(["36653-82-4", "7732-18-5"])))),
        roles=tuple(draw(st.lists(st.sampled_from(list(Role)), max_size=3))),
        classes=tuple(draw(st.lists(st.sampled_from(["paraben", "high-HLB ethoxylate"]),
                                    max_size=2))),
        properties=IngredientProperties(**values), sources=sources, notes=notes)


@settings(max_examples=EXAMPLES)
@given(item=ingredients(), via=st.none() | texts)
def test_an_added_ingredients_payload_is_the_general_paths(item: IngredientIn,
                                                           via: str | None) -> None:
    assert added_payload(item, via=via) == \
        payload_text(typed_changes(None, fields_of(item)), via=via)
