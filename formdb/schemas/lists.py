"""Regulatory list entries as structured data: the Commission's annex exports, parsed.

An entry keeps its substance identity (names, every CAS and EC number), its parts (a), (b), (c)
with the scope each one covers and its maximum, the conditions and the labelling wording. What
could not be parsed is kept verbatim (``unparsed``) and shown to a reviewer as a condition to
confirm by hand: nothing of the text is dropped.
"""

from __future__ import annotations

from datetime import date

from pydantic import BaseModel, ConfigDict, Field

ANNEXES = ("II", "III", "IV", "V", "VI")
ANNEX_TITLES = {
    "II": "prohibited substances",
    "III": "restricted substances",
    "IV": "allowed colorants",
    "V": "allowed preservatives",
    "VI": "allowed UV filters",
}
# what a line's ``purpose`` may say; entries restricted to or excluding preservative use compare
# against "preservative"
PURPOSES = ("preservative", "uv filter", "colorant", "fragrance", "ph adjuster", "solvent",
            "active", "emulsifier", "conditioning", "other")
# the extended allergen list of Regulation (EU) 2023/1545 binds products placed on the Union
# market from this date (Article 2; from memory of the regulation text)
ALLERGEN_EXTENSION_PLACING = date(2026, 7, 31)
ALLERGEN_EXTENSION_AVAILABLE = date(2028, 7, 31)
ALLERGEN_EXTENSION_ACT = "(EU) 2023/1545"
# how a report names a limit list made of hand-written rows (the seed's, for a few entries)
HAND_WRITTEN = " (hand-written seed rows)"


def export_list_name(annex: str, export: str) -> str:
    """How a report names an imported annex: ``export`` is "FILE, file created DD/MM/YYYY"."""
    return f"Regulation (EC) No 1223/2009 Annex {annex} (Commission export {export})"


class Alternative(BaseModel):
    """One of several product groups a scope joins with "and" or commas, where they differ in
    kind: "Other leave-on products and oral products" is leave-on products OR oral products."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    categories: tuple[str, ...] = ()
    areas: tuple[str, ...] = ()
    products: tuple[str, ...] = ()


class Scope(BaseModel):
    """Which products a part covers, from the free text of "Product Type, body parts".

    Positive terms (``categories``, ``areas``, ``products``, ``purposes``) narrow the part;
    ``other`` is the catch-all "other products" (less the ``excluded_*`` terms); ``not_in`` names
    forms the part excludes (``spray``). ``text`` is the cell as written; ``unparsed`` the words
    that matched no term.
    """

    model_config = ConfigDict(defer_build=True, frozen=True)

    text: str = ""
    categories: tuple[str, ...] = ()
    areas: tuple[str, ...] = ()
    products: tuple[str, ...] = ()
    purposes: tuple[str, ...] = ()
    other: bool = False
    excluded_areas: tuple[str, ...] = ()
    excluded_products: tuple[str, ...] = ()
    not_in: tuple[str, ...] = ()
    professional: bool = False
    unparsed: str = ""
    alternatives: tuple[Alternative, ...] = ()  # when set, any one of them (the flat terms are
    # their union, for display)

    @property
    def empty(self) -> bool:
        return not (self.categories or self.areas or self.products or self.purposes
                    or self.other or self.excluded_areas or self.excluded_products
                    or self.not_in)


class Exclusion(BaseModel):
    """A product group a part's "Other" text rules out ("Not to be used in oral products"), with
    the substance it is said of when the text gives each substance its own paragraph ("Salicylic
    acid: ... Not to be used in oral products"; empty: every substance of the entry)."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    words: str  # the sentence as written
    scope: Scope
    substance: str = ""


class Part(BaseModel):
    """One part of an entry: its scope, maximum and conditions."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    label: str | None = None  # "a", "b", ... ; None for an entry without parts
    scope: Scope = Field(default_factory=Scope)
    max_percent: float | None = None
    max_text: str = ""
    basis: str | None = None  # "as acid", "as free SO2", "of Hg", ... as the text says
    # each (the maximum for each substance, summed over the entry's substances when several are
    # present: one entry, one maximum) | sum (the text says so) | single (the text says the
    # maximum is for a single substance: "0,4 % (as acid) for single ester")
    aggregate: str = "each"
    mixture_max: float | None = None  # the maximum for mixtures where "single" has its own
    # a maximum for substances of several entries together, on this part's basis: those of the
    # entries ``joint_refs`` names (V/12a: "0,8 % (as acid) for mixtures of substances mentioned
    # in entry 12 and 12a"), or the substances ``joint_names`` names (III/287: "the sum of the
    # individual concentrations of cetrimonium chloride, steartrimonium chloride and
    # behentrimonium chloride"; III/89: "in combination with methyl octine carbonate, the
    # combined level ... shall not exceed 0,01 %")
    joint_max: float | None = None
    joint_refs: tuple[str, ...] = ()  # the entries' reference numbers, this entry's included
    joint_names: tuple[str, ...] = ()  # the substances' names as written, this entry's included
    all_uses: bool = False  # "These levels are inclusive of any use of ...": every purpose counts
    exclusions: tuple[Exclusion, ...] = ()
    further_limits: tuple[str, ...] = ()  # more maxima in the cell (mixtures, professional use)
    ph_min: float | None = None
    ph_max: float | None = None
    conditions: tuple[str, ...] = ()  # conditions that need a person (children, sprays, ...)
    other: str = ""  # the "Other" text for this part, verbatim
    labelling: str = ""  # wording of conditions of use and warnings, verbatim
    unparsed: tuple[str, ...] = ()  # text that became no structure: confirm by hand

    @property
    def structured(self) -> bool:
        """True when scope and maximum were parsed without leftovers."""
        return not self.unparsed and not self.scope.unparsed

    @property
    def name(self) -> str:
        return f"part ({self.label})" if self.label else "the entry"


class ListEntry(BaseModel):
    """One entry of an annex as the Commission's export gives it, structured."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    jurisdiction: str = "EU"
    annex: str
    ref: str  # the reference number as written ("12 a" reads "12a")
    key: str  # unique in the annex: ref, or ref plus the substance where the export repeats it
    chemical_name: str = ""
    inci_names: tuple[str, ...] = ()
    cas_numbers: tuple[str, ...] = ()
    ec_numbers: tuple[str, ...] = ()
    parts: tuple[Part, ...] = ()
    purpose: str | None = None  # preservative | not-preservative | None
    allergen: bool = False  # named on the label above 0.001 % leave-on / 0.01 % rinse-off
    # an Annex II entry that prohibits the substance only "except if ..." (petroleum and coal
    # tar substances whose refining history clears them): the exception, verbatim
    exception: str = ""
    # an Annex II entry that prohibits the substance in one use only ("when used as a substance
    # in hair dye products", "when used as a fragrance ingredient"): the words, and the use as a
    # scope (its products, or the purpose)
    only_when: str = ""
    only_when_scope: Scope | None = None
    regulation: str = ""
    update_date: date | None = None
    cells: dict[str, str] = {}  # every cell of the row, verbatim
    # names the export misspells, each "AS EXPORTED read as AS WRITTEN (why)": the name as
    # written is among ``inci_names`` beside the misspelt one, so a formula finds the entry
    misspelt: tuple[str, ...] = ()

    @property
    def label(self) -> str:
        return f"{self.jurisdiction} Annex {self.annex}/{self.key}"

    @property
    def moved(self) -> bool:
        """A number the Commission keeps for an entry moved or deleted: it names nothing."""
        return self.chemical_name.casefold() == "moved or deleted" and not self.inci_names

    @property
    def record_names(self) -> tuple[str, ...]:
        """The names a formula uses for what the entry names: its INCI (or chemical) names, or,
        where it gives none short enough to be a name (a class such as "radioactive substances",
        a petroleum stream or a reaction mass described in 200+ characters), its reference form
        ("EU Annex II/293"): stable across exports, short, and unmistakably the entry itself."""
        if self.inci_names or self.moved:
            return self.inci_names
        return (self.label,)

    @property
    def title(self) -> str:
        names = ", ".join(self.inci_names[:3]) or self.chemical_name[:80]
        return f"{self.label} ({names})"

    @property
    def extended_allergen(self) -> bool:
        """An allergen added by Regulation (EU) 2023/1545 (not among the 2009 entries 45, 67-92)."""
        return self.allergen and not _original_allergen(self.ref)


def _original_allergen(ref: str) -> bool:
    """The 26 allergens of the 2009 text: Annex III entries 45 and 67 to 92 (from memory of the
    regulation as adopted)."""
    digits = "".join(ch for ch in ref if ch.isdigit())
    return digits.isdigit() and (int(digits) == 45 or 67 <= int(digits) <= 92) and \
        ref.strip().isdigit()


class SnapshotInfo(BaseModel):
    """An imported annex export: which annex, its two dates, the file's hash."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    id: int | None = None
    jurisdiction: str = "EU"
    annex: str
    file_name: str
    file_created: date
    last_update: date
    file_hash: str
    entries: int
    imported_at: str | None = None
    imported_by: str | None = None
    in_force: bool = True


class SnapshotStatus(BaseModel):
    """A snapshot in force, and the entries this version of formdb reads differently from the
    reading stored when the export was imported (an import by an older formdb)."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    snapshot: SnapshotInfo
    read_differently: tuple[str, ...] = ()


class EntryChange(BaseModel):
    """One entry added, removed or changed by a newer export (old -> new per cell)."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    annex: str
    key: str
    kind: str  # added | removed | changed
    title: str
    details: tuple[str, ...] = ()


class AnnexImport(BaseModel):
    """What importing one export did (or would do, on a dry run)."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    snapshot: SnapshotInfo
    replaces: SnapshotInfo | None = None
    parts: int
    structured_parts: int
    unparsed: tuple[str, ...] = ()  # "III/2a part (a): text" for every part not structured
    changes: tuple[EntryChange, ...] = ()
    ingredients_created: int = 0
    unchanged: bool = False  # the same file is already in force
    # the same file in force, read again by a newer formdb: the entries it now reads differently
    reread: tuple[str, ...] = ()

    @property
    def coverage(self) -> float:
        return self.structured_parts / self.parts if self.parts else 1.0


class ListsImport(BaseModel):
    """The whole import: every annex, and what it touches among stored formulas and runs."""

    model_config = ConfigDict(defer_build=True, frozen=True)

    annexes: tuple[AnnexImport, ...]
    dry_run: bool
    touched_formulas: tuple[str, ...] = ()
    stale_runs: tuple[str, ...] = ()
    # stored formulas re-checked before and after (default profile): what their findings did
    formula_changes: tuple[str, ...] = ()

    @property
    def parts(self) -> int:
        return sum(a.parts for a in self.annexes)

    @property
    def structured_parts(self) -> int:
        return sum(a.structured_parts for a in self.annexes)
