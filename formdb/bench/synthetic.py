"""Invented ingredients and formulas for the benchmark, the same for the same seed.

Synthetic ingredients are variants of the bundled seed ingredients (the same roles, classes and
kinds of property, numbers moved a little), named ``Synthetic <Kind> 00042`` so nobody mistakes
them for real materials; every value cites ``synthetic-bench`` (evidence "estimated"). Formulas
are built the way a formulator drafts an emulsion: a water phase with humectants and a thickener,
an oil phase, a low/high HLB emulsifier pair proportioned towards the oils' required HLB, a
preservative and cool-down additions, water making up 100 %. Only ``random.Random`` is used.
"""

from __future__ import annotations

import csv
import random
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import tomli_w

from formdb.resources import seed_data_dir
from formdb.schemas.ingredient import PROPERTY_NAMES

SOURCE_KEY = "synthetic-bench"
SOURCE_ROW: dict[str, str | None] = {
    "key": SOURCE_KEY,
    "citation": "Synthetic benchmark data made by formdb.bench (invented; no real ingredient)",
    "evidence": "estimated",
    "url": None,
    "seen": "calc",
    "note": "invented data for benchmarks only",
}
LIST_SEPARATOR = "; "

# the word in a synthetic name for the template's first role
_KIND = {
    "emulsifier": "Emulsifier", "co-emulsifier": "Co-Emulsifier", "oil": "Ester", "wax": "Wax",
    "butter": "Butter", "fatty alcohol": "Fatty Alcohol", "fatty acid": "Fatty Acid",
    "emollient": "Emollient", "silicone": "Silicone", "humectant": "Humectant",
    "thickener": "Gum", "electrolyte": "Salt", "preservative": "Preservative",
    "ph adjuster": "Buffer", "neutraliser": "Base", "active": "Active",
    "antioxidant": "Antioxidant", "fragrance": "Fragrance Note", "allergen": "Fragrance Note",
    "uv filter": "UV Filter", "solvent": "Solvent", "chelator": "Chelator",
    "colourant": "Colourant", "pigment": "Pigment",
}


def _columns() -> list[str]:
    columns = ["inci_name", "synonyms", "cas", "roles", "classes"]
    for prop in PROPERTY_NAMES:
        columns += [prop, f"{prop}_source"]
    return columns


COLUMNS: list[str] = _columns()


def seed_rows(seed_dir: Path | None = None) -> list[dict[str, str]]:
    """The bundled seed ingredients as cell dicts (the import format)."""
    path = (seed_dir or seed_data_dir()) / "ingredients.csv"
    with open(path, newline="", encoding="utf-8") as handle:
        return [dict(row) for row in csv.DictReader(handle)]


def _split(cell: str) -> list[str]:
    return [part.strip() for part in cell.split(";") if part.strip()]


def _number(text: str) -> float | None:
    try:
        return float(text) if text else None
    except ValueError:
        return None


def _short(value: float) -> str:
    """Four significant figures, written as a plain decimal."""
    return repr(float(f"{value:.4g}"))


def _vary(rng: random.Random, template: Mapping[str, str]) -> dict[str, str]:
    """The template's properties with every number moved a little, within the catalogue bounds."""
    out: dict[str, str] = {}
    num = {p: _number(template.get(p, "")) for p in PROPERTY_NAMES}
    for prop in PROPERTY_NAMES:
        text = template.get(prop, "")
        if not text:
            continue
        value = num[prop]
        if prop == "hlb" and value is not None:
            top = 50.0 if value > 20 else 20.0
            out[prop] = _short(min(top, max(0.5, value * rng.uniform(0.9, 1.1))))
        elif prop.startswith("required_hlb") and value is not None:
            out[prop] = _short(min(20.0, max(1.0, value + rng.uniform(-1.0, 1.0))))
        elif prop == "density" and value is not None:
            out[prop] = _short(min(3.0, max(0.5, value * rng.uniform(0.95, 1.05))))
        elif prop in ("molar_mass", "viscosity_mpas") and value is not None:
            out[prop] = _short(value * rng.uniform(0.8, 1.25))
        elif prop in ("ph_min", "ph_max", "use_min_percent", "use_max_percent"):
            continue  # ranges are moved together below
        else:
            out[prop] = text  # words, yes/no, stoichiometric integers: kept as they are
    shift = rng.uniform(-0.5, 0.5)
    low, high = num["ph_min"], num["ph_max"]
    if low is not None:
        out["ph_min"] = _short(min(13.0, max(0.0, low + shift)))
    if high is not None:
        floor = float(out.get("ph_min", "0"))
        out["ph_max"] = _short(max(floor, min(14.0, high + shift)))
    scale = rng.uniform(0.8, 1.25)
    low, high = num["use_min_percent"], num["use_max_percent"]
    if low is not None:
        out["use_min_percent"] = _short(min(100.0, low * scale))
    if high is not None:
        floor = float(out.get("use_min_percent", "0"))
        out["use_max_percent"] = _short(max(floor, min(100.0, high * scale)))
    return out


def synthetic_ingredient_rows(count: int, seed: int, start: int = 1,
                              seed_dir: Path | None = None) -> Iterator[dict[str, str]]:
    """``count`` invented ingredients (cell dicts in ``COLUMNS``), numbered from ``start``."""
    templates = [r for r in seed_rows(seed_dir) if "water" not in _split(r["roles"])]
    rng = random.Random(seed)
    for number in range(start, start + count):
        template = rng.choice(templates)
        roles = _split(template["roles"])
        kind = _KIND.get(roles[0], "Material") if roles else "Material"
        name = f"Synthetic {kind} {number:05d}"
        row = dict.fromkeys(COLUMNS, "")
        row["inci_name"] = name
        if rng.random() < 0.3:
            row["synonyms"] = f"Synthetic {kind} No. {number}"
        row["roles"] = LIST_SEPARATOR.join(roles)
        row["classes"] = LIST_SEPARATOR.join(_split(template["classes"]))
        for prop, text in _vary(rng, template).items():
            row[prop], row[f"{prop}_source"] = text, SOURCE_KEY
        yield row


def write_ingredient_csv(path: Path, rows: Iterator[dict[str, str]] | Sequence[dict[str, str]]
                         ) -> int:
    """Write rows in the import format; returns how many."""
    written = 0
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=COLUMNS, lineterminator="\n")
        writer.writeheader()
        for row in rows:
            writer.writerow(row)
            written += 1
    return written


# --- formulas -------------------------------------------------------------------------------

@dataclass(frozen=True)
class Material:
    """What the formula builder needs to know of one library ingredient."""

    name: str
    synonyms: tuple[str, ...]
    roles: frozenset[str]
    classes: frozenset[str]
    numbers: Mapping[str, float]
    words: Mapping[str, str]

    def n(self, prop: str) -> float | None:
        return self.numbers.get(prop)


def material(row: Mapping[str, str]) -> Material:
    numbers = {p: v for p in PROPERTY_NAMES if (v := _number(row.get(p, ""))) is not None}
    words = {p: row[p] for p in PROPERTY_NAMES if row.get(p) and p not in numbers}
    return Material(row["inci_name"], tuple(_split(row.get("synonyms", ""))),
                    frozenset(_split(row.get("roles", ""))),
                    frozenset(_split(row.get("classes", ""))), numbers, words)


@dataclass(frozen=True)
class Pools:
    """The library's ingredients sorted into the parts of an emulsion a formulator reaches for."""

    water: Material
    humectants: tuple[Material, ...]
    thickeners: tuple[Material, ...]
    oils: tuple[Material, ...]
    wo_oils: tuple[Material, ...]  # oils with a required HLB for W/O
    fatty_alcohols: tuple[Material, ...]
    low_emulsifiers: tuple[Material, ...]
    high_emulsifiers: tuple[Material, ...]
    preservatives: tuple[Material, ...]
    antioxidants: tuple[Material, ...]
    fragrances: tuple[Material, ...]
    actives: tuple[Material, ...]
    electrolytes: tuple[Material, ...]


_AVOID = frozenset({"quaternary cationic", "nitrosating agent", "carboxylate soap",
                    "sulfate anionic", "alkanolamine"})


def build_pools(rows: Sequence[Mapping[str, str]]) -> Pools:
    items = [material(r) for r in rows]

    def pick(test: Callable[[Material], bool]) -> tuple[Material, ...]:
        return tuple(m for m in items if not (m.classes & _AVOID) and test(m))

    def ranged(m: Material) -> bool:
        low, high = m.n("use_min_percent"), m.n("use_max_percent")
        return low is not None and high is not None and low >= 0.01

    water = next(m for m in items if "water" in m.roles)
    oils = pick(lambda m: bool(m.roles & {"oil", "butter", "wax", "silicone", "emollient"})
                and m.words.get("solubility") == "oil" and m.n("required_hlb_ow") is not None
                and not m.roles & {"fatty acid", "fatty alcohol", "preservative", "emulsifier"})
    return Pools(
        water=water,
        humectants=pick(lambda m: "humectant" in m.roles and m.words.get("solubility") == "water"
                        and not m.roles & {"active", "ph adjuster"} and ranged(m)),
        thickeners=pick(lambda m: "thickener" in m.roles and not m.roles & {
            "emulsifier", "electrolyte", "fatty alcohol", "fatty acid"} and ranged(m)),
        oils=oils,
        wo_oils=tuple(m for m in oils if m.n("required_hlb_wo") is not None),
        fatty_alcohols=pick(lambda m: "fatty alcohol" in m.roles
                            and m.n("required_hlb_ow") is not None),
        low_emulsifiers=pick(lambda m: "emulsifier" in m.roles
                             and m.words.get("ionic_character") == "nonionic"
                             and (m.n("hlb") or 99) <= 6.5),
        high_emulsifiers=pick(lambda m: "emulsifier" in m.roles
                              and m.words.get("ionic_character") == "nonionic"
                              and 12 <= (m.n("hlb") or 0) <= 20),
        preservatives=pick(lambda m: "preservative" in m.roles and ranged(m)
                           and not m.roles & {"emulsifier", "active"}),
        antioxidants=pick(lambda m: "antioxidant" in m.roles
                          and m.words.get("solubility") == "oil" and ranged(m)),
        fragrances=pick(lambda m: "fragrance" in m.roles and "allergen" not in m.roles
                        and ranged(m)),
        actives=pick(lambda m: "active" in m.roles and m.words.get("solubility") == "water"
                     and not m.roles & {"preservative", "uv filter", "ph adjuster",
                                        "antioxidant"} and ranged(m)),
        electrolytes=pick(lambda m: "electrolyte" in m.roles and ranged(m)),
    )


# products of the bundled exposure table (seed_data/exposure.csv) that are emulsions
_PRODUCTS = (("hand cream", "leave-on"), ("face cream", "leave-on"),
             ("body lotion", "leave-on"), ("hair conditioner", "rinse-off"))
HUNDREDTHS = 10_000  # 100 % in hundredths of a percent


def _within_use(rng: random.Random, m: Material, fallback: tuple[float, float]) -> int:
    low = m.n("use_min_percent") or fallback[0]
    high = m.n("use_max_percent") or fallback[1]
    high = min(high, max(low, fallback[1]))
    return max(1, round(rng.uniform(low, high) * 100))


def _split_total(rng: random.Random, total: int, parts: int, least: int) -> list[int]:
    weights = [rng.uniform(0.5, 2.0) for _ in range(parts)]
    scale = (total - least * parts) / sum(weights)
    shares = [least + int(w * scale) for w in weights]
    shares[0] += total - sum(shares)
    return shares


def _draw(rng: random.Random, pool: Sequence[Material], count: int,
          used: set[str]) -> list[Material]:
    free = [m for m in pool if m.name not in used]
    chosen = rng.sample(free, min(count, len(free)))
    used.update(m.name for m in chosen)
    return chosen


def _shown(rng: random.Random, m: Material) -> str:
    """The name a formulator writes: usually the INCI name, now and then a synonym."""
    if m.synonyms and rng.random() < 0.15:
        return rng.choice(m.synonyms)
    return m.name


_EXTRA_CAPS = {"oil": 8, "humectant": 1, "thickener": 1, "fatty_alcohol": 1,
               "preservative": 1, "antioxidant": 1, "fragrance": 1, "active": 5}


def _extras(rng: random.Random, slots: int, water_in_oil: bool, pools: Pools) -> dict[str, int]:
    """How many optional lines of each kind, capped by what the pools can supply."""
    supply = {"oil": len(pools.wo_oils if water_in_oil else pools.oils) - 1,
              "humectant": len(pools.humectants) - 1,
              "thickener": 0 if water_in_oil else len(pools.thickeners),
              "fatty_alcohol": 0 if water_in_oil else len(pools.fatty_alcohols),
              "preservative": len(pools.preservatives) - 1,
              "antioxidant": len(pools.antioxidants), "fragrance": len(pools.fragrances),
              "active": len(pools.actives)}
    caps = {k: max(0, min(cap, supply[k])) for k, cap in _EXTRA_CAPS.items()}
    counts = dict.fromkeys(caps, 0)
    for _ in range(slots):
        open_ = [k for k in caps if counts[k] < caps[k]]
        if not open_:
            break
        counts[rng.choice(open_)] += 1
    return counts


def formula_lines(rng: random.Random, pools: Pools, water_in_oil: bool
                  ) -> list[tuple[Material, int, str]]:
    """(material, hundredths of a percent, phase) for one formula, 8-25 lines, totalling 100 %."""
    length = rng.randint(8, 25)
    fixed = 6 + (1 if water_in_oil else 0)  # water, 2 emulsifiers, preservative, oil, humectant
    extra = _extras(rng, max(0, length - fixed), water_in_oil, pools)
    used: set[str] = {pools.water.name}
    phase_a: list[tuple[Material, int, str]] = []
    phase_b: list[tuple[Material, int, str]] = []
    phase_c: list[tuple[Material, int, str]] = []
    phase_a.extend((m, _within_use(rng, m, (1.0, 5.0)), "A")
                   for m in _draw(rng, pools.humectants, 1 + extra["humectant"], used))
    phase_a.extend((m, _within_use(rng, m, (0.1, 0.5)), "A")
                   for m in _draw(rng, pools.thickeners, extra["thickener"], used))
    if water_in_oil:
        phase_a.extend((m, _within_use(rng, m, (0.5, 1.0)), "A")
                       for m in _draw(rng, pools.electrolytes, 1, used))
    oils = _draw(rng, pools.wo_oils if water_in_oil else pools.oils, 1 + extra["oil"], used)
    oil_total = rng.randint(2000, 3500) if water_in_oil else rng.randint(800, 2500)
    for m, share in zip(oils, _split_total(rng, oil_total, len(oils), 50), strict=True):
        phase_b.append((m, share, "B"))
    fatty_alcohols = 0 if water_in_oil else extra["fatty_alcohol"]
    phase_b.extend((m, rng.randint(100, 400), "B")
                   for m in _draw(rng, pools.fatty_alcohols, fatty_alcohols, used))
    weighted = [(p, m.n("required_hlb_wo" if water_in_oil else "required_hlb_ow"))
                for m, p, _ in phase_b]
    known = [(p, v) for p, v in weighted if v is not None]
    required = (sum(p * v for p, v in known) / sum(p for p, _ in known) if known
                else (5.0 if water_in_oil else 11.0))
    low, high = _draw(rng, pools.low_emulsifiers, 1, used)[0], \
        _draw(rng, pools.high_emulsifiers, 1, used)[0]
    h_low, h_high = low.n("hlb") or 4.0, high.n("hlb") or 15.0
    share_low = (h_high - required) / (h_high - h_low) + rng.uniform(-0.08, 0.08)
    # an O/W draft keeps most emulsifier on the water side, a W/O draft on the oil side
    share_low = min(0.9, max(0.6, share_low)) if water_in_oil else min(0.45, max(0.05, share_low))
    oil_phase = sum(p for _m, p, _ in phase_b)
    emulsifier_total = min(800, max(200, round(oil_phase * rng.uniform(0.18, 0.28))))
    low_part = max(20, round(emulsifier_total * share_low))
    phase_b.append((low, low_part, "B"))
    phase_b.append((high, max(20, emulsifier_total - low_part), "B"))
    phase_c.extend((m, _within_use(rng, m, (0.3, 1.0)), "C")
                   for m in _draw(rng, pools.preservatives, 1 + extra["preservative"], used))
    phase_c.extend((m, _within_use(rng, m, (0.05, 0.5)), "C")
                   for m in _draw(rng, pools.antioxidants, extra["antioxidant"], used))
    phase_c.extend((m, _within_use(rng, m, (0.1, 0.5)), "C")
                   for m in _draw(rng, pools.fragrances, extra["fragrance"], used))
    phase_c.extend((m, _within_use(rng, m, (0.5, 3.0)), "C")
                   for m in _draw(rng, pools.actives, extra["active"], used))
    rest = HUNDREDTHS - sum(p for part in (phase_a, phase_b, phase_c) for _m, p, _ in part)
    if rest < 3000:
        raise ValueError("a synthetic formula left less than 30 % water")  # pragma: no cover
    return [(pools.water, rest, "A"), *phase_a, *phase_b, *phase_c]


def formula_text(index: int, seed: int, pools: Pools) -> str:
    """The TOML text of synthetic formula ``index`` (the same for the same seed and library)."""
    rng = random.Random(seed * 1_000_003 + index)
    water_in_oil = rng.random() < 0.1
    product, category = ("face cream", "leave-on") if water_in_oil else rng.choice(_PRODUCTS)
    head: dict[str, object] = {
        "name": f"Synthetic bench formula {index:06d}, {product}",
        "category": category,
        "product": product,
        "intended_type": "W/O" if water_in_oil else "O/W",
        "ph": round(rng.uniform(4.5, 7.0), 1),
        "batch_kg": rng.choice((1, 5, 10, 20, 50)),
    }
    if rng.random() < 0.3:
        head["process"] = {"droplet_diameter_um": rng.choice((2, 5, 10, 20))}
    parts = [f"# Synthetic benchmark formula (formdb.bench, seed {seed}): invented data for "
             "benchmarks only.\n", tomli_w.dumps(head)]
    for m, hundredths, phase in formula_lines(rng, pools, water_in_oil):
        line = {"inci": _shown(rng, m), "percent": hundredths / 100, "phase": phase}
        parts.append("\n[[ingredients]]\n" + tomli_w.dumps(line))
    return "".join(parts)


def formula_file_name(index: int) -> str:
    return f"synthetic-{index:06d}.toml"
