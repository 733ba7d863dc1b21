"""The Library: one open library, its engine, and the units of work every service runs in.

A command opens its library once (``Library.open``) and hands the object to the services it
calls. Each service asks for ``library.read()`` or ``library.write()``. The first unit opened
on a Library is the command's transaction; a unit opened inside it joins it, so every number a
command reports comes from one state of the library:

- ``read()``: one consistent snapshot. On PostgreSQL the transaction is REPEATABLE READ and READ
  ONLY (every statement sees the snapshot of the first); on SQLite a deferred read transaction
  in WAL mode sees the file as it was at its first read.
- ``write()``: one transaction, committed when the outermost unit ends, rolled back on any
  exception. The write lock is taken at BEGIN (SQLite: BEGIN IMMEDIATE; PostgreSQL: formdb's
  advisory writer lock) so writers queue instead of failing, the same way on both backends.

A write inside a read is refused (a bug, not bad input): a command that writes opens a write
unit at the top. The sealing hooks of the audit trail live on ``LibrarySession``, formdb's own
session class, so other SQLAlchemy code in the same process is untouched.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import AbstractContextManager, contextmanager
from typing import ClassVar

from sqlalchemy import Engine
from sqlalchemy.orm import Session

from formdb.store.db import WRITE_LOCK, display_url, open_library, translate_failure
from formdb.store.identity import accept_claim, identity_of
from formdb.store.sealing import LibrarySession, lock_for_write

READ_SNAPSHOT = {"isolation_level": "REPEATABLE READ", "postgresql_readonly": True}


class Library:
    """An open formdb library (a SQLite file or a PostgreSQL database at the newest schema)."""

    opened: ClassVar[int] = 0  # how many libraries this process opened (tests count it)

    def __init__(self, engine: Engine | None = None, *, url: str | None = None,
                 owns_engine: bool = True, on_open: Callable[[], None] | None = None) -> None:
        if engine is None and url is None:
            raise ValueError("give an engine or a url")
        self._engine = engine
        self._url = url
        self._owns_engine = owns_engine
        self._on_open = on_open
        self._session: Session | None = None
        self._writing = False
        self._user: str | None = None
        self.transactions = 0  # outermost units run on this Library (tests count it)

    @classmethod
    def open(cls, url: str) -> Library:
        """Open the library at ``url``; SchemaOutdated when it is missing or not at head."""
        library = cls(url=url)
        _ = library.engine
        return library

    @classmethod
    def deferred(cls, url: str, *, on_open: Callable[[], None] | None = None) -> Library:
        """The library at ``url``, opened at its first use: a command checks its own input
        (and may need no library at all) before a missing library is reported. ``on_open`` is
        called once, just before the library is first opened."""
        return cls(url=url, on_open=on_open)

    @property
    def engine(self) -> Engine:
        if self._engine is None:
            assert self._url is not None
            on_open, self._on_open = self._on_open, None
            if on_open is not None:
                on_open()
            self._engine = open_library(self._url)
            Library.opened += 1
        return self._engine

    @property
    def url(self) -> str:
        """Where the library is, as it may be shown (password hidden)."""
        if self._engine is None and self._url is not None:
            return display_url(self._url)
        return display_url(self.engine.url)

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    @property
    def user(self) -> str:
        """Who is acting, as authenticated (formdb.store.identity): the PostgreSQL login
        (``session_user``) or, on SQLite, the operating-system account. Asked once."""
        if self._user is None:
            self._user = identity_of(self.engine)
        return self._user

    def identify(self, claimed: str | None = None) -> str:
        """The authenticated user; a ``claimed`` name that differs is refused."""
        return accept_claim(self.user, claimed, self.dialect)

    def read(self) -> AbstractContextManager[Session]:
        """A unit that only reads: one consistent snapshot (joins the open unit, if any)."""
        return self._unit(write=False)

    def write(self) -> AbstractContextManager[Session]:
        """A unit that writes: one transaction (joins an open write unit)."""
        return self._unit(write=True)

    @contextmanager
    def _unit(self, *, write: bool, snapshot: bool = True) -> Iterator[Session]:
        """``snapshot`` False: a plain (READ COMMITTED) transaction that may write without the
        up-front lock, as ``store.db.unit_of_work`` gives administration and tests."""
        if self._session is not None:
            if write and not self._writing:
                raise RuntimeError("a write unit was opened inside a read unit; open the "
                                   "command's unit with write() at the top")
            yield self._session
            return
        bind: Engine
        if write:
            bind = self.engine.execution_options(**{WRITE_LOCK: True})
        elif snapshot and self.dialect == "postgresql":
            bind = self.engine.execution_options(**READ_SNAPSHOT)
        else:
            bind = self.engine
        session = LibrarySession(bind, expire_on_commit=False)
        self._session, self._writing = session, write or not snapshot
        self.transactions += 1
        try:
            if write:
                # PostgreSQL: the writers' lock at BEGIN, as SQLite's BEGIN IMMEDIATE takes its
                # write lock, so both backends queue writers the same way and a write reads the
                # newest committed rows: a blind edit applies to the current version on both
                # (never a conflict), an edit with --expect-version conflicts on both
                lock_for_write(session)
            yield session
            session.commit()
        except BaseException as exc:
            session.rollback()
            problem = translate_failure(exc, self.engine)
            if problem is not None:
                raise problem from exc
            raise
        finally:
            self._session, self._writing = None, False
            session.close()

    def close(self) -> None:
        if self._owns_engine and self._engine is not None:
            self._engine.dispose()
            if self._url is not None:
                self._engine = None

    def __enter__(self) -> Library:
        return self

    def __exit__(self, *_exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"Library({self.url!r})"

