"""Every command and sub-command of `formdb` explains itself (`--help` works and says something)."""

from __future__ import annotations

import click
import pytest
from click.testing import CliRunner

from formdb.cli.main import COMMANDS, cli
from tests.helpers import cli_commands

ALL = cli_commands()


def test_every_registered_command_loads() -> None:
    names = {path[0] for path, _ in ALL if len(path) == 1}
    assert names == set(COMMANDS)


@pytest.mark.parametrize(("path", "command"), ALL, ids=[" ".join(p) or "formdb" for p, _ in ALL])
def test_command_has_help(path: tuple[str, ...], command: click.Command) -> None:
    assert (command.help or "").strip(), f"formdb {' '.join(path)} has no help text"
    result = CliRunner().invoke(cli, [*path, "--help"])
    assert result.exit_code == 0, result.output
    assert "Usage:" in result.output
