"""Turn the free text of an annex row into structure: identity, parts, scope, maximum, conditions.

The export writes multi-part conditions as "(a) ... (b) ..." inside one cell, several CAS numbers
per cell, bases such as "(acid)", "calculated as ..." and "of Hg", and product types in free
text. What the patterns here do not recognise stays verbatim in ``unparsed`` and is shown to a
reviewer as a condition to confirm by hand.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from formdb.errors import InvalidData
from formdb.schemas.cas import cas_is_valid
from formdb.schemas.lists import Alternative, Exclusion, ListEntry, Part, Scope
from formdb.services.lists.annex_file import REF, parse_day

_NAME_COLUMNS = ("Name of Common Ingredients Glossary",
                 "Colour index Number / Name of Common Ingredients Glossary")
PRODUCT = "Product Type, body parts"
MAXIMUM = "Maximum concentration in ready for use preparation"
OTHER = "Other"
WORDING = "Wording of conditions of use and warnings"
IDENTIFIED = "Identified INGREDIENTS or substances e.g."

_CAS = re.compile(r"(?<![\d-])(\d{2,7}-\d{2}-\d)(?![\d-])")
_EC = re.compile(r"(?<![\d-])(\d{3}-\d{3}-\d)(?![\d-])")
# "(a)", "a)", "(b)" at the start of a line or after a space; "(i)" sub-parts are not parts
_MARKER = re.compile(r"(?:(?<=^)|(?<=[\s.;:]))\(?([a-z])\)(?=[\s(]|\d|$)", re.MULTILINE)
_SUB_PART = re.compile(r"(?:^|[\s(])ii\)")
_PERCENT = re.compile(r"(\d+(?:[.,]\d+)?)\s*(%|ppm|mg/kg)", re.IGNORECASE)  # 1 mg/kg = 1 ppm
_SOFT_HYPHEN = "\u00ad"


def clean(text: str) -> str:
    """Soft hyphens out, runs of white space as one space."""
    return " ".join(text.replace(_SOFT_HYPHEN, "").split())


# ----- identity -------------------------------------------------------------------------------

_FOOTNOTE = re.compile(r"\s*(\(\d+\)|\[\d+\]|\*+)\s*$")


def _name(text: str) -> str:
    name = clean(text)
    while True:
        stripped = _FOOTNOTE.sub("", name).strip(" ,;.")
        if stripped == name:
            return name
        name = stripped


_AND = re.compile(r"\s+\(?and\)?\s+", re.I)


def is_mixture(name: str) -> bool:
    """An INCI name of a mixture, "A (AND) B" or "A AND B"."""
    return bool(_AND.search(name))


def split_names(glossary: str, identified: str) -> tuple[str, ...]:
    """Every INCI name the row gives, in order, once each.

    The glossary cell separates names with "/", ";" or ", "; a "/" inside a name (SODIUM/TEA-...,
    CAPRYLIC/CAPRIC ...) is kept unless the pieces are names the row identifies on their own.
    The identified cell separates with "," (not inside "1,4-..." where a digit follows).
    """
    known = [_name(n) for n in re.split(r",(?!\d)", identified)]
    known = [n for n in known if n and n != "-"]
    known_keys = {n.casefold() for n in known}
    out: list[str] = []
    for chunk in re.split(r"\s+/\s*|\s*/\s+|;|,\s+|\n", glossary):
        chunk = _name(chunk)
        if not chunk or chunk == "-":
            continue
        pieces = [_name(p) for p in chunk.split("/")]
        if len(pieces) > 1 and all(p.casefold() in known_keys for p in pieces if p):
            out.extend(p for p in pieces if p)
        else:
            out.append(chunk)
    # a mixture's INCI name ("A (AND) B"): its components named alone elsewhere in the row are
    # parts of the mixture, not entries of their own (V/39 is not methylisothiazolinone alone)
    parts = {p.casefold() for n in out if _AND.search(n) for p in _AND.split(n)}
    own = {n.casefold() for n in out}
    out.extend(n for n in known if n.casefold() in own or n.casefold() not in parts)
    seen: set[str] = set()
    unique = []
    for name in out:
        if name.casefold() not in seen and len(name) <= 200:
            seen.add(name.casefold())
            unique.append(name)
    return tuple(unique)


# INCI names the Commission's export misspells, by (annex, reference, name as exported): the
# name as written, and why it is that name. An entry that misspells the only name and CAS
# number of a substance would never find a formula's line of it (III/286 gives the CAS number
# of cetrimonium chloride alone), so its limit would pass unseen.
MISSPELT: dict[tuple[str, str, str], tuple[str, str]] = {
    ("III", "286", "STRARTRIMONIUM CHLORIDE"): (
        "STEARTRIMONIUM CHLORIDE",
        "the entry's chemical names are C16- and C18-alkyltrimethylammonium chloride (exported "
        "'C18-alkyltrimethyammonium chloride'), whose INCI names are cetrimonium chloride and "
        "steartrimonium chloride"),
}


def corrected_names(annex: str, ref: str, names: tuple[str, ...]
                    ) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """(the names with each misspelt one followed by the name as written, the notes)."""
    out: list[str] = []
    notes: list[str] = []
    for name in names:
        out.append(name)
        fix = MISSPELT.get((annex, ref, name.upper()))
        if fix is not None:
            out.append(fix[0])
            notes.append(f"the export's {name} is {fix[0]}: {fix[1]}")
    return tuple(dict.fromkeys(out)), tuple(notes)


def cas_numbers(text: str) -> tuple[str, ...]:
    """Every CAS number written in the cell that passes its check digit."""
    return tuple(dict.fromkeys(c for c in _CAS.findall(text) if cas_is_valid(c)))


def ec_numbers(text: str) -> tuple[str, ...]:
    return tuple(dict.fromkeys(_EC.findall(text)))


# an Annex II prohibition limited to one use, at the end of the chemical name: "..., when used as
# a substance in hair dye products" (150 entries of 31/10/2025), "..., when used as a fragrance
# ingredient" (32 entries)
_ONLY_WHEN = re.compile(r"[,;]?\s*\bwhen used as (?:a )?(?:substance in |fragrance ingredient)"
                        r"[^;]*$", re.I)


def only_when(chemical_name: str) -> str:
    """The use an Annex II prohibition is limited to ("when used as a fragrance ingredient"), or
    "" for a prohibition in every use."""
    found = _ONLY_WHEN.search(clean(chemical_name))
    return found.group(0).strip(" ,;.") if found else ""


def only_when_scope(words: str) -> Scope | None:
    """The use as a scope: the hair (and eyelash) dye products, or the fragrance purpose."""
    low = words.casefold()
    if "fragrance" in low:
        return Scope(text=words, purposes=("fragrance",))
    products = []
    if "hair" in low:
        products.append("hair dye")
    if "eyelash" in low or "eyebrow" in low:
        products.append("eyelash product")
    return Scope(text=words, products=tuple(products)) if products else None


def chemical_names(text: str) -> tuple[str, ...]:
    """Names under which a chemical-name cell can be matched: the INN and the plain name (less a
    use the prohibition is limited to: "Benzyl cyanide, when used as a fragrance ingredient" is
    benzyl cyanide)."""
    name = _ONLY_WHEN.sub("", clean(text))
    names = [inn.strip() for inn in re.findall(r"([A-Za-z][\w\- ]+?)\s*\(INN\)", name)]
    plain = re.sub(r"\s*\((INN|see note[^)]*)\)", "", name)
    plain = re.split(r",? (and|its|their) (its |their )?(salts|esters|ethers)", plain)[0]
    if plain and len(plain) <= 200:
        names.append(plain.strip(" ,;"))
    return tuple(dict.fromkeys(n for n in names if n))


# ----- parts ----------------------------------------------------------------------------------

def _markers(text: str) -> list[re.Match[str]]:
    """The part markers of a cell. (a)-(h) anywhere; a later letter only where it continues the
    run from the letter before it (III/324 methyl salicylate runs to (n)), and "(i)" then only
    when no "(ii)" follows it: "(a) (i) 8 % (ii) 11 %" numbers the sub-parts of part (a)."""
    out: list[re.Match[str]] = []
    last = ""
    for match in _MARKER.finditer(text):
        letter = match.group(1)
        follows = bool(last) and ord(letter) == ord(last) + 1
        if letter <= "h" or (follows and not (letter == "i"
                                              and _SUB_PART.search(text, match.end()))):
            out.append(match)
            last = letter
    return out


# "For (a) and (b):", "For a) and b):", "(a) and (b):" heading the words of both parts
_FOR_PARTS = re.compile(r"(?:(?:\(\s*)?\bFor\s+\(?([a-h])\)\s*(?:and|,)\s*\(?([a-h])\)\s*[:,]?"
                        r"|(?<![\w(])\(?([a-h])\)\s*and\s*\(?([a-h])\)\s*:)")
# "(a) to (e):" heading words for every part from (a) to (e) (III/297)
_PART_RANGE = re.compile(r"(?:(?:\(\s*)?\bFor\s+)?(?<![\w])\(?([a-h])\)\s*to\s*\(?([a-h])\)\s*:")


def split_parts(text: str) -> tuple[str, dict[str, str]]:
    """(text for every part, {label: text}) of a cell written "(a) ... (b) ...".

    A run of markers with nothing between ("(a) (b) (c) Avoid contact...") gives its text to each,
    and so does a heading that names parts ("For (a) and (b): After mixing ...", 38 cells of
    31/10/2025, whose part (b) had lost the words).
    """
    text = _PART_RANGE.sub(lambda m: " ".join(f"({chr(c)})" for c in range(
        ord(m.group(1)), ord(m.group(2)) + 1)) + " ", text)
    text = _FOR_PARTS.sub(lambda m: f"({m.group(1) or m.group(3)}) ({m.group(2) or m.group(4)}) ",
                          text)
    matches = _markers(text)
    if not matches:
        return text.strip(), {}
    common = text[:matches[0].start()].strip()
    parts: dict[str, str] = {}
    pending: list[str] = []
    for i, match in enumerate(matches):
        end = matches[i + 1].start() if i + 1 < len(matches) else len(text)
        body = text[match.end():end].strip()
        pending.append(match.group(1))
        if body:
            for label in pending:
                parts[label] = f"{parts[label]}\n{body}" if label in parts else body
            pending = []
    for label in pending:
        parts.setdefault(label, "")
    return common, parts


def _number(text: str) -> float:
    return float(text.replace(",", "."))


def _as_percent(number: str, unit: str) -> float:
    """A figure of the text in % (ppm and mg/kg are ten-thousandths of a per cent)."""
    return _number(number) / (10_000 if unit.lower() in ("ppm", "mg/kg") else 1)


_BASIS = (
    (re.compile(r"\(\s*acid\s*\)|as (the )?acid|expressed as acid", re.I), "as acid"),
    (re.compile(r"free SO\s*2|as SO\s*2", re.I), "as free SO2"),
    (re.compile(r"\bof Hg\b|as Hg\b", re.I), "of Hg"),
    (re.compile(r"calculated as ([\w\- ,()]+?)(?:[.;\n]|$)", re.I), None),
    (re.compile(r"expressed as ([\w\- ,()]+?)(?:[.;\n]|$)", re.I), None),
)
_SUM = re.compile(r"\bsum of\b|\bin total\b|\bindividually or\b|\bcombined\b|\btotal\b", re.I)
# the maximum is for one substance of the entry alone, a mixture has its own figure (V/12: "0,4 %
# (as acid) for single ester, 0,8 % (as acid) for mixtures of esters")
_SINGLE = re.compile(r"\bfor (?:a )?single\b|\bsingle (?:ester|substance|salt)\b", re.I)
_MIXTURE = re.compile(r"\bfor mixtures?\b", re.I)


def mixture_maximum(text: str) -> float | None:
    """The maximum a "single"-substance cell gives for mixtures ("0,8 % (as acid) for mixtures of
    esters"), or None."""
    for segment in re.split(r"\n+|(?<=[a-z])\s*;\s*", text):
        found = _PERCENT.search(segment)
        if found and _MIXTURE.search(segment):
            return _as_percent(found.group(1), found.group(2))
    return None


# V/12a: "0,8% (as acid) for mixtures of substances mentioned in entry 12 and 12a"
_JOINT_ENTRIES = re.compile(
    r"(\d+(?:[.,]\d+)?)\s*(%|ppm|mg/kg)[^%\n]*?\bfor mixtures of substances (?:mentioned|listed|"
    r"referred to) in entr(?:y|ies)\s+(\d+\s*[a-z]?(?:\s*(?:,|and|&)\s*\d+\s*[a-z]?)+)\b", re.I)
# III/287: "5,0% for the individual concentration of behentrimonium chloride or the sum of the
# individual concentrations of cetrimonium chloride, steartrimonium chloride and behentrimonium
# chloride, while ..."
_JOINT_SUM = re.compile(
    r"(\d+(?:[.,]\d+)?)\s*(%|ppm|mg/kg)\s*for the individual concentration of [^,;\n]+? or the "
    r"sum of the individual concentrations of ([^;.\n]+?)(?=,\s*while\b|[;.\n]|$)", re.I)
_LIST_SPLIT = re.compile(r"\s*,\s*|\s+and\s+", re.I)
# a substance used with one of another entry: VI/27, VI/30, VI/33 (a substance and its nano
# form): "In case of combined use of Titanium Dioxide and Titanium Dioxide (nano), the sum shall
# not exceed the limit of 25%" (or "the limit given in column g", the entry's own maximum);
# III/308: "In case of combined use with Tagetes patula (entry 309), the total combined content
# of Tagetes ... shall not exceed the maximum concentration limits given in column g"; III/89:
# "When present in combination with methyl octine carbonate, the combined level in the finished
# product shall not exceed 0,01 %"
_JOINT_COMBINED = re.compile(
    r"\bin (?:case of combined use|combination) (?:of (.+?) and (.+?)|with ([^,;\n]+?))\s*,\s*"
    r"the (?:sum|total combined content|combined level)\b([^;\n]*?)(?:shall|should) not "
    r"exceed([^;\n]*)", re.I)
_ENTRY_NUMBER = re.compile(r"\(\s*entry\s+(?:No\s*)?(\d+\s*[a-z]?)\s*\)", re.I)
_OWN_LIMIT = re.compile(r"column \(?g\)?|maximum concentration limits? given", re.I)


def _ref_key(ref: str) -> str:
    """A reference number as ``Part.joint_refs`` holds it ("12 a" -> "12a")."""
    return ref.replace(" ", "").casefold()


def _combined_use(text: str, own_names: tuple[str, ...], own_max: float | None
                  ) -> tuple[float | None, tuple[str, ...], tuple[str, ...]]:
    found = _JOINT_COMBINED.search(text)
    if not found:
        return None, (), ()
    limit = _PERCENT.search(found.group(5))
    if limit:
        maximum: float | None = _as_percent(limit.group(1), limit.group(2))
    elif _OWN_LIMIT.search(found.group(5)):
        maximum = own_max
    else:
        return None, (), ()
    if found.group(3):  # "with X (entry N)": the other entry by its number, this one by names
        other = found.group(3)
        refs = tuple(_ref_key(r) for r in _ENTRY_NUMBER.findall(other))
        name = _ENTRY_NUMBER.sub("", other).strip()
        if not own_names and not refs:
            return None, (), ()  # nothing names this entry's own substances
        return maximum, refs, (*own_names, *((name,) if name else ()))
    return maximum, (), (found.group(1).strip(), found.group(2).strip())


def joint_maximum(text: str, own_names: tuple[str, ...] = (), own_max: float | None = None
                  ) -> tuple[float | None, tuple[str, ...], tuple[str, ...]]:
    """(the maximum, the entries' reference numbers, the substances' names) of a cell that gives
    one maximum for substances of several entries together, or (None, (), ())."""
    found = _JOINT_ENTRIES.search(text)
    if found:
        refs = tuple(_ref_key(r)
                     for r in re.findall(r"\d+\s*[a-z]?(?![a-z])", found.group(3), re.I))
        return _as_percent(found.group(1), found.group(2)), refs, ()
    found = _JOINT_SUM.search(text)
    if found:
        names = tuple(n.strip() for n in _LIST_SPLIT.split(found.group(3)) if n.strip())
        if len(names) > 1:
            return _as_percent(found.group(1), found.group(2)), (), names
    return _combined_use(text, own_names, own_max)


def parse_maximum(text: str) -> tuple[float | None, str | None, str, tuple[str, ...], bool]:
    """(max %, basis, aggregate, further limits, parsed) of one part's maximum cell text."""
    found = _PERCENT.findall(text)
    basis = None
    for pattern, name in _BASIS:
        match = pattern.search(text)
        if match:
            basis = name or _basis_name(match.group(1))
            break
    aggregate = "sum" if _SUM.search(text) else "single" if _SINGLE.search(text) else "each"
    if not found:
        return None, basis, aggregate, (), not clean(text)
    values = [_as_percent(n, unit) for n, unit in found]
    further: tuple[str, ...] = ()
    if len(set(values)) > 1:
        # later maxima (mixtures, professional use, other forms) are kept for a person to read
        segments = [clean(s) for s in re.split(r"\n+|(?<=%)\s*(?:and|;)\s*", text) if clean(s)]
        further = tuple(s for s in segments if _PERCENT.search(s))[1:] or (clean(text),)
    return values[0], basis, aggregate, further, True


# ----- scope ----------------------------------------------------------------------------------

# free-text words -> (kind, term); longest phrases first so "body lotion" wins over "body"
_TERMS: tuple[tuple[str, str, str], ...] = (
    (r"rinse[- ]?off", "category", "rinse-off"),
    (r"leave[- ]?on|non[- ]rinse[- ]off", "category", "leave-on"),
    (r"body lotions?", "product", "body lotion"),
    (r"face creams?", "product", "face cream"),
    (r"hand creams?", "product", "hand cream"),
    (r"eye ?shadows?", "product", "eye shadow"),
    (r"mascaras?", "product", "mascara"),
    (r"eye ?liners?", "product", "eyeliner"),
    (r"lipsticks?", "product", "lipstick"),
    (r"roll[- ]on deodorants?", "product", "roll-on deodorant"),
    (r"deodorants?|anti-?perspirants?", "product", "deodorant"),
    (r"(?:rinse-off )?anti-? ?dandruff shampoos?", "product", "anti-dandruff shampoo"),
    (r"shampoos?", "product", "shampoo"),
    (r"hair lotions?", "product", "hair lotion"),
    (r"astringent lotions?", "product", "astringent lotion"),
    (r"tooth (?:whitening|bleaching)(?: or bleaching)?", "product", "tooth whitening"),
    (r"eye make-?up", "product", "eye make-up"),
    (r"make-?up remover", "product", "make-up remover"),
    (r"face make-?up", "product", "make-up"),
    (r"hand wash|hand soaps?", "product", "hand wash"),
    (r"tooth ?pastes?", "product", "toothpaste"),
    (r"mouth ?(?:wash|rinse)e?s?", "product", "mouthwash"),
    (r"shower gels?|body soaps?", "product", "shower gel"),
    (r"soaps?", "product", "soap"),
    (r"depilator(?:y|ies)", "product", "depilatory"),
    (r"(?:non-? ?)oxidati?v?e hair d[ayu]e?s?(?: products?)?|non-oxidising colouring agents",
     "product", "non-oxidative hair dye"),
    (r"oxidati?v?e hair d[ayu]e?s?(?: products?)?|oxidising colouring agents|hair dyeing",
     "product", "oxidative hair dye"),
    (r"hair d[ayu]e s[ua]b\S*stance|hair d[ayu]es?", "product", "hair dye"),
    (r"hair (?:waving|straighten\w*)|straighten\w*", "product", "hair straightener"),
    (r"self[- ]tanning", "product", "self-tanning"),
    (r"nail (?:hardening|hardener)s?", "product", "nail hardener"),
    (r"artificial nail systems?", "product", "artificial nail"),
    (r"(?:fine )?fragrance(?: cream)?|eau de toilette", "product", "fragrance"),
    (r"colouring eyelashes(?: and eyebrows)?|eyelash waving|intent?ed for colouring", "product",
     "eyelash product"),
    # a powder is a form, like a spray ("face products in loose powder form"); face powders
    # are a kind of product of their own
    (r"face powders?", "product", "face powder"),
    (r"(?:loose )?powd(?:ery|ers?)(?: form)?", "product", "powder"),
    (r"hair|head", "area", "hair"),
    (r"face|facial", "area", "face"),
    (r"eyes?\b|eyelash\w*|eyebrows?", "area", "eye"),
    (r"lips?\b", "area", "lip"),
    (r"oral(?: care)?|teeth|tooth|mouth\b", "area", "oral"),
    (r"nails?|cuticles?", "area", "nail"),
    (r"hands?\b", "area", "hand"),
    (r"foot|feet", "area", "foot"),
    (r"body", "area", "body"),
    (r"skin", "area", "skin"),
    (r"mucous membranes?", "area", "mucous membrane"),
    (r"ph[- ]?ad?juster", "purpose", "ph adjuster"),
    (r"solvents?", "purpose", "solvent"),
    (r"preservatives?", "purpose", "preservative"),
    (r"stabili[sz]er", "purpose", "stabiliser"),
    (r"denaturant", "purpose", "denaturant"),
    (r"rust inhibitor", "purpose", "rust inhibitor"),
    (r"fragrance/ ?aromatic compositions?|aromatic compositions?", "purpose", "fragrance"),
)
_TERM_RE = [(re.compile(rf"\b(?:{pattern})", re.I), kind, term) for pattern, kind, term in _TERMS]
_SPRAY = re.compile(r"(?:(?:propell[ae]nt|pump|aerosol)"
                    r"(?:\s+(?:and|or)\s+(?:propell[ae]nt|pump))?)?\s*sprays?|aerosols?", re.I)
# "non-spray" names a form excluded; "including ... spray products" widens a scope, never
# narrows it to sprays
_NON_SPRAY = re.compile(r"\bnon-?\s*sprays?\b", re.I)
_INCLUDING_SPRAY = re.compile(r"\bincluding\b[^;,.]*?sprays?(?:\s+products?)?", re.I)
_FILLER = re.compile(
    r"\b(?:products?|produts|producrs|cosmetic|all|for|in|the|of|and|or|with|to|be|used|only|intended|"
    r"substances?|s[ua]b\S*stances?|ready|use|uses|as|applied|on|a|an|form|forms|general|"
    r"professional|other|others|except|excluding|exception|not|than|including|care|"
    r"containing|preparations?|designed|application|types?|loose|powdery?|powders?|"
    r"raw|materials?|their|following|lotions?|e\.g|non)\b",
    re.I)


def _terms(text: str) -> tuple[dict[str, list[str]], str]:
    found: dict[str, list[str]] = {"category": [], "product": [], "area": [], "purpose": []}
    rest = text
    for pattern, kind, term in _TERM_RE:
        if pattern.search(rest):
            if term not in found[kind]:
                found[kind].append(term)
            rest = pattern.sub(" ", rest)
    return found, rest


_BRACKETED_EXCEPTION = re.compile(r"\(\s*(?:except(?:ing|ion)?|excluding|with the exception of)\b"
                                  r"([^()]*)\)", re.I)


def parse_scope(text: str) -> Scope:
    """The structured scope of a "Product Type, body parts" text (one part)."""
    body = clean(text)
    if not body or body == "-":
        return Scope(text=body)
    low = body.casefold()
    negative = re.search(r"\bnot to be used in\b|\bnot in\b", low)
    exception = re.search(r"\b(?:except(?:ing|ion)?|excluding|with the exception of|other "
                          r"than)\b", low)
    positive_text, excluded_text = body, ""
    bracketed = list(_BRACKETED_EXCEPTION.finditer(body))
    if negative:
        positive_text, excluded_text = body[:negative.start()], body[negative.end():]
    elif bracketed:
        # "Leave-on skin products (except face makeup, ...) and leave on hair products (except
        # spray/aerosol products)": each exception is its bracket, the rest is what is covered
        positive_text = _BRACKETED_EXCEPTION.sub(" ", body)
        excluded_text = " ".join(m.group(1) for m in bracketed)
    elif exception:
        positive_text, excluded_text = body[:exception.start()], body[exception.end():]
    not_in: list[str] = []
    if _NON_SPRAY.search(positive_text):
        not_in.append("spray")
        positive_text = _NON_SPRAY.sub(" ", positive_text)
    positive_text = _INCLUDING_SPRAY.sub(" ", positive_text)
    if _SPRAY.search(excluded_text):
        not_in = ["spray"]
        excluded_text = _SPRAY.sub(" ", excluded_text)
    if _SPRAY.search(positive_text) and not negative and not exception:
        positive_text = _SPRAY.sub(" sprayproduct ", positive_text)
    alternatives = _alternatives(positive_text)
    found, rest = _terms(positive_text)
    gone, rest_ex = _terms(excluded_text)
    other = bool(re.search(r"\b(?:other|others|all|any)\b", positive_text, re.I)) \
        or bool(negative)
    products = found["product"]
    if "sprayproduct" in rest.casefold():
        products.append("spray")
        rest = re.sub("sprayproduct", " ", rest, flags=re.I)
    leftover = clean(_FILLER.sub(" ", f"{rest} {rest_ex}").strip(" ,.;:()/-*'\"0123456789"))
    leftover = re.sub(r"^[\s,.;:()/*'\"-]+|[\s,.;:()/*'\"-]+$", "", leftover)
    return Scope(
        text=body, categories=tuple(found["category"]), areas=tuple(found["area"]),
        products=tuple(products), purposes=tuple(found["purpose"]),
        other=other,
        excluded_areas=tuple(gone["area"]),
        excluded_products=tuple(gone["product"] + gone["category"]),
        not_in=tuple(not_in), professional="professional" in low,
        unparsed=leftover if len(leftover) > 2 else "", alternatives=alternatives)


_JOINS = re.compile(r",|;|\band\b|\bor\b", re.I)


def _alternatives(text: str) -> tuple[Alternative, ...]:
    """The product groups of a scope joined by "and", "or" or commas, when some name a category
    and others do not ("Other leave-on products and oral products"): then any one of them is
    covered, not their intersection. () where the flat terms say the same."""
    groups = []
    for chunk in _JOINS.split(text):
        found, _rest = _terms(chunk)
        if found["category"] or found["area"] or found["product"]:
            groups.append(Alternative(categories=tuple(found["category"]),
                                      areas=tuple(found["area"]),
                                      products=tuple(found["product"])))
    with_category = [bool(g.categories) for g in groups]
    if len(groups) < 2 or all(with_category) or not any(with_category):
        return ()
    return tuple(groups)


# ----- conditions -----------------------------------------------------------------------------

_CONDITIONS = (
    (re.compile(r"children under (3|three)|under (3|three) years", re.I),
     "children under 3 years"),
    (re.compile(r"professional use", re.I), "professional use only"),
    (re.compile(r"spray|aerosol|inhalation|lungs", re.I),
     "not in sprays / no exposure of the lungs"),
    (re.compile(r"oral products?", re.I), "oral products"),
    (re.compile(r"nitrosat", re.I), "not with nitrosating systems"),
    (re.compile(r"purity|impurit", re.I), "purity requirement"),
    (re.compile(r"nano", re.I), "nano form requirements"),
    (re.compile(r"eyes?\b", re.I), "contact with the eyes"),
    (re.compile(r"from \d{1,2} \w+ \d{4}", re.I), "a dated transition"),
)
_PH = re.compile(r"pH\s*(?:(?:from\s*)?(\d+(?:[.,]\d+)?)\s*(?:to|-)\s*|(?:up to|not (?:more|"
                 r"greater) than|below|<=?|≤|maximum|max\.?)\s*(?:pH)?\s*)"
                 r"(\d+(?:[.,]\d+)?)|up to pH\s*(\d+(?:[.,]\d+)?)", re.I)
_NOT_PRESERVATIVE = re.compile(r"other than inhibiting|other than (?:as a )?preservati", re.I)
_AS_PRESERVATIVE = re.compile(r"\bas (?:a )?preservative\b", re.I)
_EXCEPT = re.compile(r"\b(?:except|unless|with the exception of)\b", re.I)
# Art. 19(1)(g) of the Regulation; III/76 cinnamal still cites Art. 6(1)(g) of Directive
# 76/768/EEC, the same labelling condition
_ALLERGEN = re.compile(r"list of ingredients referred to in Article (?:19|6)\b", re.I)


def conditions_of(text: str) -> tuple[str, ...]:
    return tuple(dict.fromkeys(name for pattern, name in _CONDITIONS if pattern.search(text)))


def ph_limits(text: str) -> tuple[float | None, float | None]:
    match = _PH.search(text)
    if not match:
        return None, None
    low, high, up_to = match.groups()
    top = high or up_to
    return (_number(low) if low else None), (_number(top) if top else None)


# ----- the entry ------------------------------------------------------------------------------

def _labels(*cells: dict[str, str]) -> list[str]:
    return sorted({label for cell in cells for label in cell})


def parse_entry(annex: str, row: Mapping[str, str], key: str) -> ListEntry:
    """One row of the export as a ListEntry (every cell kept verbatim in ``cells``)."""
    glossary = next((row[c] for c in _NAME_COLUMNS if c in row), "")
    names = split_names(glossary, row.get(IDENTIFIED, ""))
    chem = clean(row.get("Chemical name / INN", row.get("Chemical name", "")))
    if not names and chem.casefold() != "moved or deleted":
        names = tuple(_name(n) for n in chemical_names(chem)[:1])  # no INCI name: the chemical one
    # soft hyphens split the words the patterns look for ("ap\u00adplied to hair", III/200):
    # the cells are read without them (and kept verbatim in ``cells``)
    product, maximum, other = (row.get(c, "").replace(_SOFT_HYPHEN, "")
                               for c in (PRODUCT, MAXIMUM, OTHER))
    if annex == "IV" and not _PERCENT.search(maximum) and clean(maximum):
        # the Annex IV export gives the field of application under "Maximum concentration" and
        # the maximum under "Other" (the Regulation's columns g and h as exported)
        product, maximum, other = maximum, other if _PERCENT.search(other) else "", \
            "" if _PERCENT.search(other) else other
    wording = row.get(WORDING, "").replace(_SOFT_HYPHEN, "")
    parts = _parts(annex, product, maximum, other, wording, names) if annex != "II" else ()
    whole = f"{product}\n{other}\n{maximum}"
    purpose = None
    if _NOT_PRESERVATIVE.search(whole):
        purpose = "not-preservative"
    elif annex == "V" or _AS_PRESERVATIVE.search(product):
        purpose = "preservative"
    exception = ""
    if annex == "II" and (found := _EXCEPT.search(chem)):
        exception = chem[found.start():]
    use = only_when(chem) if annex == "II" else ""
    ref = clean(row[REF]).replace(" ", "")
    names, misspelt = corrected_names(annex, ref, names)
    return ListEntry(
        annex=annex, ref=ref, key=key, chemical_name=chem, misspelt=misspelt,
        exception=exception, only_when=use, only_when_scope=only_when_scope(use) if use else None,
        inci_names=names, cas_numbers=cas_numbers(row.get("CAS Number", "")),
        ec_numbers=ec_numbers(row.get("EC Number", "")), parts=parts, purpose=purpose,
        allergen=annex == "III" and bool(_ALLERGEN.search(other)),
        regulation=clean(row.get("Regulation", "")),
        update_date=parse_day(row.get("Update Date", "")), cells=dict(row))


# a maximum cell that carries the scope itself when the product type cell is empty: V/57
# "0,0015 % Rinse-off products", V/7 "0,15 % (as phenol) in leave-on and 0,2 % (as phenol) in
# rinse-off cosmetic products"
_SCOPED_MAX = re.compile(r"(\d+(?:[.,]\d+)?\s*(?:%|ppm))\s*(\([^)]*\))?\s*(?:in\s+)?"
                         r"((?:leave|rinse)[- ]?(?:on|off)\b(?:\s+(?:cosmetic\s+)?products?)?)",
                         re.I)


def _scoped_maxima(product: str, maximum: str) -> list[tuple[str, str]]:
    """(maximum text, scope text) per figure of a maximum cell that names its own product
    category, or [] when the product type cell speaks or a figure has no category."""
    if clean(product) or _MARKER.search(maximum):
        return []
    found = _SCOPED_MAX.findall(maximum)
    if not found or len(found) != len(_PERCENT.findall(maximum)):
        return []
    return [(clean(f"{figure} {basis}"), clean(scope)) for figure, basis, scope in found]


def _parts(annex: str, product: str, maximum: str, other: str, wording: str,
           names: tuple[str, ...] = ()) -> tuple[Part, ...]:
    if scoped := _scoped_maxima(product, maximum):
        return tuple(_part(None, scope, figure, clean(other), clean(wording), names)
                     for figure, scope in scoped)
    p_common, p_parts = split_parts(product)
    m_common, m_parts = split_parts(maximum)
    o_common, o_parts = split_parts(other)
    w_common, w_parts = split_parts(wording)
    labels: list[str | None] = [*_labels(p_parts, m_parts)] or [None]
    out = []
    for label in labels:
        scope_text = p_parts.get(label, "") if label else p_common
        if label and p_common and not p_parts:
            scope_text = p_common
        max_text = (m_parts.get(label, "") if label else "") or m_common
        other_text = "\n".join(t for t in (o_common, o_parts.get(label, "") if label else "")
                               if t.strip())
        words = "\n".join(t for t in (w_common, w_parts.get(label, "") if label else "")
                          if t.strip())
        part = _part(label, scope_text, max_text, other_text, words, names)
        if part.basis is None and (every := _FOR_EVERY_PART.search(maximum)):
            # "The abovementioned percentages are calculated as thioglycollic acid" (III/2a),
            # written after the last part, is the basis of every part
            part = part.model_copy(update={"basis": _basis_name(every.group(1))})
        out.append(part)
    return tuple(out)


_FOR_EVERY_PART = re.compile(r"above-?\s?mentioned (?:percentages|concentrations) are "
                             r"(?:calculated|expressed) as ([\w\- ]+)", re.I)


def _basis_name(substance: str) -> str:
    """The basis a part states, as "as acid" where it names the parent acid ("calculated as
    thioglycollic acid": the salts and esters are converted to it)."""
    name = clean(substance).strip(" ,")
    if name.endswith(")") and name.count(")") > name.count("("):
        name = name[:-1].rstrip()  # "(calculated as hydrochloride)": the bracket closes
    return "as acid" if name.casefold().endswith(" acid") else f"as {name}"


# oxidative hair dyes: "after mixing under oxidative conditions the maximum concentration applied
# to hair must not exceed 2,0 %", written under "Maximum" or under "Other"
# (the export's typos too: "concentraion", "concentratio", "eyeslashes")
_ON_HAIR = re.compile(r"maximum (?:use )?concentrat?i?o?n? applied to (?:the )?"
                      r"(hair or eye\w*|hair|eyelashes)\s+must not exceed\s*(\d+(?:[.,]\d+)?)\s*%",
                      re.I)


def _part(label: str | None, scope_text: str, max_text: str, other: str,
          wording: str, own_names: tuple[str, ...] = ()) -> Part:
    scope = parse_scope(scope_text)
    max_percent, basis, aggregate, further, parsed = parse_maximum(max_text)
    on_hair = _ON_HAIR.search(f"{max_text}\n{other}")
    if on_hair and (max_percent is None or max_percent == _number(on_hair.group(2))):
        # the figure is the mixed product's on the hair: a dye as sold is diluted by mixing, so
        # a formula within it is within, and one over it is for a person to work out
        max_percent = _number(on_hair.group(2))
        basis = f"applied to the {on_hair.group(1).casefold()} after mixing" + \
            (f", {basis}" if basis else "")
    unparsed: list[str] = []
    if not parsed:
        unparsed.append(f"maximum: {clean(max_text)}")
    if scope.unparsed:
        unparsed.append(f"product type: {scope.text}")
    ph_min, ph_max = ph_limits(f"{other}\n{max_text}")
    text = f"{max_text}\n{other}\n{wording}"
    joint_max, joint_refs, joint_names = joint_maximum(f"{max_text}\n{other}", own_names,
                                                       max_percent)
    return Part(label=label, scope=scope, max_percent=max_percent, max_text=clean(max_text),
                basis=basis, aggregate=aggregate, further_limits=further, ph_min=ph_min,
                mixture_max=mixture_maximum(max_text) if aggregate == "single" else None,
                joint_max=joint_max, joint_refs=joint_refs, joint_names=joint_names,
                all_uses=bool(_ALL_USES.search(other)), exclusions=exclusions(other),
                ph_max=ph_max, conditions=conditions_of(text), other=clean(other),
                labelling=clean(wording), unparsed=tuple(unparsed))


# III/98: "These levels are inclusive of any use of salicylic acid" (the preservative use of
# V/3 counts towards the maximum too)
_ALL_USES = re.compile(r"inclusive of any use", re.I)
_NOT_IN = re.compile(r"\bnot (?:to be )?used in ([^.;\n]+)", re.I)
# sentences about a person or a form, which stay conditions for a person (LIM04): an age group,
# the lungs, sprays
_PERSONAL = re.compile(r"child|years|age\b|lungs|inhal|spray|aerosol|nappy", re.I)
# a paragraph of the "Other" text that names the substance it is about ("Salicylic acid:")
_HEADING = re.compile(r"^\s*([A-Za-z][\w ,()-]{2,60}):\s*$")


def exclusions(other: str) -> tuple[Exclusion, ...]:
    """The product groups "Not to be used in ..." rules out, where the words name product types
    or body areas formdb knows and nothing else (the rest stays a condition for a person)."""
    out: list[Exclusion] = []
    substance = ""
    for line in other.splitlines():
        heading = _HEADING.match(line)
        if heading:
            substance = clean(heading.group(1))
            continue
        for found in _NOT_IN.finditer(line):
            words = clean(found.group(0))
            # "products for children under 3 years of age, in oral products and in eye and lip
            # products": each group on its own; a spray named beside them stays a condition
            for group in re.split(r",\s*(?:and\s+)?in\s+|\s+and in\s+", found.group(1)):
                group = _SPRAY_GROUP.sub(" ", group)
                if _PERSONAL.search(group):
                    continue
                scope = parse_scope(group)
                if scope.unparsed or scope.other or not (scope.areas or scope.products):
                    continue
                out.append(Exclusion(words=words, scope=scope, substance=substance))
    return tuple(out)


_SPRAY_GROUP = re.compile(r",?\s*(?:and|or)?\s*(?:propellant\s+)?spray products?", re.I)


def entry_keys(annex: str, rows: list[tuple[int, dict[str, str]]]) -> list[str]:
    """A key per row, unique in the annex: the reference number, or, where the export repeats a
    number for another substance (it does: III/196, II/38, ...), the number with the
    substance's first name (and the amending act when the name repeats too).

    Two rows with the same number, the same substance (a shared name or CAS number) and the same
    amending act are one entry given twice: InvalidData naming both lines.
    """
    refs = [clean(row[REF]).replace(" ", "") for _, row in rows]
    counts: dict[str, int] = {}
    for ref in refs:
        counts[ref] = counts.get(ref, 0) + 1
    keys: list[str] = []
    seen: dict[str, list[tuple[int, set[str], str]]] = {}
    for ref, (line, row) in zip(refs, rows, strict=True):
        if counts[ref] == 1:
            keys.append(ref)
            continue
        glossary = next((row[c] for c in _NAME_COLUMNS if c in row), "")
        names = split_names(glossary, row.get(IDENTIFIED, ""))
        chem = clean(row.get("Chemical name / INN", row.get("Chemical name", "")))
        identity = {n.casefold() for n in names} | set(cas_numbers(row.get("CAS Number", ""))) \
            | {chem.casefold()}
        regulation = clean(row.get("Regulation", ""))
        for other_line, other_identity, other_regulation in seen.get(ref, []):
            if identity & other_identity and regulation == other_regulation:
                raise InvalidData(
                    f"line {line}, field {REF!r}: duplicate reference number {ref!r} "
                    f"(line {other_line} gives the same substance under the same act "
                    f"{regulation or '(none)'})",
                    hint="an annex export lists each entry once; download the export again")
        seen.setdefault(ref, []).append((line, identity, regulation))
        label = names[0] if names else chem[:60]
        key = f"{ref} [{label}]"
        if key.casefold() in {k.casefold() for k in keys}:
            key = f"{ref} [{label}, {regulation}]"
        keys.append(key)
    return keys
