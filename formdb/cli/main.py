"""The ``formdb`` command: global options, lazy sub-commands, and the one error handler.

Sub-commands are imported only when invoked, so ``formdb check`` does not pay for pandas.
"""

from __future__ import annotations

import gc
import importlib
import math
import os
import sys
import traceback
from collections.abc import Callable
from dataclasses import dataclass
from functools import wraps
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

import click
from click.core import ParameterSource

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

# Exit codes of every command. check keeps its contract (0 clean, 1 error findings, 2 bad
# input); a bug in formdb is none of these, so a script or CI can tell it from a typo:
# 70 is EX_SOFTWARE of BSD sysexits.h ("internal software error").
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 70
EXIT_CODES_HELP = (
    "Exit codes: 0 done (check: no error finding); 1 check found at least one error; 2 bad "
    f"input, refused with one Error: line and nothing changed; {EXIT_INTERNAL} an internal "
    "error in formdb (a bug: rerun with --debug and report the traceback).")


def with_library(command: F) -> F:
    """Give the command the AppContext and the Library (opened at its first use, closed at the
    end): one open per command. A command that calls several services wraps them in one
    ``library.read()`` or ``library.write()``, so it sees one snapshot or writes one
    transaction; a service's own unit joins the open one."""

    @wraps(command)
    @click.pass_obj
    def run(app: AppContext, *args: Any, **kwargs: Any) -> Any:
        from formdb.store.library import Library

        with Library.deferred(app.db, on_open=start_up_over) as library:
            app.library = library
            try:
                return command(app, library, *args, **kwargs)
            finally:
                app.library = None

    return run  # type: ignore[return-value]


force_option = click.option(
    "--force", is_flag=True,
    help="Replace the output file if it already exists (never a file the command reads).")


class Number(click.ParamType[Any]):
    """A number option: ASCII digits only (int() and float() also take Arabic-Indic or
    fullwidth digits), finite, and within its realistic range."""

    def __init__(self, kind: type[int] | type[float], low: float, high: float) -> None:
        self.kind, self.low, self.high = kind, low, high
        self.name = "integer" if kind is int else "number"

    def convert(self, value: Any, param: click.Parameter | None,
                ctx: click.Context | None) -> Any:
        if isinstance(value, int | float) and not isinstance(value, bool):
            number: float = value
        else:
            text = str(value).strip()
            if not text.isascii():
                self.fail(f"{value!r} is not a number written in ASCII digits", param, ctx)
            try:
                number = self.kind(text)
            except ValueError:
                self.fail(f"{value!r} is not a{'n integer' if self.kind is int else ' number'}",
                          param, ctx)
        # an int is compared as it is (math.isfinite would overflow on a 400-digit one)
        if not (isinstance(number, int) or math.isfinite(number)):
            self.fail(f"{value!r} is not a finite number", param, ctx)
        if not self.low <= number <= self.high:
            self.fail(f"{value!r} is not between {self.low:g} and {self.high:g}", param, ctx)
        return number


# every number option is one of these (or a Number with its own range): click's FLOAT, INT,
# IntRange and FloatRange read Arabic-Indic and fullwidth digits as numbers
# (tests/cli/test_hostile_regressions.py walks every option)
FLOAT = Number(float, -math.inf, math.inf)  # finite; the service checks the range in words
INT = Number(int, -(2**63), 2**63 - 1)


def library_files(app: AppContext) -> list[Path]:
    """The SQLite library behind ``--db`` (a file no command may write its output over)."""
    from formdb.store.db import sqlite_path

    try:
        path = sqlite_path(app.db)
    except Exception:  # an unparsable URL is reported when the library is opened
        return []
    return [path] if path is not None else []


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


@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]},
             epilog=EXIT_CODES_HELP)
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
    if ctx.get_parameter_source("db") is ParameterSource.DEFAULT \
            and os.environ.get("FORMDB_DB") == "":
        # click reads an empty variable as unset; `FORMDB_DB=$UNSET_URL formdb init` would
        # then build a library in ./formdb.sqlite unasked: refused as `--db ''` is
        db = ""
    ctx.obj = app = AppContext(db=db, claimed=user, debug=debug)
    if user is not None and user.strip():
        _ = app.user  # a claim is checked before anything runs


def _sentence(text: str) -> str:
    text = text.rstrip()
    return text if text.endswith((".", "?", "!")) else text + "."


MAX_ERROR_LINES = 100  # problems shown of one refusal; the rest are counted


def error_lines(exc: FormdbError) -> list[str]:
    """One ``Error:`` line per problem (an import table or several formula files may carry
    many, in ``problems``); the next step rides on the last line."""
    from formdb.report.terminal import one_line

    shown = exc.problems[:MAX_ERROR_LINES]
    lines = [f"Error: {_sentence(one_line(str(p)))}" for p in shown]
    if len(exc.problems) > len(shown):  # a table of 300,000 unknown columns: not 300,000 lines
        lines.append(f"Error: and {len(exc.problems) - len(shown):,} more problems of the same "
                     f"input (the first {len(shown)} are shown).")
    if exc.hint:
        lines[-1] += f" Next: {_sentence(one_line(exc.hint))}"
    return lines


def _database_refusal(exc: Exception) -> FormdbError | None:
    from sqlalchemy.exc import DBAPIError

    if not isinstance(exc, DBAPIError):
        return None
    from formdb.store.db import translate_failure

    return translate_failure(exc, None)


def _wants_debug(argv: list[str]) -> bool:
    return "--debug" in argv or os.environ.get("FORMDB_DEBUG") == "1"


# The cycle collector while the program starts (``main`` with no argv): a first collection only
# after this many container objects, more than a command makes before its work begins (about
# 130,000 for check FILE or ingredient show: modules, classes, mapped tables, validators). The
# default (700) would walk them all again and again, finding nothing to free; a command that
# never reaches ``start_up_over`` keeps this bound on what waits to be collected.
START_UP_COLLECTION = 200_000
_start_up: dict[str, tuple[int, int, int]] = {}  # the collector's thresholds while starting up


def _start_up_begins() -> None:
    _start_up["thresholds"] = gc.get_threshold()
    gc.set_threshold(START_UP_COLLECTION)


def start_up_over() -> None:
    """The command starts its work (its library is about to open): what start-up made lives
    until the process ends, so it is frozen (no later collection walks it again, however
    long the command runs), and the collector's usual thresholds come back. A no-op unless
    ``main`` runs as the program."""
    thresholds = _start_up.pop("thresholds", None)
    if thresholds is not None:
        gc.freeze()
        gc.set_threshold(*thresholds)


def main(argv: list[str] | None = None) -> None:
    """Entry point: run the command; turn a FormdbError into one ``Error:`` line and exit 2,
    and anything else (a bug) into one line and exit ``EXIT_INTERNAL``.

    ``argv`` None: called as the program (the console script, ``python -m formdb``), whose
    process ends with the command (see ``_before_exit``)."""
    args = sys.argv[1:] if argv is None else argv
    if argv is None:
        _start_up_begins()
    from formdb.report.terminal import SafeOutput

    saved = sys.stdout, sys.stderr
    # no control sequence from the data reaches the terminal (report.terminal)
    sys.stdout, sys.stderr = SafeOutput(saved[0]), SafeOutput(saved[1])
    try:
        _run(args)
    finally:
        sys.stdout.flush()
        sys.stderr.flush()
        sys.stdout, sys.stderr = saved
        if argv is None:
            _before_exit()


def _before_exit() -> None:
    """The interpreter's shutdown runs the cycle collector over every object still alive,
    more than once: for a short command that is the ~90,000 objects its start-up made
    (modules, classes, mapped tables, compiled statements), about a sixth of its wall time,
    spent looking for garbage whose memory the end of the process returns anyway. Frozen
    objects are skipped. Nothing is left to finalise by then: the command's ``with`` blocks
    have closed its library and files, and ``atexit`` handlers still run."""
    gc.freeze()


def _run(args: list[str]) -> None:
    try:
        # color=True, here and on every error line below: click.echo would silently strip a
        # control sequence from the data when the output is not a terminal; SafeOutput shows
        # it as a visible escape instead
        code = cli.main(args=args, prog_name="formdb", standalone_mode=False, color=True)
    except FormdbError as exc:
        if _wants_debug(args):
            traceback.print_exc()
        for line in error_lines(exc):
            click.echo(line, err=True, color=True)
        sys.exit(exc.exit_code)
    except click.exceptions.Abort:
        click.echo("Error: aborted.", err=True, color=True)
        sys.exit(2)
    except click.UsageError as exc:  # a mistyped option or argument: one line, as bad input
        where = exc.ctx.command_path if exc.ctx is not None else "formdb"
        from formdb.report.terminal import one_line

        said = one_line(exc.format_message()).rstrip(".")
        click.echo(f"Error: {said} (see '{where} --help').", err=True, color=True)
        sys.exit(2)
    except click.ClickException as exc:
        exc.show()
        sys.exit(2 if exc.exit_code == 2 else exc.exit_code)
    except click.exceptions.Exit as exc:
        sys.exit(exc.exit_code)
    except KeyboardInterrupt:
        click.echo("Error: interrupted.", err=True, color=True)
        sys.exit(2)
    except Exception as exc:  # a bug: still one line unless --debug
        refused = _database_refusal(exc)
        if refused is not None:  # a server's refusal outside a unit of work (db commands)
            if _wants_debug(args):
                traceback.print_exc()
            for line in error_lines(refused):
                click.echo(line, err=True, color=True)
            sys.exit(refused.exit_code)
        if _wants_debug(args):
            traceback.print_exc()
        from formdb.report.terminal import one_line

        click.echo(f"Error: internal problem ({type(exc).__name__}: {one_line(str(exc))}). "
                   "Next: rerun with --debug and report the traceback.", err=True, color=True)
        sys.exit(EXIT_INTERNAL)
    sys.exit(code if isinstance(code, int) else 0)
