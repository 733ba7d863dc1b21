"""Which part of a list entry applies to a formula line, and why (machinery: registers no rule).

A part's scope was parsed from free text (formdb.services.lists.parse); here it is compared with
what the formula says: its category, its product (the SCCS exposure table's product types) and
the line's purpose. Each comparison is True, False or None (the formula does not say enough),
so a rule can name both readings instead of passing silently or failing falsely.
"""

from __future__ import annotations

from dataclasses import dataclass

from formdb.schemas.formula import ResolvedFormula, ResolvedLine
from formdb.schemas.ingredient import IngredientRecord
from formdb.schemas.lists import ListEntry, Part, Scope
from formdb.schemas.vocab import Role


@dataclass(frozen=True)
class Product:
    """What a product type of the exposure table is, in the words the annexes use."""

    areas: frozenset[str]
    products: frozenset[str] = frozenset()
    maybe: frozenset[str] = frozenset()  # it may or may not be one of these (a stick or a roll-on)
    spray: bool = False


def _p(areas: str, products: str = "", maybe: str = "", spray: bool = False) -> Product:
    def split(text: str) -> frozenset[str]:
        return frozenset(t.strip() for t in text.split(",") if t.strip())
    return Product(split(areas), split(products), split(maybe), spray)


# the product types of seed_data/exposure.csv (SCCS Notes of Guidance Table 3A)
PRODUCTS: dict[str, Product] = {
    "body lotion": _p("body", "body lotion"),
    "face cream": _p("face", "face cream"),
    "hand cream": _p("hand", "hand cream"),
    "liquid foundation": _p("face", "make-up"),
    "deodorant non-spray": _p("body", "deodorant", maybe="roll-on deodorant"),
    "deodorant spray": _p("body", "deodorant, spray", spray=True),
    "lipstick": _p("lip", "lipstick"),
    "shower gel": _p("body", "shower gel"),
    "shampoo": _p("hair", "shampoo", maybe="anti-dandruff shampoo"),
    "hair styling": _p("hair", maybe="spray, hair lotion"),
    "hair conditioner": _p("hair"),
    "toothpaste": _p("oral", "toothpaste"),
    "mouthwash": _p("oral", "mouthwash"),
    # SCCS NoG 12 Table 3A/3B sun care (whole-body amounts: body products) and eye make-up
    "sunscreen lotion": _p("body"),
    "sunscreen cream": _p("body"),
    "eye make-up": _p("eye", "eye make-up", maybe="eye shadow, mascara, eyeliner"),
    "mascara": _p("eye", "mascara, eye make-up"),
    "eyeliner": _p("eye", "eyeliner, eye make-up"),
    "make-up remover": _p("face, eye", "make-up remover"),
}

# library roles that say what a line is for (the first word the annexes would use)
_ROLE_PURPOSE = {
    Role.PRESERVATIVE: "preservative", Role.UV_FILTER: "uv filter", Role.COLOURANT: "colorant",
    Role.PIGMENT: "colorant", Role.FRAGRANCE: "fragrance", Role.PH_ADJUSTER: "ph adjuster",
    Role.NEUTRALISER: "ph adjuster", Role.SOLVENT: "solvent", Role.ACTIVE: "active",
    Role.EMULSIFIER: "emulsifier", Role.CO_EMULSIFIER: "emulsifier",
    Role.THICKENER: "other", Role.HUMECTANT: "other", Role.OIL: "other", Role.WAX: "other",
    Role.EMOLLIENT: "other", Role.ANTIOXIDANT: "other", Role.CHELATOR: "other",
}


def line_purpose(line: ResolvedLine | None, record: IngredientRecord) -> tuple[str | None, str]:
    """(purpose, where it comes from): the line's ``purpose`` key, else the library's roles when
    they name one purpose only, else None (the formula does not say)."""
    if line is not None and line.purpose:
        return line.purpose, "the line's purpose"
    found = {_ROLE_PURPOSE[r] for r in record.roles if r in _ROLE_PURPOSE}
    if len(found) == 1:
        return next(iter(found)), "the library's roles of the ingredient"
    return None, ""


FORMS = ("spray", "powder")


def _group_fits(categories: tuple[str, ...], areas: tuple[str, ...], products: tuple[str, ...],
                category: str, product: Product | None) -> bool | None:
    """A category and a kind of product (or body area) named together: both must hold.

    A spray or a powder among the products is the form the product must take ("body lotion
    spray/aerosol"), asked of the product besides its kind (below), never instead of it."""
    states: list[bool | None] = []
    if categories:
        states.append(category in categories)
    kinds = set(products) - set(FORMS)
    if areas or kinds:
        if product is None:
            states.append(None)
        elif product.areas & _areas(areas) or product.products & kinds:
            states.append(True)
        else:
            states.append(None if product.maybe & kinds else False)
    return _all(*states)


def _has_form(product: Product, form: str) -> bool | None:
    """Whether a product type of the table is sold in ``form`` (None: it may or may not be)."""
    if form == "spray" and product.spray:
        return True
    return None if form in product.maybe else False


def purpose_fits(entry: ListEntry, purpose: str | None) -> bool | None:
    """Whether an entry restricted to (or excluding) preservative use applies to ``purpose``."""
    if entry.purpose is None:
        return True
    if purpose is None:
        return None
    is_preservative = purpose == "preservative"
    return is_preservative if entry.purpose == "preservative" else not is_preservative


def _all(*states: bool | None) -> bool | None:
    if any(s is False for s in states):
        return False
    if any(s is None for s in states):
        return None
    return True


# "skin products" are the face's, the body's, the hands' and the feet's alike (III/12 (b), III/324
# (a) leave-on skin products 0.06 %: a face cream is one); the mucous membranes a product is
# applied on are the lips' and the mouth's (Annex IV colorants "not to be used in products applied
# on mucous membranes" are not for lipsticks or toothpastes)
_AREAS = {"skin": ("body", "face", "hand", "foot"), "mucous membrane": ("lip", "oral")}


def _areas(areas: tuple[str, ...]) -> set[str]:
    return {a for area in areas for a in _AREAS.get(area, (area,))}


def scope_fits(scope: Scope, formula: ResolvedFormula, purpose: str | None) -> bool | None:
    """True, False or None (not enough said) for one part's scope against the formula."""
    if scope.empty:
        return True
    body = formula.formula
    product = PRODUCTS.get((body.product or "").strip().casefold())
    states: list[bool | None] = []
    if scope.alternatives:
        fits = [_group_fits(a.categories, a.areas, a.products, body.category.value, product)
                for a in scope.alternatives]
        states.append(True if True in fits else (None if None in fits else False))
    else:
        states.append(_group_fits(scope.categories, scope.areas, scope.products,
                                  body.category.value, product))
    states.extend(None if product is None else _has_form(product, form)
                  for form in FORMS if form in scope.products)
    if scope.excluded_areas or scope.excluded_products:
        if product is None:
            states.append(None)
        elif product.areas & _areas(scope.excluded_areas) or \
                product.products & set(scope.excluded_products):
            # exceptions read from text the parser did not wholly understand ("except
            # spray/aerosol body lotion") may exclude less than they seem to: a person decides
            states.append(None if scope.unparsed else False)
        elif product.maybe & set(scope.excluded_products):
            states.append(None)
        else:
            states.append(True)
    if scope.not_in:
        states.append(None if product is None else
                      (False if product.spray else (None if "spray" in product.maybe else True)))
    if scope.purposes:
        states.append(None if purpose is None else purpose in scope.purposes)
    return _all(*states)


@dataclass(frozen=True)
class PartFit:
    part: Part
    fits: bool | None


def parts_for(entry: ListEntry, formula: ResolvedFormula, purpose: str | None
              ) -> list[PartFit]:
    """Every part with whether it applies; an "other products" part applies only where no
    sibling part does (and is open while a sibling is)."""
    fits = [PartFit(p, scope_fits(p.scope, formula, purpose)) for p in entry.parts]
    specific = [f for f in fits if not f.part.scope.other]
    out = []
    for fit in fits:
        if fit.part.scope.other and len(entry.parts) > 1:
            siblings = [f.fits for f in specific if f is not fit]
            if any(s is True for s in siblings):
                fit = PartFit(fit.part, False)
            elif any(s is None for s in siblings) and fit.fits is True:
                fit = PartFit(fit.part, None)
        out.append(fit)
    return out


def why(formula: ResolvedFormula, purpose: str | None, purpose_from: str) -> str:
    """What the choice rested on, in words."""
    body = formula.formula
    said = [f"category {body.category.value}"]
    said.append(f"product {body.product!r}" if body.product else "no product named")
    if purpose:
        said.append(f"purpose {purpose!r} ({purpose_from})")
    return ", ".join(said)
