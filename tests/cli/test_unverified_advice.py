"""EVD01's advice is a command that works: run with a source that was read, the value it names
is verified and the finding goes (the seed's ethylhexylglycerin density is from memory; the
handbook source here is invented for the test and cites nothing real)."""

from __future__ import annotations

import re

from formdb.resources import seed_data_dir
from tests.helpers import check_findings, run_formdb

HAND_CREAM = seed_data_dir() / "demo" / "01-hand-cream.toml"


def _evd01(url: str, inci: str) -> list[dict[str, object]]:
    return [f for f in check_findings(url, HAND_CREAM, "--profile", "strict")
            if f["rule"] == "EVD01" and inci in f["ingredients"] and "density" in f["message"]]


def test_the_advice_command_verifies_the_value(seeded_library_url: str) -> None:
    found = _evd01(seeded_library_url, "Ethylhexylglycerin")
    assert len(found) == 1
    assert "density rests on a value recorded as from memory" in str(found[0]["message"])
    command = re.search(r"`(formdb ingredient verify [^`]+)`", str(found[0]["advice"]))
    assert command is not None, found[0]["advice"]
    words = command.group(1).split()
    assert words[:4] == ["formdb", "ingredient", "verify", "Ethylhexylglycerin"]
    added = run_formdb(["--db", seeded_library_url, "source", "add", "invented-handbook",
                        "--kind", "handbook", "--citation", "An invented handbook (test only)",
                        "--set", "edition=2", "--set", "page=14", "--reason", "test"])
    assert added.exit_code == 0, added.stderr
    argv = [w if w != "KEY" else "invented-handbook" for w in words[1:]]
    verified = run_formdb(["--db", seeded_library_url, *argv, "--reason", "read it"])
    assert verified.exit_code == 0, verified.stderr
    assert _evd01(seeded_library_url, "Ethylhexylglycerin") == []
