"""Records of administration: revisions, backups, grants, init, users and roles."""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum
from pathlib import Path


@dataclass(frozen=True)
class RevisionInfo:
    revision: str
    down_revision: str | None
    title: str
    is_current: bool
    is_head: bool


@dataclass(frozen=True)
class Status:
    database: str
    current: str | None
    head: str


@dataclass(frozen=True)
class BackupReport:
    database: str
    path: Path
    revision: str | None
    tables: dict[str, int]  # rows per table (the SQLite copy: the library's tables)


@dataclass(frozen=True)
class GrantReport:
    database: str
    roles: dict[str, list[str]]  # role -> tables it may write
    createrole_taken: tuple[str, ...] = ()  # admin logins that lost CREATEROLE (see grants)


@dataclass(frozen=True)
class TableCounts:
    added: int = 0
    changed: int = 0
    unchanged: int = 0


@dataclass(frozen=True)
class InitReport:
    """What ``init`` did: the revision before and after, and per seeded table what changed."""

    database: str
    revision_before: str | None
    revision: str
    seeded: dict[str, TableCounts] = field(default_factory=dict)
    builtin_sources_added: int = 0
    left_alone: tuple[str, ...] = ()  # values of an existing library the seed did not replace
    done: bool = True  # False: an unconfirmed seeding of an existing library, rolled back

    @property
    def created(self) -> bool:
        return self.revision_before is None

    @property
    def upgraded(self) -> bool:
        return self.revision_before != self.revision

    @property
    def changed_anything(self) -> bool:
        return (self.upgraded or self.builtin_sources_added > 0
                or any(c.added or c.changed for c in self.seeded.values()))


class Duty(StrEnum):
    ADMIN = "admin"
    EDITOR = "editor"
    FORMULATOR = "formulator"
    REVIEWER = "reviewer"


class Action(StrEnum):
    """Guarded actions, each with the one role it needs (NEEDS)."""

    CHANGE_LIBRARY = "change the library"
    STORE_FORMULAS = "store formulas"
    SIGN_RUNS = "sign runs"
    MANAGE_USERS = "manage users"
    DOWNGRADE = "downgrade the schema"
    RESTORE = "restore a backup"
    RESEED = "seed an existing library"


@dataclass(frozen=True)
class UserInfo:
    name: str
    active: bool
    roles: tuple[str, ...]


@dataclass(frozen=True)
class Plan:
    """What a change or destructive command will do (``done`` False) or did (True): one line
    per change, shown before it needs ``--yes``."""

    action: str
    changes: tuple[str, ...]
    done: bool
    confirm_option: str = "--yes"
    user: UserInfo | None = None
