"""``formdb source|toxicology|exposure ...``: the library's evidence records from the command
line. Every kind has the same commands (list, show, add, edit, history, import, export); a
source also takes its kind, citation and the cited file's checksum by name.
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

import click

from formdb.cli.main import AppContext, force_option, library_files, with_library

if TYPE_CHECKING:
    from formdb.services.library.records import RecordKind
    from formdb.store.library import Library

F = TypeVar("F", bound=Callable[..., Any])
# the columns a table listing shows (list --format csv/json shows every column)
SHOWN: dict[str, tuple[str, ...]] = {
    "source": ("key", "kind", "evidence", "citation"),
    "toxicology": ("key", "inci", "pod_kind", "pod_value", "pod_unit", "route", "species",
                   "source"),
    "exposure": ("product", "category", "amount_g_day", "retention_factor",
                 "exposure_mg_kg_bw_day", "source"),
}
HELP = {
    "source": "Sources of evidence: regulations, publications, handbooks, supplier data sheets "
              "and certificates, in-house measurements, estimates, definitions.",
    "toxicology": "Toxicology records: a substance's point of departure (NOAEL, BMDL, LOAEL) "
                  "for the margin-of-safety rule.",
    "exposure": "Exposure per product type (daily amount, retention factor, E_product) for the "
                "margin-of-safety rule.",
}


def _width() -> int | None:
    import shutil

    return shutil.get_terminal_size().columns if sys.stdout.isatty() else None


def _pairs(values: tuple[str, ...]) -> list[tuple[str, str]]:
    out = []
    for item in values:
        name, sep, value = item.partition("=")
        if not sep or not name.strip():
            raise click.BadParameter(f"{item!r} is not field=value", param_hint="--set")
        out.append((name.strip(), value))
    return out


def _source_fields(kind: str | None, citation: str | None,
                   file: Path | None) -> list[tuple[str, str]]:
    from formdb.services.library.evidence import file_checksum

    out = []
    if kind is not None:
        out.append(("kind", kind))
    if citation is not None:
        out.append(("citation", citation))
    if file is not None:
        out.append(("checksum", file_checksum(file)))
    return out


def _group(entity: str) -> click.Group:
    """The commands of one kind of record."""
    noun = {"source": "source(s)", "toxicology": "toxicology record(s)",
            "exposure": "product type(s)"}[entity]
    key_name = "PRODUCT" if entity == "exposure" else "KEY"
    group = click.Group(entity, help=HELP[entity])
    is_source = entity == "source"
    set_option = click.option("--set", "sets", multiple=True, metavar="FIELD=VALUE",
                              help="A field and its value (repeatable; empty clears it).")
    reason_option = click.option("--reason", help="Why (kept in the change log).")

    def kind() -> RecordKind:
        from formdb.services.library.evidence import KINDS

        return KINDS[entity]

    @group.command("list")
    @click.option("--format", "fmt", type=click.Choice(["table", "csv", "json"]),
                  default="table", show_default=True)
    @with_library
    def list_cmd(app: AppContext, library: Library, fmt: str) -> None:
        """List the records."""
        from formdb.report.records import record_list
        from formdb.services.library.records import list_records

        record_kind = kind()
        with library.read() as session:
            rows = list_records(session, record_kind)
        click.echo(record_list(rows, record_kind.columns, SHOWN[entity], fmt,
                               noun, width=_width()), nl=False)

    @group.command("show")
    @click.argument("key", metavar=key_name)
    @with_library
    def show_cmd(app: AppContext, library: Library, key: str) -> None:
        """Every field of one record."""
        from formdb.report.records import record_detail
        from formdb.services.library.evidence import citing_values
        from formdb.services.library.records import show_record

        record_kind = kind()
        with library.read() as session:
            cells = show_record(session, record_kind, key)
            extra = citing_values(session, cells["key"]) if is_source else []
        click.echo(record_detail(f"{entity} {key}", cells, record_kind.columns,
                                 extra=extra, width=_width()), nl=False)

    def add_options(func: F) -> F:
        func = reason_option(set_option(func))
        if is_source:
            func = click.option("--kind", "source_kind",
                                help="Kind of evidence, e.g. 'supplier data sheet', handbook, "
                                     "'in-house measurement', definition.")(func)
            func = click.option("--citation", help="The full citation.")(func)
            func = click.option("--file", "cited_file", type=click.Path(path_type=Path),
                                help="The cited document: its SHA-256 checksum is kept.")(func)
        return func

    @group.command("add")
    @click.argument("key", metavar=key_name)
    @add_options
    @with_library
    def add_cmd(app: AppContext, library: Library, key: str, sets: tuple[str, ...],
                reason: str | None, source_kind: str | None = None, citation: str | None = None,
                cited_file: Path | None = None) -> None:
        """Add a record."""
        from formdb.report.records import record_changes
        from formdb.services.library.records import add_record

        pairs = _source_fields(source_kind, citation, cited_file) + _pairs(sets)
        with library.write() as session:
            report = add_record(session, kind(), key, pairs, user=app.user,
                                reason=reason)
        click.echo(record_changes(report), nl=False)

    @group.command("edit")
    @click.argument("key", metavar=key_name)
    @add_options
    @with_library
    def edit_cmd(app: AppContext, library: Library, key: str, sets: tuple[str, ...],
                 reason: str | None, source_kind: str | None = None,
                 citation: str | None = None, cited_file: Path | None = None) -> None:
        """Change fields of a record."""
        from formdb.report.records import record_changes
        from formdb.services.library.records import edit_record

        pairs = _source_fields(source_kind, citation, cited_file) + _pairs(sets)
        with library.write() as session:
            report = edit_record(session, kind(), key, pairs, user=app.user,
                                 reason=reason)
        click.echo(record_changes(report), nl=False)

    @group.command("history")
    @click.argument("key", metavar=key_name)
    @with_library
    def history_cmd(app: AppContext, library: Library, key: str) -> None:
        """Who changed the record, when, what (old -> new) and why."""
        from formdb.report.records import record_history as history_text
        from formdb.services.library.records import record_history

        with library.read() as session:
            entries = record_history(session, kind(), key)
        click.echo(history_text(entries, width=_width(), dialect=library.dialect), nl=False)

    @group.command("import")
    @click.argument("file", type=click.Path(path_type=Path))
    @click.option("--dry-run", is_flag=True, help="Report what would change; write nothing.")
    @reason_option
    @with_library
    def import_cmd(app: AppContext, library: Library, file: Path, dry_run: bool,
                   reason: str | None) -> None:
        """Import a CSV or XLSX table in the export's columns, all rows or none."""
        from formdb.report.records import record_changes
        from formdb.services.library.records import import_records

        with library.write() as session:
            report = import_records(session, kind(), file, user=app.user,
                                    reason=reason, dry_run=dry_run)
        click.echo(record_changes(report), nl=False)

    @group.command("export")
    @click.argument("file", type=click.Path(path_type=Path))
    @force_option
    @with_library
    def export_cmd(app: AppContext, library: Library, file: Path, force: bool) -> None:
        """Write every record to FILE (.csv or .xlsx) in the columns `import` reads."""
        from formdb.report.files import output_file
        from formdb.services.library.records import export_records

        with output_file(file, force=force, inputs=library_files(app)) as partial, \
                library.read() as session:
            count = export_records(session, kind(), partial)
        click.echo(f"wrote {count} {noun} to {file}")

    if is_source:
        @group.command("identify")
        @click.argument("file", type=click.Path(path_type=Path))
        @with_library
        def identify_cmd(app: AppContext, library: Library, file: Path) -> None:
            """Which source cites FILE (by its recorded SHA-256 checksum)."""
            from formdb.report.records import identified
            from formdb.services.library.evidence import sources_with_checksum

            with library.read() as session:
                keys = sources_with_checksum(session, file)
            click.echo(identified(str(file), keys), nl=False)

    return group


source_group = _group("source")
toxicology_group = _group("toxicology")
exposure_group = _group("exposure")
