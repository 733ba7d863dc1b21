"""A mistyped command, option or value is bad input like any other: one ``Error:`` line on
stderr naming the option and where help is, exit 2, no usage block and nothing on stdout."""

from __future__ import annotations

import pytest

from tests.helpers import run_formdb


@pytest.mark.parametrize(("args", "named"), [
    (["chek", "a.toml"], "No such command 'chek'"),
    (["ingredient", "edit", "Water", "--expect-version", "abc"], "'--expect-version'"),
    (["check", "a.toml", "--format", "pdf"], "'--format'"),
    (["blend", "--target", "twelve"], "'--target'"),
    (["ingredient", "show", "Water", "--no-such-option"], "--no-such-option"),
])
def test_a_usage_error_is_one_line_naming_what_is_wrong(args: list[str], named: str) -> None:
    result = run_formdb(args)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, lines
    assert lines[0].startswith("Error: ") and named in lines[0], lines
    assert "--help" in lines[0] and "Usage:" not in result.stderr
    assert result.stdout == ""
