"""What a report needs from the library besides the check results: the limit lists' dates.

The cautions name the limit lists a check used and the date of each list's text, so a reader
sees how old the snapshot is. The lists are those of the jurisdictions the profile's limit rules
check (every list in the library when the profile runs no limit rule).
"""

from __future__ import annotations

from datetime import date

from sqlalchemy import func, select

from formdb.rules.profiles import Profile, load_profile
from formdb.rules.registry import default_registry
from formdb.store.library import Library
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
    """(jurisdiction, list name, newest list date) of every limit list the profile checks."""
    chosen = profile if isinstance(profile, Profile) else load_profile(profile or "default")
    wanted = profile_jurisdictions(chosen)
    with library.read() as session:
        rows = session.execute(
            select(LimitEntry.jurisdiction, LimitEntry.list_name,
                   func.max(LimitEntry.list_date))
            .group_by(LimitEntry.jurisdiction, LimitEntry.list_name)
            .order_by(LimitEntry.jurisdiction, LimitEntry.list_name)).all()
    return [(j, name, when) for j, name, when in rows
            if not wanted or j.casefold() in wanted]
