"""A database failure's next step fits its cause: waiting helps a busy library, not a device,
a read-only file or a full disk (the texts are SQLite's own messages)."""

from __future__ import annotations

from pathlib import Path

import pytest
from sqlalchemy.exc import OperationalError

from formdb.store.db import translate_failure
from tests.helpers import run_formdb


@pytest.mark.parametrize(("reason", "step"), [
    ("database is locked", "try again"),
    ("attempt to write a readonly database", "write access"),
    ("disk I/O error", "names a SQLite file"),
    ("database or disk is full", "names a SQLite file"),
])
def test_the_hint_follows_the_reason(reason: str, step: str) -> None:
    error = translate_failure(OperationalError("INSERT ...", {}, Exception(reason)), None)
    assert error is not None and step in (error.hint or ""), error


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero (Linux)")
def test_a_device_as_the_library_is_not_told_to_try_again() -> None:
    done = run_formdb(["--db", "/dev/zero", "init"])
    assert done.exit_code == 2 and len(done.stderr.strip().splitlines()) == 1, done.stderr
    assert "Next: try again" not in done.stderr and "SQLite file" in done.stderr, done.stderr
