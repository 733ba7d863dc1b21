"""Every file formdb writes: whole or not at all, never over a file unasked, never over an input.

One place for it (reports, exports, backups, weigh sheets, anything new): a command asks
``output_file`` (or ``write_output`` for text or bytes in hand) for the path it may write. The
rules, checked before anything is written:

- the work goes to a temporary file beside the target and is moved into place only when it is
  complete, so a reader never finds half a file and a failure leaves nothing behind;
- an existing file is refused unless the command was given ``--force``;
- a file the command reads (a formula, a profile, the SQLite library) is never its output;
- a symbolic link is never written through (nor replaced), nor is a device, pipe or socket
  replaced (``--out /dev/null --force`` would swap the device for a file): outputs are plain
  files;
- the file is created with the user's umask (0666 masked), as any other program would, so a
  team can share it; ``tempfile``'s private 0600 would not.
"""

from __future__ import annotations

import errno
import os
import secrets
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING

from formdb.errors import InvalidData

if TYPE_CHECKING:
    from formdb.report.stream import Tally
    from formdb.schemas.result import CheckResult

FORCE_HINT = "give another file name, or --force to replace it"


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and a.samefile(b))
    except (OSError, RuntimeError):  # RuntimeError: a symbolic link loop (Python before 3.13);
        return False  # such a path is a link, refused next by check_output


def check_output(path: Path, *, force: bool = False, inputs: Iterable[Path] = ()) -> None:
    """Refuse an output path before any work is done: see the module docstring for the rules."""
    try:
        _check_output(path, force=force, inputs=inputs)
    except OSError as exc:  # a name too long for the file system (is_symlink and exists raise)
        raise InvalidData(f"{path}: cannot be written ({exc.strerror or exc}); nothing was "
                          "written.", hint="give a shorter file name or another folder"
                          ) from None


def _check_output(path: Path, *, force: bool, inputs: Iterable[Path]) -> None:
    for source in inputs:
        if _same_file(path, source):
            raise InvalidData(f"{path}: this is a file the command reads; it is never written "
                              "as its output.", hint="give the output another name")
    if path.is_symlink():
        raise InvalidData(f"{path}: is a symbolic link; formdb does not write through links.",
                          hint="give the path of a plain file")
    if path.exists():
        if path.is_dir():
            raise InvalidData(f"{path}: is a folder, not a file.", hint="give a file name")
        if not path.is_file():  # renaming over it would replace a device such as /dev/null
            raise InvalidData(f"{path}: is not a regular file (a device, pipe or socket); "
                              "formdb writes plain files only.",
                              hint="give the path of a plain file (without --out, text goes "
                                   "to the terminal)")
        if not force:
            raise InvalidData(f"{path}: already exists and is not replaced.", hint=FORCE_HINT)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InvalidData(f"{path}: cannot be written: the folder {folder} does not exist.",
                          hint="create the folder or give another path")


def _temporary_name(path: Path) -> Path:
    """A fresh hidden name beside ``path`` keeping its suffix (writers choose a format by it)."""
    return path.with_name(f".{path.stem}.{secrets.token_hex(4)}.part{path.suffix}")


def _move_into_place(temporary: Path, path: Path, force: bool) -> None:
    """Rename the finished file into place; without force, never over a file that appeared
    meanwhile (a hard link fails if the name exists; where links are not supported, a last
    check before the rename)."""
    if path.is_symlink():
        raise InvalidData(f"{path}: became a symbolic link while writing; nothing was written.")
    if force:
        os.replace(temporary, path)
        return
    try:
        os.link(temporary, path)
    except FileExistsError:
        raise InvalidData(f"{path}: appeared while writing and is not replaced; nothing was "
                          "written.", hint=FORCE_HINT) from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV,
                             errno.EMLINK):
            raise
        if path.exists():
            raise InvalidData(f"{path}: appeared while writing and is not replaced; nothing "
                              "was written.", hint=FORCE_HINT) from None
        os.replace(temporary, path)
        return
    temporary.unlink()


@contextmanager
def output_file(path: Path, *, force: bool = False,
                inputs: Iterable[Path] = ()) -> Iterator[Path]:
    """Yield a temporary path to write the whole output to; it becomes ``path`` when the block
    ends without an error, and is removed when it does not."""
    check_output(path, force=force, inputs=list(inputs))
    temporary = _temporary_name(path)
    try:
        yield temporary
        if not temporary.exists():
            raise InvalidData(f"{path}: nothing was produced to write.")
        _move_into_place(temporary, path, force)
    except OSError as exc:
        raise InvalidData(f"{path}: cannot be written ({exc.strerror or exc}); nothing was "
                          "written.", hint="choose a folder you can write to") from None
    finally:
        temporary.unlink(missing_ok=True)


def write_output(path: Path, data: str | bytes, *, force: bool = False,
                 inputs: Iterable[Path] = ()) -> None:
    """Write text (UTF-8) or bytes to ``path`` whole or not at all (see ``output_file``)."""
    raw = data.encode("utf-8") if isinstance(data, str) else data
    with output_file(path, force=force, inputs=inputs) as temporary:
        # O_EXCL: our own fresh file; mode 0666 so the umask decides who may read it
        descriptor = os.open(temporary, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        with os.fdopen(descriptor, "wb") as handle:
            handle.write(raw)
            handle.flush()
            os.fsync(handle.fileno())


def write_report(path: Path, text: str | bytes, *, force: bool = False,
                 inputs: Iterable[Path] = ()) -> None:
    """A report file (text, or bytes such as an XLSX workbook), written whole or not at all
    (the same rules as every output)."""
    write_output(path, text, force=force, inputs=inputs)


REPORT_SUFFIXES = {".txt": "text", ".json": "json", ".html": "html", ".htm": "html",
                   ".jsonl": "jsonl"}


def report_format_for(out: Path | None, fmt: str | None) -> str:
    """A check report's format: the one asked for, else the one --out's name says, else text.
    A name that says another format (--format text with report.html) is refused rather than
    given content its name does not promise; a name that says none (report.out) takes the
    format asked for, or text. JSON and HTML are text too, so report.txt takes any format
    asked for."""
    named = REPORT_SUFFIXES.get(out.suffix.lower()) if out is not None else None
    if fmt is not None and named not in (None, "text", fmt):
        raise InvalidData(f"--out {out}: the name says {named}, but --format is {fmt}",
                          hint="make the file name and --format agree")
    return fmt or named or "text"


def summary_line(results: Sequence[CheckResult], out: Path) -> str:
    """``check --out``: the count of findings and where the report was written."""
    from formdb.report.stream import Tally

    tally = Tally()
    for result in results:
        tally.add(result)
    return written_line(tally, out)


def written_line(tally: Tally, out: Path) -> str:
    """The same line from a streamed check's tally."""
    return f"{tally.line()}; report written to {out}"
