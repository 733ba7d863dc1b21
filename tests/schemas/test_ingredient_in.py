"""IngredientIn's own checks: which rows it refuses and the words it refuses them with."""

from __future__ import annotations

import pytest
from pydantic import ValidationError

from formdb.schemas.ingredient import IngredientIn, IngredientProperties


def _refusal(**fields: object) -> str:
    with pytest.raises(ValidationError) as caught:
        IngredientIn(inci_name="Cetyl Alcohol", **fields)  # type: ignore[arg-type]
    return str(caught.value.errors()[0]["msg"]).removeprefix("Value error, ")


def test_each_value_needs_a_source_named_in_property_order() -> None:
    props = IngredientProperties(hlb=15.5, viscosity_mpas=20.0)
    # hlb comes before viscosity_mpas in the catalogue: it is the one named
    assert _refusal(properties=props) == \
        "hlb: a value needs a source (give hlb_source or source)"
    assert _refusal(properties=props, sources={"hlb": "lab"}) == \
        "viscosity_mpas: a value needs a source (give viscosity_mpas_source or source)"
    IngredientIn(inci_name="Cetyl Alcohol", properties=props,
                 sources={"hlb": "lab", "viscosity_mpas": "lab"})


def test_a_source_for_no_property_and_a_synonym_repeating_the_name_are_refused() -> None:
    assert _refusal(sources={"colour": "lab"}) == "sources: 'colour' is not a property"
    assert _refusal(synonyms=("cetyl  alcohol",)) == \
        "synonyms: 'cetyl alcohol' repeats the INCI name"
    # a source without a value is allowed (the value may come later)
    IngredientIn(inci_name="Cetyl Alcohol", sources={"hlb": "lab"})
