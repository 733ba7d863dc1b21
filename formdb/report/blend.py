"""Reports of ``formdb blend``: the proportions of a blend, and the ranked pairs of a search.

Text through rich (100 columns, no colour unless asked), JSON through the same rounding as the
check report (``formdb.schemas.result.rounded``). One dispatch table per kind of answer.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Sequence
from dataclasses import asdict
from typing import TYPE_CHECKING, Any

from rich import box
from rich.console import RenderableType
from rich.table import Table
from rich.text import Text

from formdb.errors import ConfigError
from formdb.report import numbers as n
from formdb.report.safe_table import data_console
from formdb.report.terminal import safe_fields
from formdb.schemas.result import rounded

if TYPE_CHECKING:  # the report layer only reads these records; it does not call services
    from formdb.schemas.blend import BlendMember, BlendPlan, PairCandidate, PairSearch

WIDTH = 100
BLEND_FORMATS = ("text", "json")
SEARCH_RANKING = (
    "Candidates: weighed-in emulsifiers with an HLB on Griffin's scale (no soaps, gums, "
    "proteins, ionic or amphoteric surfactants), on the right side for the type (W/O: both "
    "lipophilic; O/W: the higher member hydrophilic). Ranked: no clash with the formula "
    "first, then a lipophilic with a hydrophilic member, a sensible proportion (minor member at "
    "least 20 %), a usable HLB spread (at least 2), the smaller distance of the farther HLB from "
    "the target, fewer data gaps, then by name (each a rule of thumb).")


def _print(*items: RenderableType, color: bool = False) -> str:
    console = data_console(WIDTH, color=color)
    for item in items:
        console.print(item)
    text = console.file.getvalue()  # type: ignore[attr-defined]
    return "\n".join(line.rstrip() for line in text.splitlines()) + "\n"


# the longest name the first column keeps on one line; when a name is longer the column wraps
# (folding the long name, kept whole) rather than pushing the other columns off the page
NAME_ON_ONE_LINE = 40


def _table(headers: tuple[str, ...], numeric: str,
           names: Sequence[str] | None = None) -> Table:
    """A table; given the ``names`` of its first column (the emulsifiers), that column keeps
    each on one line while none is longer than ``NAME_ON_ONE_LINE``."""
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
    keep_first = bool(names) and max(map(len, names or ())) <= NAME_ON_ONE_LINE
    for i, (header, kind) in enumerate(zip(headers, numeric, strict=True)):
        table.add_column(Text(header), justify="right" if kind == "n" else "left",
                         overflow="fold", no_wrap=keep_first and i == 0)
    return table


def _plan_table(plan: BlendPlan) -> Table:
    from_file = any(m.present_percent is not None for m in plan.members)
    if from_file:
        names = [m.inci + (" (formed in batch)" if m.formed_in_place else "")
                 for m in plan.members]
        table = _table(("Emulsifier", "HLB", "Now % w/w", "Share now", "Share for target",
                        "% w/w for target", "HLB source"), "snnnnns", names)
        total = plan.total_percent or 0.0
        for m, name in zip(plan.members, names, strict=True):
            now = (m.present_percent or 0.0) / total if total > 0 else None
            table.add_row(*(Text(c) for c in (
                name, n.hlb(m.hlb), n.percent(m.present_percent, ""), n.share(now),
                n.share(m.fraction), n.percent(m.percent, ""), m.hlb_source)))
        return table
    with_total = plan.total_percent is not None
    headers = ("Emulsifier", "HLB", "Share of blend") + (
        (f"% w/w at {n.percent(plan.total_percent)} total",) if with_total else ()) + \
        ("HLB source",)
    table = _table(headers, "snn" + ("n" if with_total else "") + "s",
                   [m.inci for m in plan.members])
    for m in plan.members:
        cells = [m.inci, n.hlb(m.hlb), n.share(m.fraction)]
        if with_total:
            cells.append(n.percent(m.percent, ""))
        table.add_row(*(Text(c) for c in [*cells, m.hlb_source]))
    return table


def _sources(members: Sequence[BlendMember]) -> list[RenderableType]:
    """The full citation of each HLB source once, under the table."""
    seen: dict[str, str] = {}
    for m in members:
        key = m.hlb_source.split(" (")[0]
        if m.hlb_citation and key not in seen:
            seen[key] = m.hlb_citation
    if not seen:
        return []
    grid = Table.grid(padding=(0, 1))
    grid.add_column(no_wrap=True)
    grid.add_column(ratio=1, overflow="fold")
    for key, citation in seen.items():
        grid.add_row(Text(f"{key}:"), Text(citation))
    return [Text("HLB sources:"), grid]


def plan_text(plan: BlendPlan, color: bool = False) -> str:
    plan = safe_fields(plan)  # every character visible, before the layout (report.safe_table)
    head = f"Blend for HLB {n.hlb(plan.target)} ({plan.target_from})"
    if plan.formula:
        head = f"{plan.formula}: {head[0].lower()}{head[1:]}"
    lines: list[RenderableType] = [Text(head, style="bold"), Text(f"Method: {plan.method}")]
    lines.append(_plan_table(plan))
    lines.append(Text(f"Blend HLB of these proportions: {n.hlb(plan.blend_hlb)} (these "
                      f"emulsifiers reach HLB {n.hlb(plan.reachable_low)} to "
                      f"{n.hlb(plan.reachable_high)})"))
    lines.extend(Text(f"Note: {note}") for note in plan.notes)
    lines.extend(_sources(plan.members))
    return _print(*lines, color=color)


def _member_cell(member: BlendMember) -> str:
    return f"{member.inci} (HLB {n.hlb(member.hlb)})"


def _pair_cells(rank: int, pair: PairCandidate) -> tuple[str, ...]:
    return (str(rank), _member_cell(pair.low), n.percent(pair.low.percent, ""),
            _member_cell(pair.high), n.percent(pair.high.percent, ""), f"{pair.distance:.2f}",
            "yes" if pair.complementary else "no", str(len(pair.gaps)))


def search_text(search: PairSearch, color: bool = False) -> str:
    search = safe_fields(search)  # as in plan_text
    head = (f"Emulsifier pairs for HLB {n.hlb(search.target)} ({search.target_from}) at "
            f"{n.percent(search.total_percent)} emulsifier in total")
    if search.formula:
        head = f"{search.formula}: {head[0].lower()}{head[1:]}"
    tally = (f"{search.emulsifiers} emulsifiers with an HLB in the library; "
             f"{search.considered} pairs straddle the target; "
             f"{search.excluded_incompatible} left out as incompatible, "
             f"{search.excluded_use_range} outside a typical use range; {search.found} pass.")
    items: list[RenderableType] = [Text(head, style="bold"), Text(tally)]
    if search.emulsion_type:
        items.append(Text(f"Pairs that suit {search.emulsion_type}."))
    items += [Text(note) for note in search.notes]
    if search.excluded_kinds:
        items.append(Text("Not candidates: " + "; ".join(search.excluded_kinds) + "."))
    if not search.candidates:
        items.append(Text("No pair of library emulsifiers reaches this target within their use "
                          "ranges; try another --total."))
        return _print(*items, color=color)
    table = _table(("#", "Lower-HLB member", "% w/w", "Higher-HLB member", "% w/w",
                    "Max ΔHLB", "Lipo + hydro", "Gaps"), "nsnsnnsn")
    for rank, pair in enumerate(search.candidates, start=1):
        table.add_row(*(Text(c) for c in _pair_cells(rank, pair)))
    why = [Text(f"{rank}. {'; '.join(pair.reasons)}")
           for rank, pair in enumerate(search.candidates, start=1) if pair.reasons]
    items += [Text(f"The best {len(search.candidates)}:"), table, Text("Why each ranks there:"),
              *why, Text(SEARCH_RANKING),
              Text("Max ΔHLB: the farther of the two HLBs from the target. Gaps: library values "
                   "missing for the pair (use range, solubility, ionic character) or an HLB "
                   "recorded as a rule of thumb or from memory; --format json lists them.")]
    return _print(*items, color=color)


def _json(data: Any) -> str:
    return json.dumps(rounded(data), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def plan_json(plan: BlendPlan, color: bool = False) -> str:
    return _json(asdict(plan))


def search_json(search: PairSearch, color: bool = False) -> str:
    data = asdict(search)
    for item, pair in zip(data["candidates"], search.candidates, strict=True):
        item["rank_key"] = list(pair.rank_key)
    data["ranking"] = SEARCH_RANKING
    return _json(data)


PLAN_RENDERERS: dict[str, Callable[[BlendPlan, bool], str]] = {
    "text": plan_text, "json": plan_json}
SEARCH_RENDERERS: dict[str, Callable[[PairSearch, bool], str]] = {
    "text": search_text, "json": search_json}


def _pick(table: dict[str, Any], fmt: str) -> Any:
    if fmt not in table:
        raise ConfigError(f"unknown format {fmt!r} for blend", hint="use text or json")
    return table[fmt]


def render_plan(plan: BlendPlan, fmt: str, color: bool = False) -> str:
    """The plan in ``fmt``; the text escapes the data before Rich lays it out (and before the
    colours go in, with ``color``), so the CLI writes a coloured one past the terminal filter."""
    return str(_pick(PLAN_RENDERERS, fmt)(plan, color))


def render_search(search: PairSearch, fmt: str, color: bool = False) -> str:
    """The pairs found in ``fmt``; the text as for ``render_plan``."""
    return str(_pick(SEARCH_RENDERERS, fmt)(search, color))
