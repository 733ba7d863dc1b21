"""Reads the check service relies on: names resolve in bulk (INCI name or synonym, any case or
spacing) to records with provenance; suggestions; reference data with soaps and acids resolved."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from sqlalchemy import event, select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.schemas.ingredient import PROPERTY_NAMES, name_key
from formdb.schemas.vocab import Evidence, IonicCharacter, Role, Severity, Solubility
from formdb.store import queries
from formdb.store.db import make_engine, unit_of_work
from formdb.store.models import Ingredient, PropertyValue


@pytest.fixture
def session(fixture_library_url: str) -> Iterator[Session]:
    engine = make_engine(fixture_library_url)
    try:
        with unit_of_work(engine) as s:
            yield s
    finally:
        engine.dispose()


def _statements(session: Session) -> list[str]:
    seen: list[str] = []
    def note(_conn, _cursor, statement: str, *_rest) -> None:  # type: ignore[no-untyped-def]
        if statement.lstrip().upper().startswith("SELECT"):
            seen.append(statement)

    event.listen(session.get_bind(), "before_cursor_execute", note)
    return seen


def test_names_resolve_by_inci_name_or_synonym_in_any_case(session: Session) -> None:
    given = ["Aqua", "  water ", "SLS", "sodium   lauryl SULFATE", "Unobtainium"]
    found = queries.find_ingredients(session, given)
    assert set(found) == {"aqua", "water", "sls", "sodium lauryl sulfate"}
    assert found["water"] == found["aqua"]
    assert found["sls"].inci_name == "Sodium Lauryl Sulfate"
    assert found["water"].synonyms == ("Water",)
    assert found["water"].cas_numbers == ("7732-18-5",)
    assert found["water"].roles == frozenset({Role.WATER, Role.SOLVENT})
    assert found["sls"].classes == frozenset({"sulfate anionic"})


def test_a_record_carries_every_value_with_its_provenance(session: Session) -> None:
    naoh = queries.find_ingredient(session, "sodium hydroxide")
    assert naoh is not None
    assert naoh.p.molar_mass == 40.0 and naoh.p.cation_valence == 1
    assert isinstance(naoh.p.cation_valence, int)
    assert set(naoh.provenance) == {"molar_mass", "base_equivalents", "cation_valence"}
    prov = naoh.provenance["molar_mass"]
    assert prov.source == "from-memory" and prov.evidence is Evidence.FROM_MEMORY
    assert prov.citation.startswith("Recalled from memory")  # the built-in source's citation


def test_lookup_is_bulk_not_one_query_per_name(session: Session) -> None:
    statements = _statements(session)
    queries.find_ingredients(session, ["Aqua"])
    one = len(statements)
    statements.clear()
    queries.find_ingredients(session, ["Aqua", "SLS", "Stearic Acid", "Sodium Hydroxide",
                                       "Sodium Stearate", "Benzyl Alcohol", "Benzoic Acid"])
    assert len(statements) == one  # names, ingredients, each child collection, citations


def test_retired_ingredients_resolve_marked_retired(session: Session) -> None:
    row = session.scalars(select(Ingredient).where(Ingredient.inci_name == "Benzyl Alcohol")).one()
    row.retired = True
    session.flush()
    found = queries.find_ingredients(session, ["benzyl alcohol"])
    assert found["benzyl alcohol"].retired is True
    assert "Benzyl Alcohol" not in queries.suggest_names(session, "Benzyl Alcohl")


def test_suggestions_for_a_misspelt_name(session: Session) -> None:
    assert queries.suggest_names(session, "Sodium Laurel Sulphate")[0] == "Sodium Lauryl Sulfate"
    assert queries.suggest_names(session, "Stearic Acd", limit=1) == ["Stearic Acid"]
    assert queries.suggest_names(session, "qqqqzzzz") == []


def test_reference_data(session: Session) -> None:
    ref = queries.load_reference_data(session)
    assert [lim.key for lim in ref.limits] == ["eu-v-1-benzoic", "eu-v-34-benzyl-alcohol"]
    benzoic = ref.limits[0]
    assert benzoic.ingredients == ("Benzoic Acid", "Sodium Benzoate")
    assert (benzoic.aggregate, benzoic.basis, benzoic.max_percent) == ("sum", "as-acid", 2.5)
    assert set(ref.acids) == {"Benzoic Acid"} and ref.acids["Benzoic Acid"].p.molar_mass == 122.12
    assert [(p.acid_inci, p.base_inci, p.soap_inci) for p in ref.soap_pairs] == [
        ("Stearic Acid", "Sodium Hydroxide", "Sodium Stearate")]
    assert ref.soaps["Sodium Stearate"].p.hlb == 18
    quat = next(i for i in ref.incompatibilities if i.key == "anionic-meets-quat")
    assert quat.severity is Severity.ERROR
    assert ref.sources["eu-1223-annex-v"].startswith("Regulation (EC) No 1223/2009")


SAMPLE_VALUES = {"hlb": 4.3, "solubility": Solubility.OIL, "ionic_character": IonicCharacter.NONE,
                 "electrolyte_sensitive": False, "cation_valence": 2, "ph_min": 4.0,
                 "ph_max": 8.5, "viscosity_mpas": 1200.0}


def test_every_kind_of_property_reads_back_as_stored(session: Session) -> None:
    """bool, int, choice and float values survive property_columns -> database -> record."""
    row = session.scalars(select(Ingredient).where(Ingredient.inci_name == "Aqua")).one()
    row.values.clear()
    session.flush()
    for prop, value in SAMPLE_VALUES.items():
        num, text = queries.property_columns(prop, value)
        row.values.append(PropertyValue(property=prop, value_num=num, value_text=text,
                                        source_key="rule-of-thumb", evidence="rule of thumb"))
    session.flush()
    session.expire_all()
    record = queries.find_ingredient(session, "Aqua")
    assert record is not None
    assert record.properties.model_dump(exclude_none=True) == SAMPLE_VALUES
    assert record.p.electrolyte_sensitive is False
    assert set(SAMPLE_VALUES) <= set(PROPERTY_NAMES)


def test_an_unreadable_stored_value_is_an_error_naming_the_ingredient(session: Session) -> None:
    row = session.scalars(select(Ingredient).where(Ingredient.inci_name == "Aqua")).one()
    row.values.append(PropertyValue(property="ph_max", value_num=99.0, value_text=None,
                                    source_key="rule-of-thumb", evidence="rule of thumb"))
    session.flush()
    session.expire_all()
    with pytest.raises(InvalidData, match="'Aqua' holds a value formdb cannot read"):
        queries.find_ingredients(session, ["Aqua"])


def test_many_names_at_once(session: Session) -> None:
    """More names than one IN list holds: chunked, still every hit found."""
    names = [f"Unlisted {i}" for i in range(1200)] + ["Aqua"]
    assert list(queries.find_ingredients(session, names)) == [name_key("Aqua")]
