"""Done-when of issue 13: no command run by a user without the needed role changes anything.

Every command that writes the library is run by an operating-system account with no role
(simulated by tests.helpers.run_as) in a library that has an admin: each must be refused in one
line naming the role it needs, and the library must hold exactly what it held before, plus
the refusal itself in the change log (entity ``access``). The imports read tables the admin
exported a moment before, so a refusal cannot be a complaint about the file. The PostgreSQL
side (the server refuses the same writes to a login without the duty's group role) is
tests/store/test_logins.py."""

from __future__ import annotations

from pathlib import Path

import pytest
from sqlalchemy import text

from formdb.store.db import make_engine
from tests.helpers import dump_database, run_as

pytestmark = pytest.mark.slow

CREAM = Path(__file__).resolve().parents[2] / "seed_data" / "demo" / "01-hand-cream.toml"


def _commands(files: Path) -> list[tuple[list[str], str]]:
    """(arguments, the role the refusal must name) for every command that writes."""
    edit = ["--reason", "roles test (made-up value)"]
    return [
        (["ingredient", "add", "Larkspur Roles Ester", "--set", "hlb=9", "--source",
          "rule-of-thumb"], "editor"),
        (["ingredient", "edit", "Polysorbate 80", "--set", "hlb=14.9", "--source",
          "rule-of-thumb", *edit], "editor"),
        (["ingredient", "verify", "Polysorbate 80", "--value", "hlb", "--source", "hpe6",
          *edit], "editor"),
        (["ingredient", "retire", "Polysorbate 80", *edit], "editor"),
        (["ingredient", "restore", "Larkspur Retired Ester", *edit], "editor"),
        (["ingredient", "import", str(files / "ingredients.csv")], "editor"),
        (["source", "add", "larkspur-roles", "--citation", "Larkspur notebook (invented)",
          "--kind", "in-house measurement"], "editor"),
        (["source", "edit", "hpe6", "--set", "note=changed", *edit], "editor"),
        (["source", "import", str(files / "sources.csv")], "editor"),
        (["toxicology", "edit", "phenoxyethanol-noael-rat-oral", "--set", "pod_value=320",
          *edit], "editor"),
        (["toxicology", "import", str(files / "toxicology.csv")], "editor"),
        (["exposure", "import", str(files / "exposure.csv")], "editor"),
        (["mixture", "set", "Larkspur Retired Ester", "--part", "Polysorbate 80=60",
          "--part", "Glycerin=40", "--source", "rule-of-thumb"], "editor"),
        (["price", "add", "Glycerin", "--per-kg", "3.5", "--currency", "EUR", "--supplier",
          "Larkspur Supplies (invented)"], "editor"),
        (["formula", "import", str(CREAM)], "formulator"),
        (["screen", "plan", "larkspur-roles-series", "--oil", "Isopropyl Myristate=1",
          "--low", "Sorbitan Stearate", "--high", "Polysorbate 60"], "formulator"),
        (["review", "policy", "set", "--profile", "strict", "--role", "approved=admin"],
         "admin"),
        (["user", "add", "mallory", "--role", "admin", "--yes"], "admin"),
        (["user", "grant", "ed", "admin", "--yes"], "admin"),
        (["user", "revoke", "ed", "editor", "--yes"], "admin"),
        (["user", "deactivate", "ed", "--yes"], "admin"),
        (["init", "--seed", "--yes"], "admin"),
        (["db", "downgrade", "base", "--yes"], "admin"),
    ]


def _refusals(url: str) -> int:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return int(conn.execute(text("SELECT count(*) FROM change_log WHERE action = "
                                         "'refused'")).scalar_one())
    finally:
        engine.dispose()


def test_every_writing_command_is_refused_to_a_user_without_its_role(
        seeded_sqlite_url: str, tmp_path: Path) -> None:
    url = seeded_sqlite_url
    as_boss = ["--db", url]
    for args in (["user", "add", "boss", "--role", "admin", "--role", "editor", "--yes"],
                 ["user", "add", "ed", "--role", "editor", "--yes"],
                 ["ingredient", "add", "Larkspur Retired Ester", "--role", "emulsifier"],
                 ["ingredient", "retire", "Larkspur Retired Ester", "--reason", "roles test"]):
        done = run_as("boss", [*as_boss, *args])
        assert done.exit_code == 0, (args, done.stderr)
    files = tmp_path / "files"
    files.mkdir()
    for kind in ("ingredient", "source", "toxicology", "exposure"):
        name = "ingredients" if kind == "ingredient" else kind if kind != "source" \
            else "sources"
        made = run_as("boss", [*as_boss, kind, "export", str(files / f"{name}.csv")])
        assert made.exit_code == 0, (kind, made.stderr)

    before = dump_database(url, exclude_columns=("at",))
    refused_before = _refusals(url)
    commands = _commands(files)
    for args, role in commands:
        refused = run_as("mallory", ["--db", url, *args])
        assert refused.exit_code == 2, (args, refused.stdout, refused.stderr)
        assert len(refused.stderr.strip().splitlines()) == 1, (args, refused.stderr)
        assert refused.stderr.startswith("Error: mallory may not "), (args, refused.stderr)
        assert f"that needs the role {role}" in refused.stderr, (args, refused.stderr)
    after = dump_database(url, exclude_columns=("at",))
    # nothing but the refusals: every other table as it was, one change-log row per command
    assert _refusals(url) == refused_before + len(commands)
    assert after.count("\n") == before.count("\n") + len(commands)
    kept = [line for line in after.splitlines() if "'refused'" not in line]
    assert kept == [line for line in before.splitlines() if "'refused'" not in line]
