"""Probe (a measurement, not product code): what one ``formdb ingredient show NAME`` process
would cost if read-only commands read the library through SQLAlchemy Core instead of the ORM.

The ORM is most of what a short command pays beyond the start-up floor: importing
``sqlalchemy.orm``, mapping formdb's 32 tables as declarative classes and configuring the
mappers at the first query (bench/RESULTS.md, "start-up"). This script

1. writes formdb's tables as plain Core ``Table`` objects, generated from the ORM metadata in a
   separate process (so the probe itself never imports the ORM);
2. runs a ``show`` that reads the same rows with Core statements on one ``Connection``, builds
   the same pydantic ``IngredientRecord`` and prints it with formdb's own report functions;
3. refuses to time anything unless its output is byte for byte the real command's;
4. times the floor, the real command and the probe, interleaved, CPU and wall.

    PYTHONPATH=. python bench/probe_show_on_core.py LIB.sqlite [NAME] [--runs 11]

It covers the plain case only (a name that exists, SQLite, no list entry created the record).
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

from formdb.bench.startup import FLOOR_ARGV, bytecode_env, interleaved

GENERATE = textwrap.dedent('''
    import sys
    from sqlalchemy import UniqueConstraint
    from formdb.store.models import NAMING_CONVENTION, Base
    out = ["from sqlalchemy import (MetaData, Table, Column, ForeignKey, UniqueConstraint, Index,",
           "    Integer, String, Text, Float, Boolean, Date, DateTime)",
           f"md = MetaData(naming_convention={NAMING_CONVENTION!r})"]
    for table in Base.metadata.sorted_tables:
        items = []
        for c in table.columns:
            args = [repr(c.name), repr(c.type)]
            args += [f"ForeignKey({fk.target_fullname!r})" for fk in c.foreign_keys]
            args += ["primary_key=True"] if c.primary_key else []
            args += ["nullable=False"] if not c.nullable and not c.primary_key else []
            args += ["index=True"] if c.index else []
            args += ["unique=True"] if c.unique else []
            items.append(f"Column({', '.join(args)})")
        for con in table.constraints:
            cols = list(con.columns) if isinstance(con, UniqueConstraint) else []
            if cols and not (len(cols) == 1 and cols[0].unique):
                items.append(f"UniqueConstraint({', '.join(repr(c.name) for c in cols)})")
        for ix in table.indexes:
            cols = list(ix.columns)
            if len(cols) > 1 or not cols[0].index:
                names = ", ".join(repr(c.name) for c in cols)
                items.append(f"Index({ix.name!r}, {names}{', unique=True' if ix.unique else ''})")
        out.append(f"{table.name} = Table({table.name!r}, md, " + ", ".join(items) + ")")
    open(sys.argv[1], "w", encoding="utf-8").write("\\n".join(out) + "\\n")
''')

SHOW_ON_CORE = textwrap.dedent('''
    import gc
    gc.set_threshold(200_000)  # as formdb's start-up (cli.main)
    import sys
    import sqlalchemy, pydantic, click
    import formdb.cli.main
    from sqlalchemy import create_engine, select, text
    from types import SimpleNamespace
    from core_tables import (ingredients, ingredient_names, ingredient_cas, ingredient_roles,
        ingredient_classes, property_values, sources, list_entry_matches, list_entries,
        list_snapshots)
    from formdb.schemas.ingredient import (PROPERTY_NAMES, IngredientProperties,
        IngredientRecord, Provenance, name_key)
    from formdb.schemas.vocab import Evidence, Role
    from formdb.schemas.lists import ListEntry
    from formdb.report.library import ingredient_detail
    from formdb.report.lists import ingredient_entries_text
    import ast, re
    from formdb.resources import migrations_dir

    def head_from_files():  # the work of store.db.head_from_files: each file's head parsed
        for f in sorted((migrations_dir() / "versions").glob("*.py")):
            t = f.read_text(encoding="utf-8")
            m = re.search(r"^(def|class|@) ", t, re.M)
            ast.parse(t[:m.start()] if m else t)

    lib, name = sys.argv[1], sys.argv[2]
    engine = create_engine(f"sqlite:///{lib}")
    gc.freeze(); gc.set_threshold(700, 10, 10)  # cli.main.start_up_over
    with engine.connect() as c:
        c.execute(text("SELECT count(*) FROM sqlite_master")).scalar()
        c.execute(text("SELECT version_num FROM alembic_version")).all()
        head_from_files()
        iid = c.execute(select(ingredient_names.c.name_key, ingredient_names.c.ingredient_id)
                        .where(ingredient_names.c.name_key.in_([name_key(name)]))).all()[0][1]
        ing = c.execute(select(ingredients).where(ingredients.c.id.in_([iid]))).one()
        kids = {t.name: c.execute(select(t).where(t.c.ingredient_id.in_([iid]))).all()
                for t in (ingredient_names, ingredient_cas, ingredient_roles,
                          ingredient_classes, property_values)}
        keys = sorted({v.source_key for v in kids["property_values"]})
        cites = dict(c.execute(select(sources.c.key, sources.c.citation)
                               .where(sources.c.key.in_(keys))).all())
        raw, prov = {}, {}
        for row in kids["property_values"]:
            if row.property in PROPERTY_NAMES:
                raw[row.property] = row.value_num if row.value_num is not None else row.value_text
                prov[row.property] = Provenance(source=row.source_key,
                    evidence=Evidence(row.evidence), citation=cites.get(row.source_key),
                    note=row.note)
        record = IngredientRecord(
            id=ing.id, inci_name=ing.inci_name, version=ing.version, retired=ing.retired,
            synonyms=tuple(n.name for n in kids["ingredient_names"] if not n.is_primary),
            cas_numbers=tuple(x.cas for x in kids["ingredient_cas"]),
            roles=frozenset(Role(r.role) for r in kids["ingredient_roles"]),
            classes=frozenset(x.class_name for x in kids["ingredient_classes"]),
            properties=IngredientProperties.model_validate(raw), provenance=prov)
        match = sorted({f"name:{name_key(n)}" for n in (record.inci_name, *record.synonyms)}
                       | {f"cas:{x}" for x in record.cas_numbers})
        ids = sorted({i for i, _k in c.execute(
            select(list_entry_matches.c.entry_id, list_entry_matches.c.match_key)
            .where(list_entry_matches.c.match_key.in_(match)))})
        bodies = c.execute(select(list_entries.c.id, list_entries.c.body)
            .join(list_snapshots, list_snapshots.c.id == list_entries.c.snapshot_id)
            .where(list_entries.c.id.in_(ids), list_snapshots.c.in_force.is_(True))).all()
        entries = tuple(ListEntry.model_validate_json(b) for _i, b in bodies)
    detail = SimpleNamespace(record=record, updated_at=ing.updated_at, updated_by=ing.updated_by)
    click.echo(ingredient_detail(detail, width=None), nl=False)
    click.echo(ingredient_entries_text(None, entries), nl=False)
    gc.freeze()
''')


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("library")
    parser.add_argument("name", nargs="?", default="Glycerin")
    parser.add_argument("--runs", type=int, default=11)
    args = parser.parse_args()
    lib = str(Path(args.library).resolve())
    with tempfile.TemporaryDirectory() as folder:
        work = Path(folder)
        (work / "show_on_core.py").write_text(SHOW_ON_CORE, encoding="utf-8")
        subprocess.run([sys.executable, "-c", GENERATE, str(work / "core_tables.py")],
                       check=True)
        env = bytecode_env(work / "pycache")
        env["PYTHONPATH"] = os.pathsep.join(
            [str(work), *filter(None, [os.environ.get("PYTHONPATH")])])
        real = [sys.executable, "-m", "formdb", "--db", lib, "ingredient", "show", args.name]
        probe = [sys.executable, str(work / "show_on_core.py"), lib, args.name]
        outputs = [subprocess.run(argv, capture_output=True, text=True, env=env, check=True)
                   .stdout for argv in (real, probe)]
        if outputs[0] != outputs[1]:
            sys.exit("the probe's output differs from the real command's: no figures")
        loaded = subprocess.run([sys.executable, "-X", "importtime", *probe[1:]],
                                capture_output=True, text=True, env=env, check=True).stderr
        if "sqlalchemy.orm" in loaded or "formdb.store.models" in loaded:
            sys.exit("the probe imported the ORM: no figures")
        load = os.getloadavg()[0]
        series = interleaved({"floor": list(FLOOR_ARGV), "real": real, "probe": probe},
                             args.runs, env)
        floor_wall, floor_cpu = series.wall("floor"), series.cpu("floor")
        print(f"same output; medians of {args.runs} interleaved runs, load average "
              f"{load:.2f} -> {os.getloadavg()[0]:.2f}")
        for label in ("floor", "real", "probe"):
            wall, cpu = series.wall(label), series.cpu(label)
            print(f"{label:6s} wall {wall:.3f} s ({wall / floor_wall:.2f}x)"
                  f"  CPU {cpu:.3f} s ({cpu / floor_cpu:.2f}x)")


if __name__ == "__main__":
    main()
