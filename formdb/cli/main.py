"""The ``formdb`` command: global options, lazy sub-commands, and the one error handler.

Sub-commands are imported only when invoked, so ``formdb check`` does not pay for pandas.
"""

from __future__ import annotations

import importlib
import os
import sys
import traceback
from collections.abc import Callable
from dataclasses import dataclass
from functools import wraps
from typing import TYPE_CHECKING, Any, TypeVar

import click

from formdb.errors import FormdbError

if TYPE_CHECKING:
    from formdb.store.library import Library

# command name -> "module:attribute"; each module holds one click command or group
COMMANDS: dict[str, str] = {
    "init": "formdb.cli.admin:init_cmd",
    "ingredient": "formdb.cli.ingredients:ingredient_group",
    "formula": "formdb.cli.formulas:formula_group",
    "check": "formdb.cli.checking:check_cmd",
    "blend": "formdb.cli.checking:blend_cmd",
    "rules": "formdb.cli.rules:rules_cmd",
    "demo": "formdb.cli.demo:demo_cmd",
    "db": "formdb.cli.db:db_group",
    "user": "formdb.cli.users:user_group",
    "label": "formdb.cli.labelling:label_cmd",
    "review": "formdb.cli.review:review_group",
    "audit": "formdb.cli.audit:audit_group",
    "impact": "formdb.cli.impact:impact_cmd",
    "lists": "formdb.cli.lists:lists_group",
    "source": "formdb.cli.evidence:source_group",
    "toxicology": "formdb.cli.evidence:toxicology_group",
    "exposure": "formdb.cli.evidence:exposure_group",
    "batch": "formdb.cli.bench:batch_cmd",
    "price": "formdb.cli.bench:price_group",
    "mixture": "formdb.cli.mixtures:mixture_group",
    "screen": "formdb.cli.bench:screen_group",
    "key": "formdb.cli.keys:key_group",
}


@dataclass
class AppContext:
    """What every command gets: where the library is, whether to show tracebacks, and who is
    acting. ``user`` is the authenticated identity (formdb.store.identity), asked at first use
    from the command's Library or the database; ``claimed`` (``--user``/``FORMDB_USER``) is
    only ever compared with it."""

    db: str
    claimed: str | None
    debug: bool
    library: Library | None = None
    _user: str | None = None

    @property
    def user(self) -> str:
        if self._user is None:
            if self.library is not None:
                self._user = self.library.identify(self.claimed)
            else:
                from formdb.store.identity import accept_claim, identify_location

                actual, dialect = identify_location(self.db)
                self._user = accept_claim(actual, self.claimed, dialect)
        return self._user


F = TypeVar("F", bound=Callable[..., Any])


def with_library(command: F) -> F:
    """Give the command the AppContext and the Library (opened at its first use, closed at the
    end): one open per command. A command that calls several services wraps them in one
    ``library.read()`` or ``library.write()``, so it sees one snapshot or writes one
    transaction; a service's own unit joins the open one."""

    @wraps(command)
    @click.pass_obj
    def run(app: AppContext, *args: Any, **kwargs: Any) -> Any:
        from formdb.store.library import Library

        with Library.deferred(app.db) as library:
            app.library = library
            try:
                return command(app, library, *args, **kwargs)
            finally:
                app.library = None

    return run  # type: ignore[return-value]


class LazyGroup(click.Group):
    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(COMMANDS)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        target = COMMANDS.get(cmd_name)
        if target is None:
            return None
        module_name, attr = target.split(":")
        command: click.Command = getattr(importlib.import_module(module_name), attr)
        return command


@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--db", envvar="FORMDB_DB", default="formdb.sqlite", show_default=True,
              help="Library location: a SQLite file path or a postgresql+psycopg:// URL "
                   "(env FORMDB_DB).")
@click.option("--user", envvar="FORMDB_USER", default=None,
              help="Who you are, only as a check: refused unless it is the identity that was "
                   "authenticated (PostgreSQL: the database login; SQLite: the "
                   "operating-system account), which is what every change records "
                   "(env FORMDB_USER).")
@click.option("--debug", is_flag=True, help="Show a traceback when something goes wrong.")
@click.version_option(package_name="formdb")
@click.pass_context
def cli(ctx: click.Context, db: str, user: str | None, debug: bool) -> None:
    """formdb: the team's ingredient library and a pre-batch checker for emulsion formulas."""
    ctx.obj = app = AppContext(db=db, claimed=user, debug=debug)
    if user is not None and user.strip():
        _ = app.user  # a claim is checked before anything runs


def _sentence(text: str) -> str:
    text = text.rstrip()
    return text if text.endswith((".", "?", "!")) else text + "."


def error_lines(exc: FormdbError) -> list[str]:
    """One ``Error:`` line per problem (an import table or several formula files may carry
    many, in ``problems``); the next step rides on the last line."""
    lines = [f"Error: {_sentence(str(p))}" for p in exc.problems]
    if exc.hint:
        lines[-1] += f" Next: {_sentence(exc.hint)}"
    return lines


def _database_refusal(exc: Exception) -> FormdbError | None:
    from sqlalchemy.exc import DBAPIError

    if not isinstance(exc, DBAPIError):
        return None
    from formdb.store.db import translate_failure

    return translate_failure(exc, None)


def _wants_debug(argv: list[str]) -> bool:
    return "--debug" in argv or os.environ.get("FORMDB_DEBUG") == "1"


def main(argv: list[str] | None = None) -> None:
    """Entry point: run the command; turn a FormdbError into one ``Error:`` line and exit 2."""
    args = sys.argv[1:] if argv is None else argv
    try:
        code = cli.main(args=args, prog_name="formdb", standalone_mode=False)
    except FormdbError as exc:
        if _wants_debug(args):
            traceback.print_exc()
        for line in error_lines(exc):
            click.echo(line, err=True)
        sys.exit(exc.exit_code)
    except click.exceptions.Abort:
        click.echo("Error: aborted.", err=True)
        sys.exit(2)
    except click.ClickException as exc:
        exc.show()
        sys.exit(2 if exc.exit_code == 2 else exc.exit_code)
    except click.exceptions.Exit as exc:
        sys.exit(exc.exit_code)
    except KeyboardInterrupt:
        click.echo("Error: interrupted.", err=True)
        sys.exit(2)
    except Exception as exc:  # a bug: still one line unless --debug
        refused = _database_refusal(exc)
        if refused is not None:  # a server's refusal outside a unit of work (db commands)
            if _wants_debug(args):
                traceback.print_exc()
            for line in error_lines(refused):
                click.echo(line, err=True)
            sys.exit(refused.exit_code)
        if _wants_debug(args):
            traceback.print_exc()
        click.echo(f"Error: internal problem ({type(exc).__name__}: {exc}). "
                   "Next: rerun with --debug and report the traceback.", err=True)
        sys.exit(2)
    sys.exit(code if isinstance(code, int) else 0)
