"""What the administration commands print: ``init``, ``db ...`` (revisions, backups, restores,
grants) and ``user ...``. Each function returns the whole text; the CLI only echoes it."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.admin import (
        BackupReport,
        GrantReport,
        InitReport,
        Plan,
        RevisionInfo,
        Status,
        UserInfo,
    )


def _text(lines: Sequence[str]) -> str:
    return "".join(f"{line}\n" for line in lines)


_LEFT_SHOWN = 30  # values left alone listed one per line; the rest counted


def render_init(report: InitReport) -> str:
    """``init``: where, which revision, and what seeding added or left alone (or, unconfirmed
    on an existing library, would add)."""
    if not report.done:
        lines = [f"Seeding the existing library {report.database} would change it (nothing "
                 "was changed yet):"]
    elif report.created:
        lines = [f"Created the library {report.database} at revision {report.revision}."]
    elif report.upgraded:
        lines = [f"Upgraded the library {report.database} from revision "
                 f"{report.revision_before} to {report.revision}."]
    else:
        lines = [f"The library {report.database} is already at revision {report.revision} "
                 "(the newest)."]
    if report.builtin_sources_added:
        lines.append(f"Added {report.builtin_sources_added} built-in sources "
                     "(rule-of-thumb, from-memory).")
    if report.seeded:
        lines.append("Seed library:")
        width = max(len(t) for t in report.seeded)
        for table, counts in report.seeded.items():
            lines.append(f"  {table:<{width}}  {counts.added} added, {counts.changed} changed, "
                         f"{counts.unchanged} unchanged")
    if report.left_alone:
        lines.append(f"Left alone ({len(report.left_alone)} values the library holds and the "
                     "seed would have replaced):")
        lines += [f"  {line}" for line in report.left_alone[:_LEFT_SHOWN]]
        if len(report.left_alone) > _LEFT_SHOWN:
            lines.append(f"  ... and {len(report.left_alone) - _LEFT_SHOWN} more")
    if not report.done:
        lines.append("Rerun with --yes to add what is missing (values above stay as they are).")
    elif not report.changed_anything:
        lines.append("Nothing changed.")
    return _text(lines)


def db_status(s: Status) -> str:
    """``db current``: the library's revision against the newest, and the next step."""
    if s.current is None:
        return (f"{s.database}: no formdb schema yet (newest is {s.head}). "
                "Run `formdb db upgrade` or `formdb init`.\n")
    if s.current == s.head:
        return f"{s.database}: revision {s.current} (the newest).\n"
    return f"{s.database}: revision {s.current}; the newest is {s.head}. Run `formdb db upgrade`.\n"


def db_history(revisions: Sequence[RevisionInfo]) -> str:
    """``db history``: one line per revision, oldest first, the library's own and the head
    marked."""
    lines = []
    for r in revisions:
        marks = [m for m, on in (("current", r.is_current), ("head", r.is_head)) if on]
        tag = f"  ({', '.join(marks)})" if marks else ""
        lines.append(f"{r.revision}  <- {r.down_revision or 'base'}  {r.title}{tag}")
    return _text(lines)


def db_moved(before: str | None, after: str | None, *, down: bool) -> str:
    """``db upgrade`` / ``db downgrade``: from which revision to which."""
    if down:
        return f"Downgraded from revision {before} to {after or 'base'}.\n"
    if before == after:
        return f"Already at revision {after}; nothing changed.\n"
    return f"Upgraded from revision {before or 'base'} to {after}.\n"


def db_backed_up(report: BackupReport) -> str:
    return (f"Backed up {report.database} (revision {report.revision}, "
            f"{sum(report.tables.values())} rows in {len(report.tables)} tables) to "
            f"{report.path}.\n")


def db_grants(report: GrantReport, prefix: str) -> str:
    """``db grant-setup``: the reader role, then each duty's role and the tables it writes."""
    lines = [f"Roles on {report.database}: {prefix}_reader (reads every table)."]
    lines += [f"  {role}: writes {', '.join(tables) or '(no table yet)'}"
              for role, tables in report.roles.items()]
    lines.append("Sealed tables (change log, review records, keys, policy) are appended only "
                 "through formdb_append, rows naming the login; server_change_log records "
                 "every change to the library tables with the login; logins change only "
                 "through formdb_login.")
    if report.createrole_taken:
        lines.append("CREATEROLE taken from the admin logins "
                     f"{', '.join(report.createrole_taken)} (formdb_login manages logins; "
                     "with CREATEROLE an admin could take over another login).")
    return _text(lines)


def plan_text(plan: Plan) -> str:
    """What a change or destructive command will do (before ``--yes``) or did."""
    if not plan.changes:
        return _text([f"Nothing to do: {plan.action} changes nothing here."])
    head = (f"Done ({plan.action}):" if plan.done
            else f"Planned, not done yet ({plan.action}):")
    lines = [head, *(f"  - {c}" for c in plan.changes)]
    if not plan.done:
        lines.append(f"Nothing was changed. Rerun with {plan.confirm_option} to go ahead.")
    return _text(lines)


def user_list(users: Sequence[UserInfo], open_mode: bool) -> str:
    """``user list``: each user with their roles, and a note while the library is open."""
    lines = [f"{u.name}  {', '.join(u.roles) or '(no roles)'}{'' if u.active else '  (inactive)'}"
             for u in users]
    if open_mode:
        lines.append("Open mode: no admin yet, so everyone may do everything. "
                     "`formdb user add NAME --role admin --yes` closes it.")
    return _text(lines)
