"""Benchmark: stock movements per second through the library with 1, 8 and 32 writers, on
SQLite and PostgreSQL (issue 12). The 1-writer figure is the baseline, measured in the
same run on the same database.

    python benchmarks/ledger_concurrency.py [--seconds 8] [--writers 1,8,32]
                                            [--pg URL | --no-pg] [--parts 40]

Each writer is its own process (forked) with its own engine, and books one transaction at
a time for ``--seconds``: half receipts into a part's standing lot, half issues of 1-3
units, a count every tenth transaction, on a part drawn at random from ``--parts`` parts
(so writers meet on the same rows, as at a counter). Reported: committed movements per
second (wall clock, all writers together), transactions per second, refusals by kind
(shortage, busy = lock wait over the timeout), the 50th/95th/99th percentile transaction
time, and the check that the cached balances equal the ledger afterwards. The database
starts from the tiny test catalog plus ``--parts`` invented O-rings (BENCH-000...).

PostgreSQL: a fresh database is created on the server of ``--pg`` (default the local
trust-auth server) and dropped at the end.
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import os
import random
import sys
import tempfile
import time
import uuid
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from sqlmodel import Session  # noqa: E402

from inventory.catalog.load import load_catalog  # noqa: E402
from inventory.core import migrate  # noqa: E402
from inventory.core.db import dispose_all, explain, make_engine, transaction  # noqa: E402
from inventory.stock import ledger  # noqa: E402
from tests.conftest import write_catalog  # noqa: E402

PG_ADMIN = "postgresql+psycopg://postgres@127.0.0.1:5432/postgres"


def setup(url: str, parts: int, folder: Path) -> list[str]:
    engine = make_engine(url, fresh=True)
    migrate.upgrade(engine)
    codes = [f"BENCH-{i:03d}" for i in range(parts)]
    files = {
        "locations.csv": "code,description\nMAIN,Store room\n",
        "parts.csv": "code,kind,description,id_mm,od_mm,height_mm,cs_mm,material,hardness,"
                     "volume_cm3,unit,standard,notes\n" + "".join(
                         f"{c},o_ring,Bench ring {c},{20 + i * 0.5},,,2.5,NBR,70,,each,,\n"
                         for i, c in enumerate(codes)),
    }
    with transaction(engine) as s:
        load_catalog(s, write_catalog(folder / "cat", files))
        for c in codes:
            ledger.receive(s, ledger.Receipt(c, 500, "0.40", lot="STANDING", user="bench"))
    engine.dispose()
    return codes


def writer(url, codes, seconds, seed, barrier, results) -> None:
    rng = random.Random(seed)
    engine = make_engine(url, fresh=True)
    # one warm-up transaction outside the clock (connection, first statements)
    with Session(engine) as s:
        ledger.on_hand_at(s, ledger.lookup.part(s, codes[0]))
    barrier.wait()
    moves = tx = 0
    kinds: Counter = Counter()
    times = []
    t_end = time.perf_counter() + seconds
    while time.perf_counter() < t_end:
        code = rng.choice(codes)
        k = rng.random()
        t0 = time.perf_counter()
        try:
            with transaction(engine) as s:
                if k < 0.1:
                    got = ledger.count(s, ledger.Count(code, rng.randint(20, 60)))
                elif k < 0.55:
                    got = [ledger.receive(s, ledger.Receipt(
                        code, rng.randint(1, 3), lot="STANDING", user="bench"))]
                else:
                    got = ledger.issue(s, ledger.Issue(code, rng.randint(1, 3), user="bench"))
            moves += len(got)
            tx += 1
        except Exception as exc:  # noqa: BLE001 - counted by kind
            mapped = explain(exc)
            kinds[mapped.kind if mapped is not None else f"unexpected {type(exc).__name__}"] += 1
        times.append(time.perf_counter() - t0)
    engine.dispose()
    results.put((moves, tx, dict(kinds), times))


def run(url: str, codes: list[str], n: int, seconds: float) -> dict:
    ctx = mp.get_context("fork")
    barrier = ctx.Barrier(n + 1)
    results = ctx.Queue()
    dispose_all()
    procs = [ctx.Process(target=writer, args=(url, codes, seconds, 7919 * n + i, barrier,
                                              results)) for i in range(n)]
    for p in procs:
        p.start()
    barrier.wait()
    t0 = time.perf_counter()
    out = [results.get(timeout=seconds + 300) for _ in procs]
    wall = time.perf_counter() - t0
    for p in procs:
        p.join(30)
    moves = sum(o[0] for o in out)
    tx = sum(o[1] for o in out)
    kinds: Counter = Counter()
    times: list[float] = []
    for o in out:
        kinds.update(o[2])
        times += o[3]
    times.sort()

    def pct(q: float) -> float:
        return 1000 * times[min(len(times) - 1, int(q * len(times)))] if times else float("nan")

    engine = make_engine(url, fresh=True)
    with Session(engine) as s:
        problems = ledger.verify_balances(s)
    engine.dispose()
    return {"writers": n, "movements": moves, "tx": tx, "wall": wall, "mps": moves / wall,
            "tps": tx / wall, "refused": dict(kinds), "p50": pct(0.5), "p95": pct(0.95),
            "p99": pct(0.99), "balances_ok": not problems}


def bench(name: str, url: str, writers: list[int], seconds: float, parts: int,
          folder: Path) -> list[dict]:
    codes = setup(url, parts, folder)
    rows = []
    for n in writers:
        r = run(url, codes, n, seconds)
        rows.append(r)
        base = rows[0]["mps"]
        print(f"{name:10} {n:3d} writer(s): {r['mps']:8.1f} movements/s "
              f"({r['mps'] / base:4.2f}x the 1-writer baseline), {r['tps']:7.1f} tx/s, "
              f"p50 {r['p50']:6.1f} ms, p95 {r['p95']:7.1f} ms, p99 {r['p99']:7.1f} ms, "
              f"refused {r['refused'] or 'none'}, balances "
              f"{'= ledger' if r['balances_ok'] else 'DIFFER'}", flush=True)
    return rows


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seconds", type=float, default=8.0)
    ap.add_argument("--writers", default="1,8,32")
    ap.add_argument("--parts", type=int, default=40)
    ap.add_argument("--pg", default=PG_ADMIN, help="admin URL of a PostgreSQL server")
    ap.add_argument("--no-pg", action="store_true")
    ap.add_argument("--no-sqlite", action="store_true")
    args = ap.parse_args(argv)
    writers = [int(x) for x in args.writers.split(",")]
    if writers[0] != 1:
        writers = [1] + writers
    folder = Path(tempfile.mkdtemp(prefix="ledger-bench-"))
    ok = True
    if not args.no_sqlite:
        rows = bench("SQLite", f"sqlite:///{folder / 'bench.db'}", writers, args.seconds,
                     args.parts, folder / "sqlite")
        ok &= all(r["balances_ok"] for r in rows)
    if not args.no_pg:
        import psycopg

        admin = args.pg.replace("+psycopg", "")
        name = f"inv_bench_{uuid.uuid4().hex[:10]}"
        with psycopg.connect(admin, autocommit=True) as conn:
            conn.execute(f'CREATE DATABASE "{name}"')
        try:
            url = args.pg.rsplit("/", 1)[0] + f"/{name}"
            rows = bench("PostgreSQL", url, writers, args.seconds, args.parts,
                         folder / "pg")
            ok &= all(r["balances_ok"] for r in rows)
        finally:
            dispose_all()
            with psycopg.connect(admin, autocommit=True) as conn:
                conn.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"machine: {os.cpu_count()} CPU(s), load average {load:.2f} at the end "
          f"(other work on the machine lowers every figure); lock timeout "
          f"{os.environ.get('INVENTORY_LOCK_TIMEOUT', '5 (default)')} s")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
