"""Problems, as opposed to findings.

A finding is a result of checking a formula. A ``FormdbError`` means the work could not be done:
the CLI turns each one into a single ``Error: ...`` line plus a next step, and exit code 2.
"""

from __future__ import annotations

from collections.abc import Sequence


def quoted(text: str) -> str:
    """``text`` in quotes for a message, as typed: Python's repr would double a backslash and
    escape a quote inside it ('C:\\\\x', 'it\\'s'). Single quotes, or double ones around a
    text holding a single quote; control characters are escaped on the way out (the CLI's
    terminal filter)."""
    mark = '"' if "'" in text and '"' not in text else "'"
    return f"{mark}{text}{mark}"


class FormdbError(Exception):
    """Base of every problem formdb reports to a user; ``hint`` is the next step to suggest."""

    exit_code = 2

    def __init__(self, message: str, hint: str | None = None,
                 problems: Sequence[str] | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint
        # every problem, one line each (an import table or several files may carry many);
        # the CLI prints one ``Error:`` line per entry
        self.problems: list[str] = list(problems) if problems else [message]

    def __str__(self) -> str:
        return self.message


class InvalidData(FormdbError):
    """Input that breaks a data rule: a bad value, a missing field, a malformed file."""

    @classmethod
    def of(cls, problems: Sequence[str], hint: str | None = None) -> InvalidData:
        """One error carrying several problems; its message is the first."""
        return cls(problems[0], hint=hint, problems=problems)


class NotFound(FormdbError):
    """A named thing (ingredient, formula, run, profile) is not in the library."""


class Conflict(FormdbError):
    """Someone else changed the record since the caller read it, or a name is already taken."""


class ConfigError(FormdbError):
    """The database, a profile or an option cannot be used as given."""


class SchemaOutdated(ConfigError):
    """The database exists but is not at the newest migration."""


class Forbidden(FormdbError):
    """The user's role does not allow the action."""


class Unconfirmed(FormdbError):
    """A change or destructive command was shown but not confirmed (no ``--yes``)."""
