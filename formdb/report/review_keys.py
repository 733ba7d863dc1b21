"""What ``formdb key`` and ``formdb review policy`` print."""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import asdict
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from formdb.schemas.review import KeyInfo, NewKey, Policy


def key_made(made: NewKey) -> str:
    return (f"Private key written to {made.private_path} (encrypted with your passphrase; "
            "keep it on this machine, never share it).\n"
            f"Public key {made.key_id} written to {made.public_path}:\n"
            f"  {made.public_key}\n"
            "Next: give the .pub file to an admin, who runs "
            f"`formdb key enrol YOUR_LOGIN --name 'Your Name' --public-key {made.public_path}`.\n")


def key_enrolled(info: KeyInfo) -> str:
    return (f"Enrolled key {info.key_id} for {info.login} ({info.printed_name}) at "
            f"{info.enrolled_at} by {info.enrolled_by}.\n")


def key_revoked(info: KeyInfo) -> str:
    return (f"Revoked key {info.key_id} of {info.login} ({info.printed_name}) at "
            f"{info.revoked_at} by {info.revoked_by}: {info.reason}. Signatures it made "
            "before now still verify.\n")


def key_list(keys: Sequence[KeyInfo], fmt: str) -> str:
    if fmt == "json":
        return json.dumps([asdict(k) for k in keys], indent=2, ensure_ascii=False) + "\n"
    if not keys:
        return ("No signing keys enrolled: a signer runs `formdb key new`, an admin "
                "`formdb key enrol`.\n")
    lines = []
    for k in keys:
        state = (f"revoked {k.revoked_at} by {k.revoked_by} ({k.reason})" if k.revoked_at
                 else "in use")
        lines.append(f"{k.key_id}  {k.login}  {k.printed_name}  enrolled {k.enrolled_at} by "
                     f"{k.enrolled_by}; {state}")
    return "\n".join(lines) + "\n"


def policy_text(policy: Policy, fmt: str = "text") -> str:
    """The review policy in force, as ``review policy show|set`` print it."""
    if fmt == "json":
        return json.dumps(asdict(policy), indent=2, ensure_ascii=False) + "\n"
    who = ("built into formdb (no admin has set one)" if policy.set_at == "built-in"
           else f"set {policy.set_at} by {policy.set_by}")
    roles = ", ".join(f"{m} needs {r}" for m, r in policy.roles.items())
    author = ("an author may approve their own run" if policy.author_may_approve
              else "an author may not approve their own run")
    return (f"Review policy {policy.policy_hash[:12]}, {who}:\n"
            f"  signable profile: {policy.profile_name} {policy.profile_version}, "
            f"hash {policy.profile_hash} ({policy.profile_origin})\n"
            f"  runs under any other profile are drafts: never signed, never superseding\n"
            f"  {roles}; {author}\n")
