"""The library's controlled vocabularies: roles, solubility, ionic character, evidence, classes.

Values are lower case; ``parse_choice`` accepts any case and ``_``/``-`` for spaces, so a supplier
table that writes ``Fatty_Alcohol`` still lands as ``fatty alcohol``.
"""

from __future__ import annotations

from enum import StrEnum
from functools import cache, lru_cache


class Role(StrEnum):
    EMULSIFIER = "emulsifier"
    CO_EMULSIFIER = "co-emulsifier"
    OIL = "oil"
    WAX = "wax"
    BUTTER = "butter"
    FATTY_ALCOHOL = "fatty alcohol"
    FATTY_ACID = "fatty acid"
    EMOLLIENT = "emollient"
    SILICONE = "silicone"
    HUMECTANT = "humectant"
    THICKENER = "thickener"
    ELECTROLYTE = "electrolyte"
    PRESERVATIVE = "preservative"
    PH_ADJUSTER = "ph adjuster"
    NEUTRALISER = "neutraliser"
    ACTIVE = "active"
    ANTIOXIDANT = "antioxidant"
    FRAGRANCE = "fragrance"
    ALLERGEN = "allergen"
    UV_FILTER = "uv filter"
    SOLVENT = "solvent"
    WATER = "water"
    CHELATOR = "chelator"
    COLOURANT = "colourant"
    PIGMENT = "pigment"


class Solubility(StrEnum):
    WATER = "water"
    OIL = "oil"
    DISPERSIBLE = "dispersible"
    INSOLUBLE = "insoluble"


class IonicCharacter(StrEnum):
    ANIONIC = "anionic"
    CATIONIC = "cationic"
    NONIONIC = "nonionic"
    AMPHOTERIC = "amphoteric"
    NONE = "none"


class Evidence(StrEnum):
    """How much a value can be trusted; every stored value carries one."""

    PUBLISHED = "published"
    SUPPLIER = "supplier"
    MEASURED = "measured"
    ESTIMATED = "estimated"
    RULE_OF_THUMB = "rule of thumb"
    FROM_MEMORY = "from memory"
    DEFINITION = "definition"  # true by what the words mean (water is water-soluble)
    SECONDARY = "secondary copy"  # seen only in someone else's copy: not yet checked at source


# Grades a reviewer must still check: EVD01 reports them, and the seed counts them as unverified.
UNVERIFIED_EVIDENCE: frozenset[Evidence] = frozenset(
    {Evidence.FROM_MEMORY, Evidence.RULE_OF_THUMB, Evidence.SECONDARY})


class SourceKind(StrEnum):
    """The kinds of evidence the trade cites; each sets the grade of the values citing it."""

    REGULATION = "regulation"
    PEER_REVIEWED = "peer-reviewed publication"
    HANDBOOK = "handbook"
    SUPPLIER_DATA_SHEET = "supplier data sheet"
    CERTIFICATE_OF_ANALYSIS = "certificate of analysis"
    MEASUREMENT = "in-house measurement"
    ESTIMATE = "estimate"
    SECONDARY_COPY = "secondary copy"
    FROM_MEMORY = "from memory"
    RULE_OF_THUMB = "rule of thumb"
    DEFINITION = "definition"


KIND_GRADE: dict[SourceKind, Evidence] = {
    SourceKind.REGULATION: Evidence.PUBLISHED,
    SourceKind.PEER_REVIEWED: Evidence.PUBLISHED,
    SourceKind.HANDBOOK: Evidence.PUBLISHED,
    SourceKind.SUPPLIER_DATA_SHEET: Evidence.SUPPLIER,
    SourceKind.CERTIFICATE_OF_ANALYSIS: Evidence.SUPPLIER,
    SourceKind.MEASUREMENT: Evidence.MEASURED,
    SourceKind.ESTIMATE: Evidence.ESTIMATED,
    SourceKind.SECONDARY_COPY: Evidence.SECONDARY,
    SourceKind.FROM_MEMORY: Evidence.FROM_MEMORY,
    SourceKind.RULE_OF_THUMB: Evidence.RULE_OF_THUMB,
    SourceKind.DEFINITION: Evidence.DEFINITION,
}


class Category(StrEnum):
    LEAVE_ON = "leave-on"
    RINSE_OFF = "rinse-off"


class EmulsionType(StrEnum):
    OW = "O/W"
    WO = "W/O"


class Severity(StrEnum):
    ERROR = "error"
    WARNING = "warning"
    INFO = "info"

    @property
    def rank(self) -> int:
        return {"error": 3, "warning": 2, "info": 1}[self.value]


# Compatibility classes: what the incompatibility table (seed_data/incompatibilities.csv) pairs up.
# An ingredient belongs to any number of them; soap formed in the batch joins "carboxylate soap".
COMPAT_CLASSES: dict[str, str] = {
    "sulfate anionic": "anionic surfactant with a sulfate or sulfonate head group",
    "carboxylate soap": "fatty-acid soap (carboxylate anionic), bought or formed in the batch",
    "quaternary cationic": "quaternary ammonium surfactant or preservative",
    "amphoteric surfactant": "betaine or other zwitterionic surfactant",
    "anionic polymer": "polyanionic thickener such as carbomer",
    "electrolyte-sensitive thickener": "thickener whose viscosity collapses with dissolved salts",
    "monovalent salt": "salt of a monovalent cation that raises ionic strength",
    "divalent salt": "salt of a divalent or polyvalent metal cation",
    "paraben": "ester of 4-hydroxybenzoic acid",
    "high-HLB ethoxylate": "ethoxylated nonionic that can bind phenolic preservatives in micelles",
    "alkanolamine": "ethanolamine that can form nitrosamines",
    "nitrosating agent": "substance that can nitrosate amines",
    "benzoate": "benzoic acid or a benzoate salt",
    "ascorbic acid": "ascorbic acid or an ascorbate",
    "protein colloid": "protein that a strong ionic surfactant denatures or precipitates",
    "metal oxide": "metal oxide pigment or filter that dissolves in acid",
    "strong acid": "acid strong enough to break a neutralised polymer gel",
}


@lru_cache(maxsize=1 << 12)  # a small vocabulary, compared for every pair of formula lines
def norm_token(text: str) -> str:
    """Lower case, ``_``/spaces collapsed: the comparable form of a vocabulary word."""
    return " ".join(text.replace("_", " ").split()).casefold()


@cache
def _choice_index(enum_cls: type[StrEnum]) -> dict[str, StrEnum]:
    """Token -> member, the first member whose value or name gives the token winning."""
    index: dict[str, StrEnum] = {}
    for member in enum_cls:
        index.setdefault(norm_token(member.value), member)
        index.setdefault(norm_token(member.name), member)
    return index


def parse_choice(enum_cls: type[StrEnum], text: str, field: str) -> StrEnum:
    """Turn user text into an enum member or raise ValueError naming the field and the choices."""
    found = _choice_index(enum_cls).get(norm_token(text))
    if found is not None:
        return found
    choices = ", ".join(m.value for m in enum_cls)
    raise ValueError(f"{field}: {text!r} is not one of: {choices}")


def parse_class(text: str) -> str:
    token = norm_token(text)
    for name in COMPAT_CLASSES:
        if norm_token(name) == token:
            return name
    raise ValueError(f"classes: {text!r} is not a known compatibility class "
                     f"({', '.join(COMPAT_CLASSES)})")
