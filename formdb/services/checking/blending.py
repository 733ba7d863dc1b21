"""Emulsifier proportions for a target HLB: named emulsifiers, a formula's own, or a library search.

- ``blend_for_target``: the weight fractions of named emulsifiers (their HLB and its source from
  the library) that give a target HLB. Two: the lever rule x_A = (t - HLB_B)/(HLB_A - HLB_B)
  (Griffin's additivity). Three or more: the fractions closest to equal shares, by least
  squares, that give the target exactly (``formdb.science.hlb.blend_fractions``).
- ``blend_for_formula``: check a formula file, then solve its own emulsifiers for the required
  HLB of its oil phase (or a given target), starting from the proportions it has.
- ``search_pairs``: every pair of candidate emulsifiers that reaches the target with both
  members inside their typical use range at the given total, and that no incompatibility row
  pairs up. Candidates are weighed-in emulsifiers with an HLB on Griffin's scale (emulsifier
  role, not retired): not soaps (they form in the batch from an acid and a base), not gums or
  proteins (polymers: no HLB in Griffin's sense), not ionic surfactants (Davies' values are not
  averaged with Griffin's). Only pairs on the right side for the type: for W/O both members
  lipophilic (a hydrophilic partner pulls toward O/W); for O/W the higher member hydrophilic.
  The type is the formula's working type, the one given, or the target's Griffin class (W/O at
  or below 6, O/W at or above 8). Ranked by, in order, each reason shown:
    1. no clash with the formula's own ingredients (FILE mode; incompatibility rows);
    2. a lipophilic member with a hydrophilic one (rule of thumb: a low-HLB and a high-HLB
       emulsifier together make a steadier film than either alone); lipophilic means oil-soluble
       in the library, or HLB below 10 when no solubility is recorded (rule of thumb);
    3. a sensible proportion: the minor member at least 20 % of the blend (rule of thumb: less
       is hard to weigh and does little);
    4. a usable HLB spread: the two HLBs at least 2 apart, so the ratio can tune the blend when
       the oil phase's need moves (rule of thumb);
    5. the smaller of the two distances ``max(target - HLB_low, HLB_high - target)``: both
       HLBs close to the target from either side, so a weighing error moves the blend least;
    6. fewer data gaps (use range ends, solubility, ionic character missing; HLB recorded only
       as a rule of thumb or from memory);
    7. the names, alphabetically, so the order is stable.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from itertools import combinations
from pathlib import Path

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.facts.hlb import griffin_members
from formdb.facts.incompatibility import first_incompatibility
from formdb.facts.phases import is_emulsifier, is_hydrocolloid
from formdb.rules.profiles import Profile
from formdb.schemas.blend import BlendMember, BlendPlan, PairCandidate, PairSearch
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.reference import Incompatibility
from formdb.schemas.result import CheckResult, EmulsifierFacts, FormulaFacts
from formdb.schemas.vocab import EmulsionType, Evidence, IonicCharacter, Role, Solubility
from formdb.science.hlb import UnreachableHlb, blend_fractions, blend_hlb, hlb_class, hlb_scale
from formdb.services.checking.flow import check_files
from formdb.store import queries
from formdb.store.library import Library
from formdb.store.models import Ingredient, IngredientRole

DEFAULT_TOTAL_PERCENT = 5.0
LIPOPHILIC_BELOW = 10.0  # rule of thumb: HLB below 10 oil-soluble, above 10 water-soluble
TWO_METHOD = "lever rule of two emulsifiers: x_A = (target - HLB_B) / (HLB_A - HLB_B)"
MANY_METHOD = ("least change from equal shares: of the many proportions that give the target, "
               "the one closest to equal shares (least squares)")
FORMULA_METHOD = ("least change from the formula's present proportions (least squares); two "
                  "emulsifiers by the lever rule")
WEAK_EVIDENCE = (Evidence.RULE_OF_THUMB, Evidence.FROM_MEMORY)
MIN_SHARE = 0.2  # rule of thumb: a minor member below a fifth of the blend is hard to weigh
MIN_SPREAD = 2.0  # rule of thumb: HLBs closer than this leave the ratio nothing to tune
SOAP_CLASS = "carboxylate soap"
IONISED = (IonicCharacter.ANIONIC, IonicCharacter.CATIONIC)


# ----- resolving names --------------------------------------------------------------------

def hlb_source(record: IngredientRecord) -> str:
    """The key and kind of evidence of the library's HLB of an ingredient."""
    prov = record.provenance.get("hlb")
    if prov is None:
        return "no source recorded"
    return f"{prov.source} ({prov.evidence.value})"


def hlb_citation(record: IngredientRecord) -> str | None:
    prov = record.provenance.get("hlb")
    return prov.citation if prov is not None else None


def _unknown_line(session: Session, name: str) -> str:
    suggestions = queries.suggest_names(session, name)
    hint = f"; did you mean {', '.join(suggestions)}?" if suggestions else ""
    return f"--using {name!r}: unknown ingredient{hint}"


def _raise(problems: list[str], hint: str) -> None:
    raise InvalidData.of(problems, hint=hint)


def resolve_emulsifiers(session: Session, names: Sequence[str]) -> list[IngredientRecord]:
    """The library records of the named emulsifiers; one problem line per bad name."""
    found = queries.find_ingredients(session, names)
    problems: list[str] = []
    records: list[IngredientRecord] = []
    seen: dict[int, str] = {}
    for name in names:
        record = found.get(name_key(name))
        if record is None:
            problems.append(_unknown_line(session, name))
        elif record.id in seen:
            problems.append(f"--using {name!r}: names {record.inci_name} again "
                            f"(already given as {seen[record.id]!r})")
        elif record.p.hlb is None:
            problems.append(f"--using {name!r}: {record.inci_name} has no HLB in the library")
        else:
            seen[record.id] = name
            records.append(record)
    if problems:
        _raise(problems, "correct the names, or give the HLB with `formdb ingredient edit`")
    return records


def _notes_for(records: Sequence[IngredientRecord]) -> list[str]:
    notes = []
    for record in records:
        if record.retired:
            notes.append(f"{record.inci_name} is retired in the library")
        if not is_emulsifier(record):
            notes.append(f"{record.inci_name} is not recorded as an emulsifier in the library")
        prov = record.provenance.get("hlb")
        if prov is not None and prov.evidence in WEAK_EVIDENCE:
            notes.append(f"{record.inci_name}: its HLB is {prov.evidence.value}")
    return notes


# ----- named emulsifiers ------------------------------------------------------------------

def _check_target(target: float) -> None:
    if not 0 <= target <= 50:
        raise InvalidData(f"--target {target:g}: an HLB target must lie between 0 and 50",
                          hint="Griffin's scale runs 0-20; ionic emulsifiers reach about 40")


def _solve(target: float, hlbs: Sequence[float], start: Sequence[float] | None,
           what: str) -> tuple[float, ...]:
    try:
        return blend_fractions(target, hlbs, start=start)
    except UnreachableHlb as exc:
        raise _unreachable(what, target, exc.low, exc.high) from None


def blend_for_target(library: Library, target: float, names: Sequence[str],
                     total_percent: float | None = None) -> BlendPlan:
    """The proportions of the named emulsifiers (two or more) that give ``target``."""
    _check_target(target)
    if len(names) < 2:
        raise InvalidData(f"--using given {len(names)} time(s): a blend needs at least two "
                          "emulsifiers", hint="repeat --using for each emulsifier")
    with library.read() as session:
        records = resolve_emulsifiers(session, names)
    hlbs = [float(r.p.hlb) for r in records if r.p.hlb is not None]
    fractions = _solve(target, hlbs, None, f"--target {target:g}")
    members = tuple(
        BlendMember(inci=r.inci_name, hlb=h, hlb_source=hlb_source(r), fraction=f,
                    percent=f * total_percent if total_percent is not None else None,
                    hlb_citation=hlb_citation(r))
        for r, h, f in zip(records, hlbs, fractions, strict=True))
    return BlendPlan(target=target, target_from="given with --target", members=members,
                     method=TWO_METHOD if len(members) == 2 else MANY_METHOD,
                     blend_hlb=blend_hlb(list(zip(fractions, hlbs, strict=True))),
                     reachable_low=min(hlbs), reachable_high=max(hlbs),
                     total_percent=total_percent, notes=tuple(_notes_for(records)))


# ----- a formula's own emulsifiers --------------------------------------------------------

def check_one(library: Library, path: Path, profile: Profile | str | None) -> CheckResult:
    return check_files(library, [path], profile)[0]


def formula_target(facts: FormulaFacts, label: str) -> tuple[float, str]:
    """The required HLB to solve for and where it comes from; InvalidData when there is none."""
    product = facts.kind
    if product is not None and product.kind not in ("emulsion", "soap cream"):
        raise InvalidData(f"{label}: no required HLB to solve for: the formula is a "
                          f"{product.kind} ({product.reason}), not an emulsion",
                          hint="give --target, or kind = \"emulsion\" in the formula")
    if facts.working_type is None:
        raise InvalidData(f"{label}: no required HLB to solve for: the formula states no "
                          "intended_type and no type can be predicted",
                          hint="add intended_type = \"O/W\" or \"W/O\", or give --target")
    kind = facts.working_type
    req = facts.required_hlb_ow if kind == EmulsionType.OW else facts.required_hlb_wo
    if facts.required_hlb is None:
        missing = ", ".join(req.missing) or "no oil-phase ingredient counts toward it"
        cover = facts.required_hlb_coverage
        short = (f"; the values cover {cover:.0%} of the oil phase, below "
                 f"{facts.settings.min_required_hlb_coverage:.0%}"
                 if cover is not None and req.value is not None else "")
        raise InvalidData(f"{label}: no required HLB ({kind.value}) for the oil phase "
                          f"(no value for: {missing}{short})",
                          hint="add the oils' required HLB to the library, or give --target")
    how = "intended" if facts.working_type_source == "intended" else "predicted"
    return facts.required_hlb, f"required HLB ({kind.value}, {how}) of the oil phase"


def _provenance(library: Library, names: Sequence[str]) -> dict[str, tuple[str, str | None]]:
    """(source, citation) of each named emulsifier's HLB; soap not in the library says so."""
    with library.read() as session:
        found = queries.find_ingredients(session, names)
    out: dict[str, tuple[str, str | None]] = {}
    for name in names:
        record = found.get(name_key(name))
        out[name] = ((hlb_source(record), hlb_citation(record)) if record is not None
                     else ("soap formed in the batch, not in the library", None))
    return out


def _unreachable(label: str, target: float, low: float, high: float) -> InvalidData:
    exc = UnreachableHlb(target, low, high)
    return InvalidData(f"{label}: {exc}",
                       hint=f"choose a target between {low:g} and {high:g}, or swap in an "
                            "emulsifier beyond the target")


def _own_fractions(facts: FormulaFacts, known: list[EmulsifierFacts], label: str,
                   target: float | None) -> tuple[float, str, tuple[float, ...]]:
    """(target, where it comes from, fractions): the check's own solution unless a target is
    given, in which case the same least-change solve runs for that target."""
    if target is not None:
        _check_target(target)
        hlbs = [float(e.hlb) for e in known if e.hlb is not None]
        fractions = _solve(target, hlbs, [e.percent for e in known],
                           f"{label}: target HLB {target:g}")
        return target, "given with --target", fractions
    goal, goal_from = formula_target(facts, label)
    sol = facts.blend_solution
    if sol is None or sol.fractions is None:
        low = sol.reachable_low if sol else min(e.hlb or 0.0 for e in known)
        high = sol.reachable_high if sol else max(e.hlb or 0.0 for e in known)
        raise _unreachable(label, goal, low, high)
    return goal, goal_from, sol.fractions


AMPHOTERIC_WHY = ("an amphoteric (zwitterionic) surfactant: its quoted HLB is not on Griffin's "
                  "scale, which is for nonionics")


def _not_proportioned(member: EmulsifierFacts) -> str:
    """Why an emulsifier with an HLB is not one of the members a blend proportions."""
    if member.formed_in_place:
        return "a soap formed in the batch (it changes through its acid and base lines)"
    if member.scale == "davies":
        return "HLB on Davies' scale (ionic), not averaged with Griffin's values"
    if member.percent <= 0:
        return "not weighed in"
    if member.ionic_character == IonicCharacter.AMPHOTERIC:
        return AMPHOTERIC_WHY
    return "a gum or protein (a polymer: no HLB in Griffin's sense)"


def blend_for_formula(library: Library, path: Path, profile: Profile | str | None = None,
                      target: float | None = None) -> BlendPlan:
    """Solve the formula's own emulsifiers for its oil phase's required HLB (or ``target``).

    Without ``target`` the answer is the check's own ``facts.blend_solution`` (least change
    from the present proportions), so ``blend FILE`` and ``check FILE`` always agree.
    """
    result = check_one(library, path, profile)
    facts, label = result.facts, str(path)
    # the members the check itself solves for: an HLB on Griffin's scale (Davies' values of
    # ionic surfactants and soaps, and a gum's HLB, are never averaged with them)
    known = griffin_members(facts.emulsifiers)
    if not known:
        why = ("none in the formula" if not facts.emulsifiers else
               "none has an HLB on Griffin's scale")
        raise InvalidData(f"{label}: no emulsifier with a known HLB to proportion ({why})",
                          hint="add an emulsifier, or use --target with --using")
    goal, goal_from, fractions = _own_fractions(facts, known, label, target)
    hlbs = [float(e.hlb or 0.0) for e in known]
    total = sum(e.percent for e in known)
    sources = _provenance(library, [e.inci for e in known])
    members = tuple(
        BlendMember(inci=e.inci, hlb=h, hlb_source=sources[e.inci][0], fraction=f,
                    percent=f * total, present_percent=e.percent,
                    formed_in_place=e.formed_in_place, hlb_citation=sources[e.inci][1])
        for e, h, f in zip(known, hlbs, fractions, strict=True))
    notes = [f"{e.inci} has no HLB in the library and is left out"
             for e in facts.emulsifiers if e.hlb is None]
    notes += [f"{e.inci}: {_not_proportioned(e)}; left out" for e in facts.emulsifiers
              if e.hlb is not None and e not in known]
    return BlendPlan(target=goal, target_from=goal_from, members=members,
                     method=FORMULA_METHOD,
                     blend_hlb=blend_hlb(list(zip(fractions, hlbs, strict=True))),
                     reachable_low=min(hlbs), reachable_high=max(hlbs), total_percent=total,
                     formula=result.formula, notes=tuple(notes))


# ----- searching the library for pairs ----------------------------------------------------

def library_emulsifiers(session: Session) -> list[IngredientRecord]:
    """Every current library emulsifier with an HLB (fatty acids, whose soap is, left out)."""
    ids = session.scalars(
        select(Ingredient.id).join(IngredientRole, IngredientRole.ingredient_id == Ingredient.id)
        .where(IngredientRole.role == Role.EMULSIFIER.value, Ingredient.retired.is_(False)))
    records = queries.records_by_id(session, list(ids)).values()
    return sorted((r for r in records if r.p.hlb is not None and is_emulsifier(r)),
                  key=lambda r: (r.p.hlb or 0.0, r.inci_name))


def not_a_candidate(record: IngredientRecord) -> str | None:
    """Why an emulsifier is never an HLB partner in a search, or None when it may be one."""
    if SOAP_CLASS in record.classes:
        return "a soap (formed in the batch from its acid and base)"
    if is_hydrocolloid(record):
        return "a gum or protein (a polymer: no HLB in Griffin's sense)"
    if record.p.ionic_character == IonicCharacter.AMPHOTERIC:
        return AMPHOTERIC_WHY
    ionised = record.p.ionic_character in IONISED
    if hlb_scale(float(record.p.hlb or 0.0), ionised) == "davies":
        return "an ionic surfactant (its HLB is on Davies' scale)"
    return None


def search_candidates(records: Sequence[IngredientRecord]
                      ) -> tuple[list[IngredientRecord], tuple[str, ...]]:
    """The records that may be HLB partners, and the others with why they are left out."""
    kept, left = [], []
    for record in records:
        why = not_a_candidate(record)
        if why is None:
            kept.append(record)
        else:
            left.append(f"{record.inci_name}: {why}")
    return kept, tuple(left)


def lipophilic(record: IngredientRecord) -> bool:
    sol = record.p.solubility
    if sol is not None:
        return sol == Solubility.OIL
    return (record.p.hlb or 0.0) < LIPOPHILIC_BELOW


def data_gaps(record: IngredientRecord) -> list[str]:
    p = record.p
    gaps = [f"{record.inci_name}: no {prop}"
            for prop in ("use_min_percent", "use_max_percent", "solubility", "ionic_character")
            if getattr(p, prop) is None]
    prov = record.provenance.get("hlb")
    if prov is not None and prov.evidence in WEAK_EVIDENCE:
        gaps.append(f"{record.inci_name}: HLB {prov.evidence.value}")
    return gaps


def within_use_range(record: IngredientRecord, percent: float) -> bool:
    low, high = record.p.use_min_percent, record.p.use_max_percent
    tol = 1e-9
    return percent > tol and (low is None or percent >= low - tol) and \
        (high is None or percent <= high + tol)


def _member(record: IngredientRecord, fraction: float, total: float) -> BlendMember:
    return BlendMember(inci=record.inci_name, hlb=float(record.p.hlb or 0.0),
                       hlb_source=hlb_source(record), fraction=fraction,
                       percent=fraction * total, hlb_citation=hlb_citation(record))


@dataclass
class _Tally:
    considered: int = 0
    incompatible: int = 0
    use_range: int = 0


def _on_side(a: IngredientRecord, b: IngredientRecord, kind: EmulsionType | None) -> bool:
    """Whether the pair (a below b in HLB) suits the type: W/O both lipophilic, O/W the higher
    member hydrophilic."""
    if kind == EmulsionType.WO:
        return lipophilic(a) and lipophilic(b)
    if kind == EmulsionType.OW:
        return not lipophilic(b)
    return True


def _clashes(a: IngredientRecord, b: IngredientRecord, formula: Sequence[IngredientRecord],
             rows: Sequence[Incompatibility]) -> tuple[str, ...]:
    out = []
    for member in (a, b):
        for other in formula:
            if other.id == member.id:
                continue
            row = first_incompatibility(member, other, rows)
            if row is not None:
                out.append(f"{member.inci_name} with {other.inci_name} ({row.key})")
    return tuple(dict.fromkeys(out))


def _reasons(pair: PairCandidate, with_formula: bool,
             kind: EmulsionType | None) -> tuple[str, ...]:
    """Why the pair ranks where it does, one phrase per criterion of the ranking."""
    low, high = pair.low, pair.high
    spread = high.hlb - low.hlb
    return (
        ("clashes with the formula: " + "; ".join(pair.clashes)) if pair.clashes
        else "no clash with the formula's ingredients" if with_formula else "",
        "a lipophilic with a hydrophilic member" if pair.complementary
        else "both lipophilic, as a W/O system needs" if kind == EmulsionType.WO
        else "both members on one side",
        f"proportion {low.fraction:.0%} : {high.fraction:.0%}"
        + (" (sensible)" if pair.proportion_ok else f" (minor member below {MIN_SHARE:.0%})"),
        f"HLB spread {spread:.1f}" + (" (usable)" if pair.spread_ok
                                      else f" (below {MIN_SPREAD:g}: little to tune)"),
        f"farther HLB {pair.distance:.2f} from the target",
        f"{len(pair.gaps)} data gap{'s' if len(pair.gaps) != 1 else ''}")


def _candidate(a: IngredientRecord, b: IngredientRecord, target: float, total: float,
               rows: Sequence[Incompatibility], tally: _Tally,
               kind: EmulsionType | None = None,
               formula: Sequence[IngredientRecord] = ()) -> PairCandidate | None:
    """The pair (a below b in HLB) as a candidate, or None (counted in ``tally``)."""
    ha, hb = float(a.p.hlb or 0.0), float(b.p.hlb or 0.0)
    if not ha < target < hb:
        return None  # a pair must straddle the target; at an end it is one emulsifier
    if not _on_side(a, b, kind):
        return None
    tally.considered += 1
    if first_incompatibility(a, b, rows) is not None:
        tally.incompatible += 1
        return None
    xa, xb = blend_fractions(target, (ha, hb))
    if not (within_use_range(a, xa * total) and within_use_range(b, xb * total)):
        tally.use_range += 1
        return None
    pair = PairCandidate(low=_member(a, xa, total), high=_member(b, xb, total),
                         complementary=lipophilic(a) != lipophilic(b),
                         distance=max(target - ha, hb - target),
                         gaps=tuple(data_gaps(a) + data_gaps(b)),
                         proportion_ok=min(xa, xb) + 1e-9 >= MIN_SHARE,
                         spread_ok=hb - ha + 1e-9 >= MIN_SPREAD,
                         clashes=_clashes(a, b, formula, rows))
    reasons = tuple(r for r in _reasons(pair, bool(formula), kind) if r)
    return replace(pair, reasons=reasons)


def rank_pairs(records: Sequence[IngredientRecord], target: float, total: float,
               rows: Sequence[Incompatibility], kind: EmulsionType | None = None,
               formula: Sequence[IngredientRecord] = ()) -> tuple[list[PairCandidate], _Tally]:
    """Every passing pair on the right side for ``kind``, best first (the order in the module
    docstring); ``formula`` holds the formula's own records for the clash check."""
    tally = _Tally()
    ordered = sorted(records, key=lambda r: (r.p.hlb or 0.0, r.inci_name))
    found = [c for a, b in combinations(ordered, 2)
             if (c := _candidate(a, b, target, total, rows, tally, kind, formula)) is not None]
    return sorted(found, key=lambda c: c.rank_key), tally


def _check_total(total: float) -> None:
    if not 0 < total <= 100:
        raise InvalidData(f"--total {total:g}: the emulsifier total must be above 0 and at most "
                          "100 % w/w")


def search_type(target: float, kind: EmulsionType | None) -> EmulsionType | None:
    """The type the candidates must suit: the one given, else the target's Griffin class."""
    return kind if kind is not None else hlb_class(target, wo_max=6.0, ow_min=8.0)


def search_pairs(library: Library, target: float, total_percent: float = DEFAULT_TOTAL_PERCENT,
                 limit: int = 10, target_from: str = "given with --target",
                 formula: str | None = None, kind: EmulsionType | None = None,
                 formula_names: Sequence[str] = ()) -> PairSearch:
    """The best ``limit`` compatible pairs of library emulsifiers that reach ``target``."""
    _check_target(target)
    _check_total(total_percent)
    with library.read() as session:
        records = library_emulsifiers(session)
        rows = queries.load_reference_data(session).incompatibilities
        own = list(dict.fromkeys(
            r.id for r in queries.find_ingredients(session, formula_names).values()))
        own_records = list(queries.records_by_id(session, own).values()) if own else []
    candidates, left_out = search_candidates(records)
    side = search_type(target, kind)
    ranked, tally = rank_pairs(candidates, target, total_percent, rows, side, own_records)
    notes = () if side is not None else (
        f"target HLB {target:g} lies between Griffin's W/O and O/W classes: no side filter",)
    return PairSearch(target=target, target_from=target_from, total_percent=total_percent,
                      candidates=tuple(ranked[:limit]), found=len(ranked),
                      considered=tally.considered, excluded_incompatible=tally.incompatible,
                      excluded_use_range=tally.use_range, emulsifiers=len(candidates),
                      formula=formula, notes=notes,
                      emulsion_type=side.value if side is not None else None,
                      excluded_kinds=left_out)


def search_for_formula(library: Library, path: Path, profile: Profile | str | None = None,
                       total_percent: float | None = None, limit: int = 10,
                       target: float | None = None,
                       kind: EmulsionType | None = None) -> PairSearch:
    """Pairs for a formula's required HLB (or ``target``), at its present emulsifier total
    unless ``total_percent`` is given."""
    result = check_one(library, path, profile)
    if target is None:
        goal, goal_from = formula_target(result.facts, str(path))
    else:
        goal, goal_from = target, "given with --target"
    total = total_percent
    if total is None:
        present = sum(e.percent for e in result.facts.emulsifiers
                      if e.scale == "griffin") or result.facts.emulsifier_percent
        total = present if present > 0 else DEFAULT_TOTAL_PERCENT
    names = [line.inci for line in result.facts.lines]
    return search_pairs(library, goal, total, limit, goal_from, result.formula,
                        kind or result.facts.working_type, names)
