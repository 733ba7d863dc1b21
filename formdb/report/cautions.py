"""The cautions every report carries, defined once so text, JSON and HTML say the same thing.

The wording follows the standard cautions in ``references/regulatory.md`` section 6: a screening
aid, not the safety assessment of Art. 10 of Regulation (EC) No 1223/2009; limit lists are a dated
snapshot; defer to the current regulation, local codes and a qualified safety assessor; passing
the checks does not establish safety.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from datetime import date
from typing import TYPE_CHECKING, NamedTuple

if TYPE_CHECKING:  # the library commands print cautions without building the result models
    from formdb.schemas.result import CheckResult


class ListSnapshot(NamedTuple):
    """One limit list as the library holds it: whose, which, and the date of its text."""

    jurisdiction: str
    list_name: str
    list_date: date | str


SCREENING = (
    "This report is a screening aid for a draft formula before a lab batch. It is not a safety "
    "assessment, and not a cosmetic product safety assessment under Art. 10 of Regulation (EC) "
    "No 1223/2009, which a qualified safety assessor must carry out and sign.")
DEFER = (
    "Defer to the current consolidated regulation, to local codes (which may differ between "
    "markets) and to a qualified safety assessor; for a medicinal product, to the sponsor's "
    "qualified persons and the competent authority.")
NOT_SAFE = (
    "Passing these checks does not establish safety: impurities, stability, packaging, "
    "microbiology (challenge test), sensitisation and the people who will use the product need "
    "expert evaluation.")
GUIDELINES = (
    "HLB and required HLB are guidelines, not exact targets (Pasquali et al., Int. J. Pharm. 356 "
    "(2008) 44); every number rests on library values whose sources the library records, and "
    "values marked rule of thumb or from memory are weaker still.")
NO_DATES = (
    "the dates of the lists were not supplied with this report, so check the date of each "
    "limit list in the library (every limit record carries its list date) before relying on "
    "any limit")


def _dates_from_findings(results: Iterable[CheckResult]) -> list[ListSnapshot]:
    """List names and dates that limit findings carry in their values, if the rule put them."""
    found: list[ListSnapshot] = []
    for result in results:
        for finding in result.findings:
            when = finding.values.get("list_date")
            if when:
                name = str(finding.values.get("list_name") or finding.values.get("list") or
                           "limit list")
                found.append(ListSnapshot(str(finding.values.get("jurisdiction") or ""),
                                          name, str(when)))
    return found


def _describe(snapshots: Sequence[ListSnapshot]) -> str:
    unique = sorted({(s.jurisdiction, s.list_name, str(s.list_date)) for s in snapshots})
    parts = [f"{(j + ' ') if j else ''}{name} as of {when}" for j, name, when in unique]
    return "; ".join(parts)


def limits_caution(snapshots: Sequence[ListSnapshot] | None,
                   results: Iterable[CheckResult] = ()) -> str:
    """The dated-snapshot caution, naming the lists and their dates when they are known."""
    # here, not at the top: every command that prints anything imports formdb.report, and the
    # list-entry models of schemas.lists are needed only by those that print limit cautions
    from formdb.schemas.lists import HAND_WRITTEN

    known = list(snapshots or ()) or _dates_from_findings(results)
    dates = f"the lists used are {_describe(known)}" if known else NO_DATES
    partial = ""
    if any(s.list_name.endswith(HAND_WRITTEN) for s in known):
        partial = (" Hand-written seed rows cover a few entries of an annex, not the annex: "
                   "import the Commission's exports (formdb lists import) for the whole lists.")
    return (f"Concentration limits come from a dated snapshot of the regulatory lists: {dates}. "
            f"Lists are amended often; check the current text before a product is made or sold."
            f"{partial}")


def cautions(results: Sequence[CheckResult] = (),
             snapshots: Sequence[ListSnapshot] | None = None) -> list[str]:
    """The cautions in the order every report prints them."""
    return [SCREENING, limits_caution(snapshots, results), DEFER, NOT_SAFE, GUIDELINES]
