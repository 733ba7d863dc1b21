"""What a report needs from the library besides the check results: the limit lists' dates.

The cautions name the limit lists a check used and the date of each list's text, so a reader
sees how old the snapshot is. The lists are those of the jurisdictions the profile's limit rules
check (every list in the library when the profile runs no limit rule).
"""

from __future__ import annotations

from datetime import date

from sqlalchemy import func, select

from formdb.rules.profiles import Profile, chosen_profile
from formdb.rules.registry import default_registry
from formdb.schemas.lists import HAND_WRITTEN, export_list_name
from formdb.store.library import Library
from formdb.store.lists import snapshots_in_force
from formdb.store.models import LimitEntry


def profile_jurisdictions(profile: Profile) -> set[str]:
    """Jurisdictions named by the profile's enabled rules that take a ``jurisdiction`` option."""
    found = set()
    for rule in profile.enabled_rules(default_registry()):
        if "jurisdiction" in rule.options:
            found.add(str(profile.options_for(rule)["jurisdiction"]).casefold())
    return found


def limit_snapshots(library: Library,
                    profile: Profile | str | None = None) -> list[tuple[str, str, date]]:
    """(jurisdiction, list name, newest list date) of every limit list the profile checks: the
    imported annex exports in force (their "Last update" date), and the seed's hand-written rows
    of the annexes no export covers."""
    chosen = chosen_profile(profile)
    wanted = profile_jurisdictions(chosen)
    with library.read() as session:
        rows = session.execute(
            select(LimitEntry.jurisdiction, LimitEntry.list_name,
                   func.max(LimitEntry.list_date))
            .group_by(LimitEntry.jurisdiction, LimitEntry.list_name)
            .order_by(LimitEntry.jurisdiction, LimitEntry.list_name)).all()
        imported = snapshots_in_force(session)
    covered = {(s.jurisdiction.casefold(), s.annex) for s in imported}
    out = [(s.jurisdiction, export_list_name(
        s.annex, f"{s.file_name}, file created {s.file_created:%d/%m/%Y}"), s.last_update)
        for s in imported]
    # marked whether or not anything is imported: a few hand-written entries of an annex are
    # never the annex, and the report must not read as if they were
    out += [(j, f"{name}{HAND_WRITTEN}", when) for j, name, when in rows
            if (j.casefold(), name.rsplit(" ", 1)[-1]) not in covered]
    return [row for row in out if not wanted or row[0].casefold() in wanted]
