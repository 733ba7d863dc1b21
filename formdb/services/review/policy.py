"""The review policy: data an admin sets, recorded in every run.

It names the one profile (by content hash) a run must use to be signable, the role each
signature meaning needs, and whether the author of a run may approve it. Runs under any other
profile are drafts: they are kept and shown, but never signed and never supersede a signable
run. Each setting is a sealed row of ``policy_versions``; the newest is in force. Until an
admin sets one, the built-in policy holds: the packaged strict profile of this formdb version,
every meaning needs the reviewer role, and an author may not approve their own run.
"""

from __future__ import annotations

import hashlib
import json
from datetime import UTC, datetime
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import InvalidData
from formdb.rules.profiles import Profile, load_profile
from formdb.schemas.admin import Action, Duty
from formdb.schemas.review import Policy
from formdb.services.admin.access import parse_duty, require
from formdb.services.review.audit import append_sealed
from formdb.store.library import Library
from formdb.store.models import PolicyVersion

MEANINGS = ("approved", "reviewed", "rejected")
BUILT_IN = "built-in"
SIGNABLE_PROFILE = "strict"


def _hash(data: dict[str, Any]) -> str:
    text = json.dumps(data, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def policy_from(data: dict[str, Any], *, set_at: str, set_by: str) -> Policy:
    profile = data["profile"]
    return Policy(profile_name=profile["name"], profile_version=profile["version"],
                  profile_hash=profile["hash"], profile_origin=profile["origin"],
                  roles=dict(data["roles"]), author_may_approve=bool(data["author_may_approve"]),
                  set_at=set_at, set_by=set_by, policy_hash=_hash(data))


def policy_data(profile: Profile, roles: dict[str, str],
                author_may_approve: bool) -> dict[str, Any]:
    """The policy as the plain data that is stored, hashed and recorded in each run."""
    return {"profile": {"name": profile.name, "version": profile.version,
                        "hash": profile.content_hash, "origin": profile.origin},
            "roles": {m: roles[m] for m in MEANINGS}, "author_may_approve": author_may_approve}


def built_in_policy() -> Policy:
    roles = dict.fromkeys(MEANINGS, Duty.REVIEWER.value)
    data = policy_data(load_profile(SIGNABLE_PROFILE), roles, False)
    return policy_from(data, set_at=BUILT_IN, set_by="formdb")


def current_policy(session: Session) -> Policy:
    """The newest policy an admin set, else the built-in one."""
    from formdb.schemas.times import utc

    row = session.scalar(select(PolicyVersion).order_by(PolicyVersion.id.desc()).limit(1))
    if row is None:
        return built_in_policy()
    return policy_from(json.loads(row.policy_json),
                       set_at=utc(row.set_at).strftime("%Y-%m-%d %H:%M:%S UTC"),
                       set_by=row.set_by)


def parse_roles(pairs: list[str]) -> dict[str, str]:
    """``MEANING=ROLE`` pairs over the default (reviewer for every meaning)."""
    roles = dict.fromkeys(MEANINGS, Duty.REVIEWER.value)
    for pair in pairs:
        meaning, sep, role = pair.partition("=")
        meaning = meaning.strip().lower()
        if not sep or meaning not in MEANINGS:
            raise InvalidData(f"--role {pair!r}: give MEANING=ROLE with a meaning of "
                              f"{', '.join(MEANINGS)}.", hint="for example --role approved=admin")
        roles[meaning] = parse_duty(role).value
    return roles


def set_policy(library: Library, profile_spec: str, role_pairs: list[str],
               author_may_approve: bool, *, user: str) -> Policy:
    """``formdb review policy set``: an admin names the signable profile and the roles."""
    profile = load_profile(profile_spec)
    roles = parse_roles(role_pairs)
    data = policy_data(profile, roles, author_may_approve)
    with library.write() as session:
        require(session, user, Action.MANAGE_USERS)
        now = datetime.now(UTC).replace(microsecond=0)
        append_sealed(session, PolicyVersion(set_at=now, set_by=user,
                                             policy_json=json.dumps(data, sort_keys=True),
                                             policy_hash=_hash(data)))
        return policy_from(data, set_at=now.strftime("%Y-%m-%d %H:%M:%S UTC"), set_by=user)


def show_policy(library: Library) -> Policy:
    with library.read() as session:
        return current_policy(session)


def policy_json(policy: Policy) -> str:
    """The policy as recorded in a run (the stored data, without who set it)."""
    return json.dumps({"profile": {"name": policy.profile_name, "version": policy.profile_version,
                                   "hash": policy.profile_hash, "origin": policy.profile_origin},
                       "roles": policy.roles, "author_may_approve": policy.author_may_approve,
                       "set_at": policy.set_at, "set_by": policy.set_by}, sort_keys=True)
