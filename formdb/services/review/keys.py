"""Signing keys: each signer's Ed25519 key pair, enrolled by an admin, and the signature itself.

The private key never leaves the signer's machine: ``new_key_pair`` writes it as encrypted
PKCS#8 PEM (the passphrase is the signer's) with owner-only permissions, and ``load_private_key``
reads it back to sign. The library holds only public keys, in the sealed ``key_enrolments``
chain: an admin enrols a login's key with the person's printed name, and revokes it when it is
lost; a revoked key stays there, so signatures it made before the revocation still verify.

A signature signs one text (``signed_text``): the run hash, the meaning, the reason, each
waived open item with its justification, the login, the printed name, the key id and the UTC
time. ``check_signature`` rebuilds that text from the stored row and verifies it against the key
enrolled for that login at that time; a row written or edited without the private key fails.
"""

from __future__ import annotations

import base64
import hashlib
import json
import os
from collections.abc import Sequence
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey
from sqlalchemy import select
from sqlalchemy.orm import Session

from formdb.errors import ConfigError, Conflict, InvalidData, NotFound, quoted
from formdb.schemas.admin import Action
from formdb.schemas.bounds import UnreadableInput, read_input
from formdb.schemas.review import KeyInfo, NewKey
from formdb.schemas.times import utc
from formdb.services.admin.access import require
from formdb.services.review.audit import append_sealed
from formdb.store.library import Library
from formdb.store.models import KeyEnrolment, ReviewSignature

PUBLIC_PREFIX = "formdb-ed25519"
SIGNED_FORM = "formdb-signature-1"
MIN_PASSPHRASE = 8
KEY_FILE_BYTES = 64 * 1024  # a PEM key file is well under 1 KB; more is not a key file
KEY_FILE_ENV = "FORMDB_SIGNING_KEY"
CLOCK_SKEW = timedelta(minutes=10)  # the run's and the signer's clocks may differ this much


def default_key_path() -> Path:
    """Where ``formdb key new`` puts the private key unless told: the user's config folder."""
    given = os.environ.get(KEY_FILE_ENV)
    if given:
        return Path(given).expanduser()
    base = os.environ.get("XDG_CONFIG_HOME") or str(Path.home() / ".config")
    return Path(base) / "formdb" / "signing-key.pem"


def _raw(public: Ed25519PublicKey) -> bytes:
    return public.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)


def key_id_of(public: Ed25519PublicKey) -> str:
    """The first 16 hex digits of SHA-256 of the raw public key."""
    return hashlib.sha256(_raw(public)).hexdigest()[:16]


def public_text(public: Ed25519PublicKey) -> str:
    return f"{PUBLIC_PREFIX} {base64.b64encode(_raw(public)).decode('ascii')}"


def parse_public(text: str, where: str) -> Ed25519PublicKey:
    """A public key as ``formdb key new`` prints it (``formdb-ed25519 BASE64``)."""
    parts = text.strip().split()
    if len(parts) != 2 or parts[0] != PUBLIC_PREFIX:
        raise InvalidData(f"{where}: not a formdb public key (expected '{PUBLIC_PREFIX} "
                          "BASE64')", hint="give the .pub file `formdb key new` wrote")
    try:
        raw = base64.b64decode(parts[1], validate=True)
        return Ed25519PublicKey.from_public_bytes(raw)
    except ValueError:
        raise InvalidData(f"{where}: the public key is not 32 bytes of base64",
                          hint="give the .pub file `formdb key new` wrote") from None


def _check_passphrase(passphrase: str) -> bytes:
    if len(passphrase) < MIN_PASSPHRASE:
        raise InvalidData(f"the passphrase is too short: give at least {MIN_PASSPHRASE} "
                          "characters.", hint="it protects your private key on this machine")
    return passphrase.encode("utf-8")


def new_key_pair(path: Path, passphrase: str) -> NewKey:
    """Make a key pair: the private key encrypted with ``passphrase`` at ``path`` (mode 0600,
    never overwritten), the public key beside it as ``path.pub``."""
    secret = _check_passphrase(passphrase)
    pub_path = path.with_name(path.name + ".pub")
    for target in (path, pub_path):
        if os.path.lexists(target):  # a dangling symlink too: nothing is written through one
            raise Conflict(f"{target} already exists: a key is never overwritten.",
                           hint="give another --out, or ask an admin to revoke the old key "
                                "first if it is lost")
    key = Ed25519PrivateKey.generate()
    pem = key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                            serialization.BestAvailableEncryption(secret))
    path.parent.mkdir(parents=True, exist_ok=True, mode=0o700)
    public = key.public_key()
    try:
        _write_new(path, pem, 0o600)  # only its owner may read the private key
        try:
            _write_new(pub_path, (public_text(public) + "\n").encode("ascii"), 0o644)
        except (OSError, Conflict):
            path.unlink(missing_ok=True)  # a pair or nothing
            raise
    except OSError as exc:
        raise InvalidData(f"{path}: the key pair cannot be written ({exc.strerror or exc}); "
                          "nothing was written.", hint="choose a folder you can write to") from None
    return NewKey(str(path), str(pub_path), public_text(public), key_id_of(public))


def _write_new(path: Path, data: bytes, mode: int) -> None:
    """Write a file that does not exist yet, whole or not at all: a temporary file beside it,
    synced, then linked into place. The link fails when anything (a file, a symlink) took the
    name meanwhile, so nothing is overwritten and no symlink is followed."""
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, mode)
    try:
        with os.fdopen(fd, "wb") as out:
            out.write(data)
            out.flush()
            os.fsync(out.fileno())
        os.link(tmp, path)
    except FileExistsError:
        raise Conflict(f"{path} already exists: a key is never overwritten.",
                       hint="give another --out") from None
    finally:
        tmp.unlink(missing_ok=True)


def load_private_key(path: Path, passphrase: str) -> Ed25519PrivateKey:
    try:
        data = read_input(path, KEY_FILE_BYTES)
    except OSError as exc:
        raise ConfigError(f"signing key {path}: cannot be read ({exc.strerror}).",
                          hint="make one with `formdb key new`, or give --key FILE") from None
    except UnreadableInput as exc:
        raise InvalidData(f"signing key {path}: {exc}.",
                          hint="give the key file `formdb key new` wrote") from None
    try:
        key = serialization.load_pem_private_key(data, password=passphrase.encode("utf-8"))
    except (ValueError, TypeError):
        raise InvalidData(f"signing key {path}: wrong passphrase, or not a formdb key file.",
                          hint="type the passphrase you chose with `formdb key new`") from None
    if not isinstance(key, Ed25519PrivateKey):
        raise InvalidData(f"signing key {path}: not an Ed25519 key.",
                          hint="make one with `formdb key new`")
    return key


# ----- enrolment -------------------------------------------------------------------------------

def _stamp(at: datetime) -> str:
    return utc(at).strftime("%Y-%m-%d %H:%M:%S UTC")


def _rows(session: Session) -> Sequence[KeyEnrolment]:
    return session.scalars(select(KeyEnrolment).order_by(KeyEnrolment.id)).all()


def _infos(rows: Sequence[KeyEnrolment]) -> list[KeyInfo]:
    keys: dict[str, KeyInfo] = {}
    for row in rows:
        if row.action == "enrol" and row.key_id not in keys:
            keys[row.key_id] = KeyInfo(row.key_id, row.login, row.printed_name, row.public_key,
                                       _stamp(row.at), row.by_user)
        elif row.action == "revoke" and row.key_id in keys:
            old = keys[row.key_id]
            keys[row.key_id] = KeyInfo(old.key_id, old.login, old.printed_name, old.public_key,
                                       old.enrolled_at, old.enrolled_by, _stamp(row.at),
                                       row.by_user, row.reason)
    return list(keys.values())


def enrol_key(library: Library, login: str, printed_name: str, public: str, *,
              user: str) -> KeyInfo:
    """``formdb key enrol``: an admin binds a login and printed name to a public key."""
    login, printed_name = login.strip(), printed_name.strip()
    for what, value, most in (("login", login, 100), ("--name", printed_name, 200)):
        if not value or len(value) > most or any(not c.isprintable() for c in value):
            raise InvalidData(f"{what} {value!r}: give 1-{most} printable characters.",
                              hint="the login the signer works under, and their printed name")
    key = parse_public(public, "public key")
    key_id = key_id_of(key)
    with library.write() as session:
        require(session, user, Action.MANAGE_USERS)
        if any(r.key_id == key_id for r in _rows(session)):
            raise Conflict(f"key {key_id} is already enrolled (or was, and was revoked).",
                           hint="a key is enrolled once; a signer with a new key runs "
                                "`formdb key new`")
        now = datetime.now(UTC).replace(microsecond=0)
        append_sealed(session, KeyEnrolment(at=now, by_user=user, action="enrol", login=login,
                                            printed_name=printed_name, key_id=key_id,
                                            public_key=public_text(key), reason=None))
        return KeyInfo(key_id, login, printed_name, public_text(key), _stamp(now), user)


def revoke_key(library: Library, key_id: str, reason: str, *, user: str) -> KeyInfo:
    """``formdb key revoke``: the key signs nothing from now on; what it signed still verifies."""
    key_id = key_id.strip().lower()
    if not reason.strip():
        raise InvalidData("--reason: say why the key is revoked (lost, left the team...).",
                          hint="the reason is kept with the revocation")
    with library.write() as session:
        require(session, user, Action.MANAGE_USERS)
        found = next((k for k in _infos(_rows(session)) if k.key_id == key_id), None)
        if found is None:
            raise NotFound(f"no enrolled key {quoted(key_id)}.",
                           hint="`formdb key list` shows them")
        if found.revoked_at is not None:
            raise Conflict(f"key {key_id} was revoked at {found.revoked_at}.",
                           hint="nothing to do")
        now = datetime.now(UTC).replace(microsecond=0)
        append_sealed(session, KeyEnrolment(at=now, by_user=user, action="revoke",
                                            login=found.login, printed_name=found.printed_name,
                                            key_id=key_id, public_key=found.public_key,
                                            reason=reason.strip()))
        return KeyInfo(found.key_id, found.login, found.printed_name, found.public_key,
                       found.enrolled_at, found.enrolled_by, _stamp(now), user, reason.strip())


def list_keys(library: Library) -> list[KeyInfo]:
    with library.read() as session:
        return _infos(_rows(session))


# ----- signing and checking --------------------------------------------------------------------

def signed_text(*, run_hash: str, meaning: str, reason: str | None,
                waivers: list[dict[str, Any]], login: str, printed_name: str, key_id: str,
                signed_at: datetime) -> bytes:
    """The exact bytes a signature signs."""
    data = {"form": SIGNED_FORM, "run_hash": run_hash, "meaning": meaning, "reason": reason,
            "waivers": waivers, "login": login, "printed_name": printed_name, "key_id": key_id,
            "signed_at": utc(signed_at).strftime("%Y-%m-%dT%H:%M:%SZ")}
    return json.dumps(data, sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False).encode("utf-8")


def signing_enrolment(session: Session, login: str, key: Ed25519PrivateKey,
                      at: datetime) -> KeyEnrolment:
    """The enrolment of ``key`` for ``login``, refused when it is absent or revoked."""
    key_id = key_id_of(key.public_key())
    rows = [r for r in _rows(session) if r.key_id == key_id]
    enrol = next((r for r in rows if r.action == "enrol"), None)
    if enrol is None:
        raise Conflict(f"your signing key {key_id} is not enrolled in this library.",
                       hint=f"ask an admin: formdb key enrol {login} --name 'Your Name' "
                            "--public-key YOUR_KEY.pub")
    if enrol.login != login:
        raise Conflict(f"signing key {key_id} is enrolled for {enrol.login}, not for {login}.",
                       hint="each signer signs with their own key")
    if any(r.action == "revoke" and utc(r.at) <= utc(at) for r in rows):
        raise Conflict(f"signing key {key_id} was revoked.",
                       hint="make a new key with `formdb key new` and ask an admin to enrol it")
    return enrol


def sign_bytes(key: Ed25519PrivateKey, data: bytes) -> str:
    return base64.b64encode(key.sign(data)).decode("ascii")


def check_signature(sig: ReviewSignature, run_hash: str,
                    enrolments: Sequence[KeyEnrolment],
                    run_made: datetime | None = None) -> str:
    """"valid", or "INVALID: why" for a signature row against the run (its hash and when it
    was made) and the enrolled keys. The time is the signer's claim: a key used after its
    revocation could be dated before it, but not before the run it signs existed (less
    ``CLOCK_SKEW`` between the two machines' clocks), so a revoked key cannot sign a run made
    after its revocation."""
    if not sig.signature or not sig.key_id:
        return "INVALID: no key signature (written without a signing key)"
    if sig.run_hash != run_hash:
        return "INVALID: signed for another run hash"
    if run_made is not None and utc(sig.signed_at) < utc(run_made) - CLOCK_SKEW:
        return "INVALID: dated before the run it signs was made"
    rows = [r for r in enrolments if r.key_id == sig.key_id]
    enrol = next((r for r in rows if r.action == "enrol"), None)
    if enrol is None:
        return f"INVALID: key {sig.key_id} is not enrolled"
    if enrol.login != sig.signed_by or enrol.printed_name != sig.signer:
        return f"INVALID: key {sig.key_id} belongs to {enrol.login} ({enrol.printed_name})"
    if utc(sig.signed_at) < utc(enrol.at):
        return f"INVALID: dated before key {sig.key_id} was enrolled"
    if any(r.action == "revoke" and utc(r.at) < utc(sig.signed_at) for r in rows):
        return f"INVALID: dated after key {sig.key_id} was revoked"
    try:
        waivers = json.loads(sig.waivers_json) if sig.waivers_json else []
        public = parse_public(enrol.public_key, f"key {sig.key_id}")
        public.verify(base64.b64decode(sig.signature, validate=True), signed_text(
            run_hash=sig.run_hash, meaning=sig.meaning, reason=sig.comment, waivers=waivers,
            login=sig.signed_by, printed_name=sig.signer, key_id=sig.key_id,
            signed_at=sig.signed_at))
    except (InvalidSignature, ValueError, InvalidData):
        return "INVALID: the signature does not match the signed record"
    return "valid"


def enrolments(session: Session) -> Sequence[KeyEnrolment]:
    return _rows(session)
