"""The ingredient as it crosses a boundary: validated input, and the frozen record rules read.

``IngredientProperties`` is the one catalogue of properties: each field's bounds, unit and meaning.
Adding a property to the library means adding one field here (and seeding it); storage keeps every
property as a row of ``property_values``, so no migration is needed for a new one.
"""

from __future__ import annotations

import unicodedata
from collections.abc import Callable, Mapping
from functools import lru_cache
from typing import Any, TypeVar

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from formdb.schemas.bounds import MAX_NAME_CHARS
from formdb.schemas.cas import cas_is_valid
from formdb.schemas.names import clean_name
from formdb.schemas.vocab import (
    Evidence,
    IonicCharacter,
    Role,
    Solubility,
    parse_choice,
    parse_class,
)


def normalise_inci(name: str) -> str:
    """The display form of an INCI name: NFC, trimmed, inner whitespace collapsed."""
    return " ".join(unicodedata.normalize("NFC", str(name)).split())


@lru_cache(maxsize=1 << 16)  # rules compare names per line and per limit row: memoised
def name_key(name: str) -> str:
    """The comparison key of a name or synonym: case and spacing ignored."""
    return normalise_inci(name).casefold()


def _unit(unit: str) -> dict[str, Any]:
    return {"unit": unit}


class IngredientProperties(BaseModel):
    """Every property the library knows, with bounds. ``None`` means the library has no value."""

    model_config = ConfigDict(defer_build=True, extra="forbid", frozen=True)

    hlb: float | None = Field(
        None, ge=0, le=50, json_schema_extra=_unit(""),
        description="hydrophilic-lipophilic balance (Griffin 0-20; ionic ones by Davies to ~40)")
    required_hlb_ow: float | None = Field(
        None, ge=0, le=20, json_schema_extra=_unit(""),
        description="HLB an emulsifier system needs to emulsify this oil as oil-in-water")
    required_hlb_wo: float | None = Field(
        None, ge=0, le=20, json_schema_extra=_unit(""),
        description="HLB an emulsifier system needs to emulsify this oil as water-in-oil")
    required_hlb_ow_low: float | None = Field(
        None, ge=0, le=20, json_schema_extra=_unit(""),
        description="lowest required HLB (O/W) the sources give, where they disagree")
    required_hlb_ow_high: float | None = Field(
        None, ge=0, le=20, json_schema_extra=_unit(""),
        description="highest required HLB (O/W) the sources give, where they disagree")
    required_hlb_wo_low: float | None = Field(
        None, ge=0, le=20, json_schema_extra=_unit(""),
        description="lowest required HLB (W/O) the sources give, where they disagree")
    required_hlb_wo_high: float | None = Field(
        None, ge=0, le=20, json_schema_extra=_unit(""),
        description="highest required HLB (W/O) the sources give, where they disagree")
    solubility: Solubility | None = Field(
        None, description="where it dissolves: water, oil, dispersible (in water), insoluble")
    ionic_character: IonicCharacter | None = Field(
        None, description="anionic, cationic, nonionic, amphoteric, or none")
    density: float | None = Field(
        None, ge=0.5, le=3.0, json_schema_extra=_unit("g/mL"), description="density at about 25 °C")
    ph_min: float | None = Field(
        None, ge=0, le=14, json_schema_extra=_unit("pH"),
        description="lowest formula pH at which it works as intended")
    ph_max: float | None = Field(
        None, ge=0, le=14, json_schema_extra=_unit("pH"),
        description="highest formula pH at which it works as intended")
    electrolyte_sensitive: bool | None = Field(
        None, description="loses its function (viscosity, stability) when salts are present")
    use_min_percent: float | None = Field(
        None, ge=0, le=100, json_schema_extra=_unit("% w/w"), description="low end of typical use")
    use_max_percent: float | None = Field(
        None, ge=0, le=100, json_schema_extra=_unit("% w/w"), description="high end of typical use")
    molar_mass: float | None = Field(
        None, gt=0, le=100000, json_schema_extra=_unit("g/mol"),
        description="molar mass (soap stoichiometry, 'as acid' conversions)")
    base_equivalents: float | None = Field(
        None, gt=0, le=4, json_schema_extra=_unit("mol OH-/mol"),
        description="moles of acid one mole of this base neutralises (NaOH 1, MgO 2)")
    acid_value: float | None = Field(
        None, gt=0, le=2000, json_schema_extra=_unit("mg KOH/g"),
        description="mg of potassium hydroxide one gram neutralises (the pharmacopoeial acid "
                    "value; citric acid 876, carbomer about 779): what an acid takes of a "
                    "strong base before any is left free")
    cation_valence: int | None = Field(
        None, ge=1, le=3, json_schema_extra=_unit(""),
        description="valence of the cation this base gives a soap (Na+ 1, Mg2+ 2)")
    neutralisation_water: float | None = Field(
        None, ge=0, le=1, json_schema_extra=_unit("mol H2O/equivalent"),
        description="water released per equivalent neutralised (NaOH 1, MgO 0.5, amines 0)")
    water_number: float | None = Field(
        None, gt=0, le=1000, json_schema_extra=_unit("g water/100 g"),
        description="water 100 g of it takes up as a W/O emulsion with no other emulsifier "
                    "(an absorption base's water number: wool fat about 80)")
    viscosity_mpas: float | None = Field(
        None, gt=0, le=1e7, json_schema_extra=_unit("mPa·s"),
        description="viscosity at about 25 °C")
    eacn: float | None = Field(
        None, ge=-20, le=60, json_schema_extra=_unit(""),
        description="equivalent alkane carbon number of an oil (HLD; n-alkanes: their carbon "
                    "number)")
    hld_cc: float | None = Field(
        None, ge=-10, le=10, json_schema_extra=_unit(""),
        description="characteristic curvature Cc of a surfactant (HLD; > 0 lipophilic)")
    ethoxylated: bool | None = Field(
        None, description="a nonionic with polyoxyethylene chains: its HLD rises with "
                          "temperature, so it has a phase inversion temperature")

    @model_validator(mode="after")
    def _ranges_are_ordered(self) -> IngredientProperties:
        for low, high in (("ph_min", "ph_max"), ("use_min_percent", "use_max_percent")):
            lo, hi = getattr(self, low), getattr(self, high)
            if lo is not None and hi is not None and lo > hi:
                raise ValueError(f"{low} ({lo}) is greater than {high} ({hi})")
        return self

    @classmethod
    def names(cls) -> tuple[str, ...]:
        return tuple(cls.model_fields)

    @classmethod
    def unit_of(cls, name: str) -> str:
        extra = cls.model_fields[name].json_schema_extra
        return str(extra.get("unit", "")) if isinstance(extra, dict) else ""


PROPERTY_NAMES: tuple[str, ...] = IngredientProperties.names()
_PROPERTY_SET = frozenset(PROPERTY_NAMES)


class Provenance(BaseModel):
    """Where one value came from."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    source: str
    evidence: Evidence
    citation: str | None = None
    note: str | None = None


_T = TypeVar("_T")


def _roles_of(items: tuple[Any, ...]) -> tuple[Role, ...]:
    roles = [r if isinstance(r, Role) else parse_choice(Role, str(r), "roles")
             for r in items if str(r).strip()]
    return tuple(dict.fromkeys(roles))  # type: ignore[arg-type]


def _classes_of(items: tuple[Any, ...]) -> tuple[str, ...]:
    return tuple(dict.fromkeys(parse_class(str(c)) for c in items if str(c).strip()))


_cached_roles_of = lru_cache(maxsize=1 << 12)(_roles_of)
_cached_classes_of = lru_cache(maxsize=1 << 12)(_classes_of)


def _memoised(parse: Callable[[tuple[Any, ...]], _T], cached: Callable[[tuple[Any, ...]], _T],
              value: Any) -> _T:
    """A list cell's items parsed once per distinct list: a large import repeats the same few
    role and class lists row after row. Unhashable items are parsed without the memo."""
    items = tuple(value.split(";")) if isinstance(value, str) else tuple(value or ())
    try:
        hash(items)
    except TypeError:
        return parse(items)
    return cached(items)


class IngredientIn(BaseModel):
    """An ingredient as a user or a file gives it; every rejection names the field and value."""

    model_config = ConfigDict(defer_build=True, extra="forbid")

    inci_name: str
    synonyms: tuple[str, ...] = ()
    cas_numbers: tuple[str, ...] = ()
    roles: tuple[Role, ...] = ()
    classes: tuple[str, ...] = ()
    properties: IngredientProperties = Field(default_factory=IngredientProperties)
    # property name -> source key (must exist in the sources table)
    sources: dict[str, str] = {}
    notes: dict[str, str] = {}

    @field_validator("inci_name")
    @classmethod
    def _clean_name(cls, value: str) -> str:
        cleaned = clean_name(value, "inci_name")
        if not cleaned:
            raise ValueError("inci_name is empty")
        if len(cleaned) > 200:
            raise ValueError(f"inci_name {cleaned[:40]!r}... is longer than 200 characters")
        return cleaned

    @field_validator("synonyms")
    @classmethod
    def _clean_synonyms(cls, value: tuple[str, ...]) -> tuple[str, ...]:
        if not value:  # most ingredients of a large table have none
            return value
        names = [clean_name(s, "synonyms") for s in value]
        for name in names:
            if len(name) > MAX_NAME_CHARS:
                raise ValueError(f"synonyms: {name[:40]!r}... is longer than {MAX_NAME_CHARS} "
                                 "characters")
        return tuple(dict.fromkeys(n for n in names if n))

    @field_validator("cas_numbers")
    @classmethod
    def _check_cas(cls, value: tuple[str, ...]) -> tuple[str, ...]:
        if not value:
            return value
        out = []
        for cas in value:
            cas = cas.strip()
            if not cas:
                continue
            if not cas_is_valid(cas):
                raise ValueError(f"cas: {cas!r} is not a valid CAS number "
                                 "(ASCII digits NNNNNNN-NN-N, no leading zero, right check "
                                 "digit)")
            out.append(cas)
        return tuple(dict.fromkeys(out))

    @field_validator("roles", mode="before")
    @classmethod
    def _parse_roles(cls, value: Any) -> tuple[Role, ...]:
        return _memoised(_roles_of, _cached_roles_of, value)

    @field_validator("classes", mode="before")
    @classmethod
    def _parse_classes(cls, value: Any) -> tuple[str, ...]:
        return _memoised(_classes_of, _cached_classes_of, value)

    @model_validator(mode="after")
    def _names_distinct_and_sources_known(self) -> IngredientIn:
        # the names are in display form (their validators made them so): name_key is casefold
        own = self.inci_name.casefold()
        for syn in self.synonyms:
            if syn.casefold() == own:
                raise ValueError(f"synonyms: {syn!r} repeats the INCI name")
        sources = self.sources
        if not _PROPERTY_SET.issuperset(sources):
            for prop in sources:
                if prop not in _PROPERTY_SET:
                    raise ValueError(f"sources: {prop!r} is not a property")
        # a value that is not None was given (every default is None), so only the given
        # fields are looked at: a few of the 25 on a row of a large import, and none when
        # every given field has a source (one set comparison, in C)
        given = self.properties.model_fields_set
        if sources.keys() >= given:
            return self
        values = vars(self.properties)
        if any(values[prop] is not None and prop not in sources for prop in given):
            # the first in PROPERTY_NAMES order (the frozen model's own dict keeps it)
            for prop, value in values.items():
                if value is not None and prop not in sources:
                    raise ValueError(f"{prop}: a value needs a source (give {prop}_source or "
                                     "source)")
        return self


class IngredientRecord(BaseModel):
    """An ingredient as the library holds it, frozen: what rules and reports read."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    id: int
    inci_name: str
    version: int = 1
    retired: bool = False
    synonyms: tuple[str, ...] = ()
    cas_numbers: tuple[str, ...] = ()
    roles: frozenset[Role] = frozenset()
    classes: frozenset[str] = frozenset()
    properties: IngredientProperties = Field(default_factory=IngredientProperties)
    provenance: Mapping[str, Provenance] = {}

    @property
    def p(self) -> IngredientProperties:
        """Short alias used by rules: ``ing.p.hlb``."""
        return self.properties

    def has_role(self, *roles: Role) -> bool:
        return any(r in self.roles for r in roles)
