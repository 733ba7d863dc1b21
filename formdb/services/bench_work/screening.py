"""Screening series: find an oil phase's required HLB at the bench, and keep it as library data.

plan   an oil phase (oils and their shares, or a formula's oil phase) emulsified with a pair of
       emulsifiers whose blend HLB steps across a range; every blend is a formula of its own
       (water, oil phase, the pair) with its weigh sheet; the plan is stored.
record the lab's observations of a blend (stability score, separated layer, droplet size).
fit    the required HLB at the peak (formdb.science.screening, method and sources there),
       refused without a clear optimum; ``store`` keeps it as an in-house measurement whose
       source is the series with its observations, graded measured. The check then uses it for
       a formula whose oil phase matches (formdb.facts.hlb).
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path

import tomli_w
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from formdb.errors import Conflict, InvalidData, NotFound, quoted
from formdb.facts.compute import compute_facts
from formdb.schemas.admin import Action
from formdb.schemas.bench import (
    ScreeningBlend,
    ScreeningFit,
    ScreeningNote,
    ScreeningSeries,
    WeighSheet,
)
from formdb.schemas.ingredient import IngredientRecord, name_key
from formdb.schemas.numbers import ascii_float
from formdb.schemas.vocab import EmulsionType, Evidence, Role, SourceKind
from formdb.science import screening as science
from formdb.services.admin.access import require
from formdb.services.bench_work.weigh_sheets import build_sheet
from formdb.services.checking.flow import input_from_text, read_inputs, resolve_all
from formdb.store import queries
from formdb.store.change_log import log_entry
from formdb.store.library import Library
from formdb.store.models import (
    OilPhaseMeasurement,
    ScreeningBlendRow,
    ScreeningObservation,
    Source,
)
from formdb.store.models import ScreeningSeries as SeriesRow

# measure -> (unit, higher is better)
MEASURES: Mapping[str, tuple[str, bool]] = {
    "stability": ("score 0-10, 10 = no change", True),
    "separation_percent": ("% of the sample's height as a cream or serum layer", False),
    "droplet_um": ("mean droplet diameter, µm", False),
}
DROPLET_MIN_UM = 0.001  # the smallest drop a formula file may state (schemas.formula)
FIT_METHOD = ("least-squares parabola through the best blend and its neighbours within two "
              "steps; vertex = required HLB; expanded uncertainty (about 95 %) by propagation "
              "of the fit's covariance with Student's t (formdb.science.screening)")
FIT_SOURCES = ("Griffin, J. Soc. Cosmet. Chem. 1 (1949) 311 (the screening method); Wangpradit "
               "et al., OCL 29 (2022) 29 (a series read by creaming index)")
# The making of every blend of a series (rule of thumb for a hot-process screening emulsion).
SERIES_STEPS: tuple[dict[str, object], ...] = (
    {"phases": ["A"], "temperature_c": 75, "note": "heat the water"},
    {"phases": ["B"], "temperature_c": 75, "note": "melt the oil phase with both emulsifiers"},
    {"phases": ["A", "B"], "temperature_c": 75, "mixing": "homogeniser", "minutes": 3,
     "note": "add B to A; then stir to room temperature and fill a graduated tube"},
)


def _series_row(session: Session, name: str) -> SeriesRow:
    row = session.scalar(select(SeriesRow).where(SeriesRow.name_key == name_key(name))
                         .options(selectinload(SeriesRow.blends)
                                  .selectinload(ScreeningBlendRow.observations)))
    if row is None:
        known = list(session.scalars(select(SeriesRow.name).order_by(SeriesRow.name)))
        raise NotFound(f"no screening series named {quoted(name)}",
                       hint=("series: " + ", ".join(known[:10])) if known else
                       "plan one with `formdb screen plan`")
    return row


def parse_oil(text: str) -> tuple[str, float]:
    """``INCI=SHARE`` (a share in any unit; shares are normalised) -> (name, share)."""
    name, sep, share = text.rpartition("=")
    try:
        value = ascii_float(share)
    except ValueError:
        value = math.nan
    if not sep or not name.strip() or not math.isfinite(value) or value <= 0:
        raise InvalidData(f"--oil {text!r}: write INCI=SHARE with a share above 0, e.g. "
                          "'Paraffinum Liquidum=70'")
    return " ".join(name.split()), value


def _oil_phase_of_formula(session: Session, path: Path) -> list[tuple[str, float]]:
    """The members of a formula's oil phase that count in its required HLB, with their %."""
    item = read_inputs([path])[0]
    formula = resolve_all(session, [item])[0]
    facts = compute_facts(formula, queries.load_reference_data(session))
    by_no = {line.line_no: line.inci for line in formula.lines}
    oils = [(by_no[lf.line_no], lf.remaining_percent) for lf in facts.lines
            if lf.required_hlb_member and lf.remaining_percent > 0]
    if not oils:
        raise InvalidData(f"{path}: the formula has no oil phase to screen")
    return oils


def _emulsifier(found: Mapping[str, IngredientRecord], name: str, option: str
                ) -> IngredientRecord:
    record = found.get(name_key(name))
    if record is None:
        raise InvalidData(f"{option} {name!r}: no such ingredient in the library")
    if record.p.hlb is None:
        raise InvalidData(f"{option} {name!r}: the library has no HLB for it",
                          hint=f"formdb ingredient edit {record.inci_name!r} --set hlb=...")
    return record


def _series_record(row: SeriesRow, sheets: tuple[WeighSheet, ...] = ()) -> ScreeningSeries:
    blends = []
    for b in row.blends:
        latest: dict[str, ScreeningObservation] = {}
        for obs in b.observations:
            latest[obs.measure] = obs
        last = max(latest.values(), key=lambda o: o.id) if latest else None
        blends.append(ScreeningBlend(
            number=b.number, hlb=b.hlb, low_percent=b.low_percent, high_percent=b.high_percent,
            observations={m: o.value for m, o in sorted(latest.items())},
            observed_by=last.observed_by if last else None,
            observed_at=last.observed_at if last else None,
            notes=_notes(b.observations)))
    return ScreeningSeries(
        name=row.name, emulsion_type=row.emulsion_type,
        oils=tuple((str(n), float(f)) for n, f in json.loads(row.oil_phase)),
        oil_percent=row.oil_percent, emulsifier_percent=row.emulsifier_percent,
        low_emulsifier=row.low_inci, high_emulsifier=row.high_inci, low_hlb=row.low_hlb,
        high_hlb=row.high_hlb, batch_g=row.batch_g, blends=tuple(blends),
        created_by=row.created_by, created_at=row.created_at, water_inci=row.water_inci,
        sheets=sheets)


def _notes(observations: Iterable[ScreeningObservation]) -> tuple[ScreeningNote, ...]:
    """The notes of a blend's recordings, oldest first: one recording stores its note on the
    row of each measure it gave, and is one note here with those measures."""
    grouped: dict[tuple[str, str, datetime, float | None], list[str]] = {}
    for obs in sorted(observations, key=lambda o: o.id):
        if obs.note:
            grouped.setdefault((obs.note, obs.observed_by, obs.observed_at, obs.after_hours),
                               []).append(obs.measure)
    return tuple(ScreeningNote(text=note, measures=tuple(measures), observed_by=by,
                               observed_at=at, after_hours=hours)
                 for (note, by, at, hours), measures in grouped.items())


def blend_formula_text(series: ScreeningSeries, blend: ScreeningBlend) -> str:
    """The blend as a formula file: water q.s. (phase A), the oil phase and the pair (B)."""
    lines = [{"inci": inci, "percent": round(series.oil_percent * share, 6), "phase": "B"}
             for inci, share in series.oils]
    lines += [{"inci": series.low_emulsifier, "percent": round(blend.low_percent, 6),
               "phase": "B"},
              {"inci": series.high_emulsifier, "percent": round(blend.high_percent, 6),
               "phase": "B"}]
    lines = [line for line in lines if float(str(line["percent"])) > 0]
    water = round(100.0 - sum(float(str(line["percent"])) for line in lines), 6)
    document = {
        "name": f"{series.name}, blend {blend.number:02d} (HLB {blend.hlb:g})",
        "category": "leave-on", "intended_type": series.emulsion_type,
        "ingredients": [{"inci": series.water_inci, "percent": water, "phase": "A"}, *lines],
        "process": {"steps": list(SERIES_STEPS)},
    }
    return tomli_w.dumps(document)


def _sheets(session: Session, series: ScreeningSeries) -> tuple[WeighSheet, ...]:
    from formdb.services.bench_work.prices import prices_for

    items = [input_from_text(blend_formula_text(series, b), f"series:{series.name}#{b.number}")
             for b in series.blends]
    formulas = resolve_all(session, items)
    reference = queries.load_reference_data(session)
    names = {line.inci for f in formulas for line in f.lines}
    prices = prices_for(session, names)
    return tuple(build_sheet(f, reference, series.batch_g / 1000.0, prices=prices)
                 for f in formulas)


def plan_series(library: Library, name: str, *, user: str,
                oils: Sequence[tuple[str, float]] = (), formula: Path | None = None,
                low: str, high: str, start: float, stop: float, step: float,
                oil_percent: float, emulsifier_percent: float, batch_g: float,
                emulsion_type: EmulsionType = EmulsionType.OW,
                water: str = "Aqua") -> ScreeningSeries:
    """Plan and store a series; every blend gets its weigh sheet."""
    label = " ".join(name.split())
    if not label or len(label) > 200:
        raise InvalidData("series name: give a name of 1 to 200 characters")
    if bool(oils) == (formula is not None):
        raise InvalidData("give the oil phase either as --oil INCI=SHARE (repeat) or as "
                          "--from-formula FILE, not both or neither")
    for option, value, top in (("--oil-percent", oil_percent, 90.0),
                               ("--emulsifier-percent", emulsifier_percent, 30.0)):
        if not (math.isfinite(value) and 0 < value <= top):
            raise InvalidData(f"{option} {value:g}: must be above 0 and at most {top:g}")
    if oil_percent + emulsifier_percent >= 100:
        raise InvalidData("--oil-percent and --emulsifier-percent leave no water")
    if not (math.isfinite(batch_g) and 1 <= batch_g <= 100000):
        raise InvalidData(f"--batch-g {batch_g:g}: must be from 1 g to 100 kg")
    try:
        hlbs = science.plan_hlbs(start, stop, step)
    except ValueError as exc:
        raise InvalidData(f"--from-hlb/--to-hlb/--step: {exc}") from None
    with library.write() as session:
        require(session, user, Action.STORE_FORMULAS)
        if session.scalar(select(SeriesRow.id).where(SeriesRow.name_key == name_key(label))):
            raise Conflict(f"a screening series named {label!r} exists",
                           hint="choose another name (a series is never overwritten)")
        members = list(oils) if formula is None else _oil_phase_of_formula(session, formula)
        found = queries.find_ingredients(session, [n for n, _ in members] + [low, high, water])
        merged: dict[str, float] = {}
        for given, share in members:
            record = found.get(name_key(given))
            if record is None:
                raise InvalidData(f"--oil {given!r}: no such ingredient in the library")
            merged[record.inci_name] = merged.get(record.inci_name, 0.0) + share
        total = sum(merged.values())
        low_rec = _emulsifier(found, low, "--low")
        high_rec = _emulsifier(found, high, "--high")
        low_hlb, high_hlb = float(low_rec.p.hlb or 0), float(high_rec.p.hlb or 0)
        if not low_hlb < high_hlb:
            raise InvalidData(f"--low {low_rec.inci_name} (HLB {low_hlb:g}) must have a lower "
                              f"HLB than --high {high_rec.inci_name} (HLB {high_hlb:g})")
        if hlbs[0] < low_hlb - 1e-9 or hlbs[-1] > high_hlb + 1e-9:
            raise InvalidData(f"the range {hlbs[0]:g} to {hlbs[-1]:g} goes beyond what "
                              f"{low_rec.inci_name} and {high_rec.inci_name} reach "
                              f"({low_hlb:g} to {high_hlb:g})")
        water_rec = found.get(name_key(water))
        if water_rec is None or Role.WATER not in water_rec.roles:
            raise InvalidData(f"--water {water!r}: not a water ingredient of the library")
        row = SeriesRow(
            name=label, name_key=name_key(label), emulsion_type=emulsion_type.value,
            oil_phase=json.dumps([[n, s / total] for n, s in sorted(merged.items())]),
            oil_percent=oil_percent, emulsifier_percent=emulsifier_percent,
            low_inci=low_rec.inci_name, high_inci=high_rec.inci_name, low_hlb=low_hlb,
            high_hlb=high_hlb, water_inci=water_rec.inci_name, batch_g=batch_g,
            created_at=datetime.now(UTC), created_by=user)
        for number, hlb in enumerate(hlbs, start=1):
            x_low, x_high = science.pair_fractions(hlb, low_hlb, high_hlb)
            row.blends.append(ScreeningBlendRow(number=number, hlb=hlb,
                                                low_percent=x_low * emulsifier_percent,
                                                high_percent=x_high * emulsifier_percent))
        session.add(row)
        session.flush()
        session.add(log_entry(
            at=row.created_at, user=user, entity="screening", entity_key=label,
            entity_version=None, action="add", reason="screening series planned",
            changes=[{"field": "blends", "old": None, "new": len(hlbs)},
                     {"field": "hlb_from", "old": None, "new": hlbs[0]},
                     {"field": "hlb_to", "old": None, "new": hlbs[-1]}]))
        series = _series_record(row)
        return replace(series, sheets=_sheets(session, series))


def show_series(library: Library, name: str, *, with_sheets: bool = False) -> ScreeningSeries:
    with library.read() as session:
        series = _series_record(_series_row(session, name))
        return replace(series, sheets=_sheets(session, series)) if with_sheets else series


def record_observations(library: Library, name: str, blend: int, values: Mapping[str, float],
                        *, user: str, after_hours: float | None = None,
                        note: str | None = None) -> ScreeningSeries:
    """Add what the lab saw of blend ``blend`` (one row a measure; earlier rows stay)."""
    if not values:
        raise InvalidData("give at least one observation (--stability, --separation-percent "
                          "or --droplet-um)")
    for measure, value in values.items():
        if measure not in MEASURES:
            raise InvalidData(f"unknown measure {measure!r} (known: {', '.join(MEASURES)})")
        top = 10.0 if measure == "stability" else 100.0 if measure == "separation_percent" \
            else 10000.0
        # a drop has a size: 0 µm would read as the finest emulsion of the series
        low = DROPLET_MIN_UM if measure == "droplet_um" else 0.0
        if not (math.isfinite(value) and low <= value <= top):
            raise InvalidData(f"--{measure.replace('_', '-')} {value:g}: must be from {low:g} "
                              f"to {top:g} ({MEASURES[measure][0]})")
    _check_age(after_hours)
    with library.write() as session:
        require(session, user, Action.STORE_FORMULAS)
        row = _series_row(session, name)
        target = next((b for b in row.blends if b.number == blend), None)
        if target is None:
            raise InvalidData(f"--blend {blend}: series {row.name!r} has blends 1 to "
                              f"{len(row.blends)}")
        now = datetime.now(UTC)
        for measure, value in values.items():
            target.observations.append(ScreeningObservation(
                measure=measure, value=value, after_hours=after_hours, observed_at=now,
                observed_by=user, note=note))
        session.flush()
        return _series_record(row)


def age_words(hours: float | None) -> str:
    return "no age recorded" if hours is None else f"{hours:g} h"


def fit_age(fit: ScreeningFit) -> str:
    return "" if fit.after_hours is None else f" after {fit.after_hours:g} h"


MAX_AGE_HOURS = 1e5  # about eleven years: no reading of a bench emulsion is older


def _check_age(after_hours: float | None) -> None:
    """An --after-hours value is a time since making: above 0, at most MAX_AGE_HOURS."""
    if after_hours is not None and not (math.isfinite(after_hours)
                                        and 0 < after_hours <= MAX_AGE_HOURS):
        raise InvalidData(f"--after-hours {after_hours:g}: must be above 0 and at most "
                          f"{MAX_AGE_HOURS:g} h")


def _same_age(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is b
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)


def _readings(row: SeriesRow, measure: str, after_hours: float | None
              ) -> tuple[list[tuple[int, float, float]], float | None]:
    """Each blend's latest reading of ``measure`` as (blend, HLB, value), all of one age: the
    age asked for, else the one age the blends' latest readings share. Emulsions go on
    creaming and coalescing, so a week-old blend is not compared with a day-old one: latest
    readings of different ages are refused, naming the ages, rather than fitted together."""
    latest: dict[int, tuple[float, ScreeningObservation]] = {}
    recorded: set[str] = set()
    for blend in row.blends:
        recorded.update(o.measure for o in blend.observations)
        chosen = [o for o in blend.observations if o.measure == measure
                  and (after_hours is None or _same_age(o.after_hours, after_hours))]
        if chosen:
            latest[blend.number] = (blend.hlb, max(chosen, key=lambda o: o.id))
    where = f"series {row.name!r}, measure {measure}"
    if not latest:
        others = sorted(recorded - {measure})
        at = "" if after_hours is None else f" after {age_words(after_hours)}"
        raise InvalidData(
            f"{where}: no required HLB fitted: no blend has a {measure} reading{at}"
            + (f"; the series has {', '.join(others)} readings" if others else ""),
            hint=(f"fit with --measure {others[0].replace('_', '-')}"
                  if others and after_hours is None
                  else "record the blends with formdb screen record"))
    ages: dict[float | None, list[int]] = {}
    for number, (_, obs) in sorted(latest.items()):
        key = next((a for a in ages if _same_age(a, obs.after_hours)), obs.after_hours)
        ages.setdefault(key, []).append(number)
    if len(ages) > 1:
        told = "; ".join(f"{age_words(a)}: blend{'s' if len(n) > 1 else ''} "
                         f"{', '.join(map(str, n))}" for a, n in ages.items())
        raise InvalidData(f"{where}: the blends' latest readings are of different ages "
                          f"({told}); no required HLB fitted across them",
                          hint="fit one age with --after-hours HOURS")
    age = next(iter(ages))
    return [(n, hlb, obs.value) for n, (hlb, obs) in sorted(latest.items())], age


def fit_series(library: Library, name: str, *, measure: str = "stability", store: bool = False,
               user: str, after_hours: float | None = None) -> ScreeningFit:
    """Fit the required HLB to one measure at one age (see ``_readings``); with ``store``,
    keep it as an in-house measurement (one write)."""
    if measure not in MEASURES:
        raise InvalidData(f"--measure {measure!r}: choose one of {', '.join(MEASURES)}")
    _check_age(after_hours)
    higher = MEASURES[measure][1]
    with (library.write() if store else library.read()) as session:
        if store:
            require(session, user, Action.CHANGE_LIBRARY)
        row = _series_row(session, name)
        series = _series_record(row)
        seen, age = _readings(row, measure, after_hours)
        try:
            fit = science.fit_optimum([hlb for _, hlb, _ in seen],
                                      [value for _, _, value in seen],
                                      higher_is_better=higher)
        except science.NoClearOptimum as exc:
            raise InvalidData(f"series {series.name!r}, measure {measure}: no required HLB "
                              f"fitted: {exc}") from None
        result = ScreeningFit(
            required_hlb=fit.required_hlb, uncertainty=fit.expanded_uncertainty,
            method=FIT_METHOD, source=FIT_SOURCES, measure=measure,
            used_blends=tuple(seen[i][0] for i in fit.used), curvature=fit.curvature,
            after_hours=age)
        if store:
            _store_fit(session, row, series, result, user)
        return result


def _source_key(session: Session, series: str) -> str:
    slug = re.sub(r"[^a-z0-9]+", "-", series.casefold()).strip("-")[:50] or "series"
    base = f"screen-{slug}"
    taken = set(session.scalars(select(Source.key).where(Source.key.like(f"{base}%"))))
    number = 1
    while f"{base}-{number}" in taken:
        number += 1
    return f"{base}-{number}"


def _store_fit(session: Session, row: SeriesRow, series: ScreeningSeries, fit: ScreeningFit,
               user: str) -> None:
    now = datetime.now(UTC)
    key = _source_key(session, series.name)
    observed = "; ".join(
        f"blend {b.number} HLB {b.hlb:g}: " + ", ".join(
            f"{o.measure} {o.value:g} ({age_words(o.after_hours)})" for o in b.observations)
        for b in row.blends if b.observations)
    oils = ", ".join(f"{n} {f * 100:.4g} %" for n, f in series.oils)
    session.add(Source(
        key=key, kind=SourceKind.MEASUREMENT.value, evidence=Evidence.MEASURED.value,
        citation=(f"In-house screening series {series.name!r}: oil phase {oils} at "
                  f"{series.oil_percent:g} % with {series.low_emulsifier} / "
                  f"{series.high_emulsifier} ({series.emulsifier_percent:g} %), "
                  f"{len(series.blends)} blends; required HLB ({series.emulsion_type}) "
                  f"{fit.required_hlb:.2f} ± {fit.uncertainty:.2f} (about 95 %) from "
                  f"{fit.measure}{fit_age(fit)}"),
        method=f"{fit.method}; after {fit.source}", measured_by=user,
        issued=now.date(), note=f"observations: {observed}"[:20000]))
    session.flush()
    session.add(OilPhaseMeasurement(
        series_id=row.id, emulsion_type=series.emulsion_type,
        oil_phase=row.oil_phase, required_hlb=fit.required_hlb, uncertainty=fit.uncertainty,
        measure=fit.measure, method=fit.method, source_key=key, measured_at=now,
        measured_by=user))
    session.add(log_entry(
        at=now, user=user, entity="screening", entity_key=series.name, entity_version=None,
        action="add", reason=f"fitted to the series' {fit.measure}{fit_age(fit)}; source {key}",
        changes=[{"field": "required_hlb", "old": None, "new": fit.required_hlb,
                  "new_source": key},
                 {"field": "uncertainty", "old": None, "new": fit.uncertainty},
                 {"field": "emulsion_type", "old": None, "new": series.emulsion_type}]))
