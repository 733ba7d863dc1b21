"""Key files as outputs and inputs: written whole or not at all, never over anything, and read
no further than a key file can be (issue 15's rules for every file formdb writes and reads)."""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from formdb.services.review import keys as keys_module
from tests.helpers import run_formdb
from tests.signing import ENV


def _one_error_line(stderr: str) -> str:
    lines = stderr.strip().splitlines()
    assert len(lines) >= 1 and lines[0].startswith("Error: "), stderr
    assert "Traceback" not in stderr and "internal problem" not in stderr
    return lines[0]


def test_a_new_key_pair_is_written_whole_with_its_modes(tmp_path: Path) -> None:
    key = tmp_path / "rita.pem"
    old = os.umask(0o022)
    try:
        made = run_formdb(["key", "new", "--out", str(key)], env=ENV)
    finally:
        os.umask(old)
    assert made.exit_code == 0, made.stderr
    pub = tmp_path / "rita.pem.pub"
    assert stat.S_IMODE(key.stat().st_mode) == 0o600  # only its owner reads the private key
    assert stat.S_IMODE(pub.stat().st_mode) == 0o644
    assert pub.read_text(encoding="ascii").endswith("\n")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rita.pem", "rita.pem.pub"]


def test_a_symlink_where_the_public_key_goes_is_not_followed(tmp_path: Path) -> None:
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me\n")
    key = tmp_path / "rita.pem"
    (tmp_path / "rita.pem.pub").symlink_to(victim)
    made = run_formdb(["key", "new", "--out", str(key)], env=ENV)
    assert made.exit_code == 2
    assert "already exists" in _one_error_line(made.stderr)
    assert victim.read_text() == "keep me\n" and not key.exists()
    # a dangling symlink is no better a target
    dangling = tmp_path / "gone.pem"
    (tmp_path / "gone.pem.pub").symlink_to(tmp_path / "nowhere")
    assert run_formdb(["key", "new", "--out", str(dangling)], env=ENV).exit_code == 2
    assert not (tmp_path / "nowhere").exists() and not dangling.exists()


def test_a_public_key_that_cannot_be_written_leaves_no_private_key(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # the pair or nothing: the public half fails to be written, the private half is taken back
    written = keys_module._write_new

    def fail_on_pub(path: Path, data: bytes, mode: int) -> None:
        if path.name.endswith(".pub"):
            raise OSError(28, "No space left on device")
        written(path, data, mode)

    monkeypatch.setattr(keys_module, "_write_new", fail_on_pub)
    key = tmp_path / "rita.pem"
    made = run_formdb(["key", "new", "--out", str(key)], env=ENV)
    assert made.exit_code == 2
    assert "nothing was written" in _one_error_line(made.stderr)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("what", ["device", "folder", "huge"])
def test_a_key_file_that_is_no_key_file_is_refused_in_one_line(
        seeded_sqlite_url: str, tmp_path: Path, what: str) -> None:
    if what == "device":
        path = Path("/dev/zero")  # never ends: read whole, it would exhaust memory
    elif what == "folder":
        path = tmp_path
    else:
        path = tmp_path / "huge.pem"
        path.write_bytes(b"-" * (keys_module.KEY_FILE_BYTES + 1))
    enrol = run_formdb(["--db", seeded_sqlite_url, "key", "enrol", "someone", "--name",
                        "Dr. Some One", "--public-key", str(path)], env=ENV)
    assert enrol.exit_code == 2
    assert str(path) in _one_error_line(enrol.stderr)
    with pytest.raises(Exception, match="signing key") as caught:
        keys_module.load_private_key(path, "a long passphrase")
    assert type(caught.value).__name__ in ("InvalidData", "ConfigError")
