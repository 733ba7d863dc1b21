"""``formdb key new / enrol / revoke / list``: signing keys. Each signer makes a key pair on
their own machine (the private key stays there, passphrase-protected); an admin enrols the
public key in the library and revokes it when it is lost."""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING

import click

from formdb.cli.main import AppContext, with_library

if TYPE_CHECKING:
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from formdb.store.library import Library

PASSPHRASE_ENV = "FORMDB_KEY_PASSPHRASE"


def passphrase(confirm: bool = False) -> str:
    """The key's passphrase: FORMDB_KEY_PASSPHRASE (for scripts), else asked on the terminal
    without echo; without a terminal and without the variable, a clear error."""
    from formdb.errors import ConfigError

    given = os.environ.get(PASSPHRASE_ENV)
    if given is not None:
        return given
    if not sys.stdin.isatty():
        raise ConfigError("no terminal to ask for the key's passphrase.",
                          hint=f"run it in a terminal, or set {PASSPHRASE_ENV}")
    text: str = click.prompt("Passphrase of your signing key", hide_input=True,
                             confirmation_prompt=confirm, err=True)
    return text


def signing_key(path: Path | None) -> Ed25519PrivateKey:
    """The signer's private key, read from PATH (default: the user's config folder)."""
    from formdb.services.review.keys import default_key_path, load_private_key

    return load_private_key(path or default_key_path(), passphrase())


@click.group("key")
def key_group() -> None:
    """Signing keys: a personal Ed25519 key pair per signer; admins enrol public keys."""


@key_group.command("new")
@click.option("--out", type=click.Path(path_type=Path, dir_okay=False),
              help="Where to write the private key (default: ~/.config/formdb/signing-key.pem "
                   "or FORMDB_SIGNING_KEY); the public key goes beside it as .pub.")
def new_cmd(out: Path | None) -> None:
    """Make your signing key pair on this machine, protected by a passphrase you choose."""
    from formdb.report.review_keys import key_made
    from formdb.services.review.keys import default_key_path, new_key_pair

    made = new_key_pair(out or default_key_path(), passphrase(confirm=True))
    click.echo(key_made(made), nl=False)


@key_group.command("enrol")
@click.argument("login")
@click.option("--name", "printed_name", required=True, help="The signer's printed name.")
@click.option("--public-key", "public", required=True, metavar="FILE|TEXT",
              help="The .pub file `formdb key new` wrote, or its one line of text.")
@with_library
def enrol_cmd(app: AppContext, library: Library, login: str, printed_name: str,
              public: str) -> None:
    """Enrol LOGIN's public key under their printed name (admin only)."""
    from formdb.errors import InvalidData
    from formdb.report.review_keys import key_enrolled
    from formdb.schemas.bounds import UnreadableInput, read_input
    from formdb.services.review.keys import KEY_FILE_BYTES, enrol_key

    path = Path(public).expanduser()
    if path.exists():  # a file (the .pub `key new` wrote), else the key's own text
        try:
            public = read_input(path, KEY_FILE_BYTES).decode("ascii")
        except (OSError, UnicodeDecodeError, UnreadableInput) as exc:
            raise InvalidData(f"{path}: cannot be read as a public key ({exc}).",
                              hint="give the .pub file `formdb key new` wrote") from None
    click.echo(key_enrolled(enrol_key(library, login, printed_name, public, user=app.user)),
               nl=False)


@key_group.command("revoke")
@click.argument("key_id")
@click.option("--reason", required=True, help="Why (lost, compromised, left the team).")
@with_library
def revoke_cmd(app: AppContext, library: Library, key_id: str, reason: str) -> None:
    """Revoke key KEY_ID (admin only): it signs nothing more; what it signed still verifies."""
    from formdb.report.review_keys import key_revoked
    from formdb.services.review.keys import revoke_key

    click.echo(key_revoked(revoke_key(library, key_id, reason, user=app.user)), nl=False)


@key_group.command("list")
@click.option("--format", "fmt", type=click.Choice(("table", "json")), default="table",
              show_default=True)
@with_library
def list_cmd(app: AppContext, library: Library, fmt: str) -> None:
    """Every enrolled key: login, printed name, key id, enrolled and revoked."""
    from formdb.report.review_keys import key_list
    from formdb.services.review.keys import list_keys

    click.echo(key_list(list_keys(library), fmt), nl=False)
