"""Load figure for a team library on PostgreSQL (a script, not a test).

    /work/venv/bin/python scripts/load.py --pg postgresql+psycopg://postgres@127.0.0.1:5432/test \
        --clients 8 --seconds 20

Creates a scratch database on that server (``formdb_load_<random>``), loads the bundled seed
library into it, then runs N client processes for S seconds. Each client loops over a mix of
operations, the way a team uses the library:
- read (60 %): ``ingredient show`` of a random library ingredient;
- check (25 %): one bundled demo formula resolved and checked with the default profile;
- edit (15 %): read an emulsifier's version, then edit its HLB with that version (few, hot rows,
  so edits collide and some are refused with a Conflict, as optimistic locking intends).
Prints operations per second, p50/p99 latency per kind, conflicts and errors; drops the scratch
database at the end. The server's own data is never touched.
"""

from __future__ import annotations

import argparse
import multiprocessing
import random
import statistics
import sys
import time
from collections import Counter
from pathlib import Path
from uuid import uuid4

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

MIX = (("read", 0.60), ("check", 0.25), ("edit", 0.15))
HOT_ROWS = 4


def _client(url: str, seconds: float, seed: int, start_at: float) -> list[tuple[str, float, str]]:
    from formdb.errors import Conflict, FormdbError
    from formdb.rules.engine import check_resolved
    from formdb.rules.profiles import load_profile
    from formdb.services.checking.flow import read_inputs, resolve_all
    from formdb.services.checking.demo import demo_formula_paths
    from formdb.services.library.ingredients import edit_ingredient, list_ingredients, show_ingredient
    from formdb.store import queries
    from formdb.store.db import make_engine, unit_of_work

    rng = random.Random(seed)
    engine = make_engine(url)
    formulas = read_inputs(demo_formula_paths())
    profile = load_profile("default")
    with unit_of_work(engine) as session:
        records = list_ingredients(session)
    names = [r.inci_name for r in records]
    hot = sorted(r.inci_name for r in records if r.p.hlb is not None)[:HOT_ROWS]
    kinds = [k for k, _w in MIX]
    weights = [w for _k, w in MIX]
    out: list[tuple[str, float, str]] = []
    time.sleep(max(0.0, start_at - time.time()))
    deadline = time.time() + seconds
    while time.time() < deadline:
        kind = rng.choices(kinds, weights)[0]
        t0 = time.perf_counter()
        outcome = "ok"
        try:
            if kind == "read":
                with unit_of_work(engine) as session:
                    show_ingredient(session, rng.choice(names))
            elif kind == "check":
                with unit_of_work(engine) as session:
                    reference = queries.load_reference_data(session)
                    resolved = resolve_all(session, [rng.choice(formulas)])
                check_resolved(resolved[0], reference, profile)
            else:
                name = rng.choice(hot)
                with unit_of_work(engine) as session:
                    version = show_ingredient(session, name).record.version
                with unit_of_work(engine, write=True) as session:
                    edit_ingredient(session, name, [("hlb", f"{rng.uniform(1, 19):.1f}")],
                                    user=f"larkspur-load-{seed}", source="rule-of-thumb",
                                    reason="load test", expect_version=version)
        except Conflict:
            outcome = "conflict"
        except FormdbError as exc:
            outcome = f"error: {exc}"
        except Exception as exc:  # counted, not hidden
            outcome = f"error: {type(exc).__name__}: {exc}"
        out.append((kind, time.perf_counter() - t0, outcome))
    engine.dispose()
    return out


def _pct(values: list[float], q: float) -> float:
    if len(values) < 2:
        return values[0] if values else float("nan")
    return statistics.quantiles(values, n=100, method="inclusive")[int(q) - 1]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--pg", required=True, help="server URL (its database is not touched)")
    parser.add_argument("--clients", type=int, default=8)
    parser.add_argument("--seconds", type=float, default=20.0)
    args = parser.parse_args(argv)

    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url

    from formdb.services.seed.setup import init_library

    base = make_url(args.pg.replace("postgresql://", "postgresql+psycopg://", 1))
    name = f"formdb_load_{uuid4().hex[:10]}"
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    url = base.set(database=name).render_as_string(hide_password=False)
    try:
        init_library(url, seed=True, user="larkspur-load")
        ctx = multiprocessing.get_context("spawn")
        start_at = time.time() + 3.0
        with ctx.Pool(args.clients) as pool:
            jobs = [pool.apply_async(_client, (url, args.seconds, i, start_at))
                    for i in range(args.clients)]
            results = [op for job in jobs for op in job.get(timeout=args.seconds + 120)]
    finally:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()

    outcomes = Counter("error" if o.startswith("error") else o for _k, _t, o in results)
    print(f"clients {args.clients}, {args.seconds:g} s, server {base.host}:{base.port}")
    print(f"operations {len(results)}  ({len(results) / args.seconds:.1f} ops/s)")
    for kind, _w in MIX:
        lat = [t * 1000 for k, t, _o in results if k == kind]
        print(f"  {kind:<6} {len(lat):>6}  p50 {_pct(lat, 50):7.1f} ms  "
              f"p99 {_pct(lat, 99):7.1f} ms")
    print(f"conflicts {outcomes['conflict']}  errors {outcomes['error']}")
    for message in sorted({o for _k, _t, o in results if o.startswith("error")})[:5]:
        print(f"  {message}")
    return 1 if outcomes["error"] else 0


if __name__ == "__main__":
    sys.exit(main())
