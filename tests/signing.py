"""People and signers for the sign-off tests, on both backends.

A person acts as formdb authenticates them: on SQLite the operating-system account (simulated
with ``tests.helpers.run_as``), on PostgreSQL a database login of their own, made for the test
(a member of the test's superuser login so that it may use the test's tables) and dropped
afterwards by the ``people`` fixture. A signer is a person with a key pair made by
``formdb key new`` and enrolled with ``formdb key enrol``; ``sign`` runs ``formdb review sign``
with that key (the passphrase from the environment, as a script would give it).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from uuid import uuid4

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from tests.helpers import CliResult, run_as, run_formdb

PASSPHRASE = "larkspur bench test passphrase"
ENV = {"FORMDB_KEY_PASSPHRASE": PASSPHRASE}


@dataclass(frozen=True)
class Person:
    name: str  # the operating-system account on SQLite
    url: str  # the library as this person connects to it
    identity: str  # what formdb records for them


@dataclass(frozen=True)
class Signer:
    person: Person
    printed_name: str
    key: Path

    @property
    def login(self) -> str:
        return self.person.identity


def _is_pg(url: str) -> bool:
    return url.startswith("postgresql")


class People:
    """Makes the people of one test; on PostgreSQL each gets a login, dropped afterwards."""

    def __init__(self) -> None:
        self._logins: list[tuple[str, str]] = []
        self._made: dict[tuple[str, str], Person] = {}

    def __call__(self, url: str, name: str) -> Person:
        known = self._made.get((url, name))
        if known is not None:
            return known
        if not _is_pg(url):
            person = Person(name, url, name)
        else:
            base = make_url(url)
            login = f"fdbs_{uuid4().hex[:8]}_{name}"
            admin = create_engine(base, isolation_level="AUTOCOMMIT")
            try:
                with admin.connect() as conn:
                    owner = conn.execute(text("SELECT session_user")).scalar_one()
                    conn.execute(text(f'CREATE ROLE "{login}" LOGIN IN ROLE "{owner}"'))
            finally:
                admin.dispose()
            self._logins.append((url, login))
            person = Person(name, base.set(username=login).render_as_string(
                hide_password=False), login)
        self._made[(url, name)] = person
        return person

    def drop(self) -> None:
        for url, login in self._logins:
            admin = create_engine(url, isolation_level="AUTOCOMMIT")
            try:
                with admin.connect() as conn:
                    conn.execute(text(
                        "SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
                        "WHERE usename = :u"), {"u": login})
                    conn.execute(text(f'DROP ROLE IF EXISTS "{login}"'))
            finally:
                admin.dispose()


@pytest.fixture
def people() -> Iterator[Callable[[str, str], Person]]:
    """``people(url, name)``: the person ``name`` working on the library at ``url``."""
    made = People()
    try:
        yield made
    finally:
        made.drop()


def act(person: Person, *args: str, env: dict[str, str] | None = None) -> CliResult:
    """``formdb ARGS`` run by ``person`` on their library."""
    return run_as(person.name, ["--db", person.url, *args], env)


def new_signer(person: Person, folder: Path, printed_name: str, *,
               admin: Person | None = None) -> Signer:
    """Make ``person``'s key pair in ``folder`` and have ``admin`` (else themselves, as in an
    open library) enrol it for their authenticated identity."""
    key = folder / f"{person.name}-{uuid4().hex[:6]}-signing-key.pem"
    made = run_formdb(["key", "new", "--out", str(key)], env=ENV)
    assert made.exit_code == 0, made.stderr
    enrolled = act(admin or person, "key", "enrol", person.identity, "--name", printed_name,
                   "--public-key", f"{key}.pub")
    assert enrolled.exit_code == 0, enrolled.stderr
    return Signer(person, printed_name, key)


def sign(signer: Signer, run: str, meaning: str, *extra: str) -> CliResult:
    return act(signer.person, "review", "sign", run, "--meaning", meaning, "--key",
               str(signer.key), *extra, env=ENV)


_KEYS: dict[tuple[str, str], object] = {}


def enrolled_key(url: str, login: str, name: str) -> object:
    """An Ed25519 private key for ``login``, enrolled once per library (service level)."""
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from formdb.services.review.keys import enrol_key, public_text
    from tests.libraries import opened

    found = _KEYS.get((url, login))
    if found is None:
        key = Ed25519PrivateKey.generate()
        enrol_key(opened(url), login, name, public_text(key.public_key()), user=login)
        found = _KEYS[(url, login)] = key
    return found
