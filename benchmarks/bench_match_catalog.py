"""Benchmark: ``inventory match --id 24.99 --cs 3.53`` end to end against a 100,000-part
catalog (issue 10: <= 0.6 s wall, <= 150 MB peak), with its baselines measured in the same
run on the same machine:

- ``python -c pass``: the interpreter alone;
- a plain SELECT of the columns matching needs (code, kind, dimensions, material,
  hardness, volume, standard) in a fresh process: what reading the catalog must cost at
  least;
- the catalog read as ORM objects (``select(Part)`` and one ``PartSpec`` each), the way the
  lookup read it before, in a fresh process.

``match`` with readings asks the database for the parts within a few tolerances of them
(:mod:`inventory.bench.match_sql`, the dimension indexes of migration 0006) through the
standard library's sqlite3, so it loads neither SQLAlchemy nor numpy; the two reads above
are what it replaced.

The catalog is :func:`tests.support.synthetic.synthetic_parts` (seeded, invented), written
straight into a migrated SQLite file, with stock received on 2,000 of the parts so the
candidates' on-hand is summed from a real ledger. Each command runs ``--runs`` times in a
fresh process; wall time is the median, peak memory the largest resident set (``ru_maxrss``
of the child). Prints one table with PASS/FAIL; ``--strict`` exits 1 on a miss.

    python benchmarks/bench_match_catalog.py [--parts 100000] [--runs 5] [--db PATH] [--strict]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

WALL_S = 0.6
PEAK_MB = 150.0
QUERY = ["match", "--id", "24.99", "--cs", "3.53"]
STOCKED = 2_000


def build(path: Path, n: int) -> None:
    """A migrated SQLite shop holding ``n`` synthetic parts, stock on some of them."""
    from datetime import date

    from sqlalchemy import text

    from inventory.core import migrate
    from inventory.core.db import make_engine, transaction
    from inventory.stock import ledger
    from tests.support.synthetic import synthetic_parts

    engine = make_engine(f"sqlite:///{path}", fresh=True)
    migrate.upgrade(engine)
    parts = synthetic_parts(n, seed=3, scale=25.0)
    rows = [dict(code=p.code, kind=str(p.kind), description="", id_mm=p.id_mm, od_mm=p.od_mm,
                 height_mm=p.height_mm, cs_mm=p.cs_mm, material=p.material,
                 hardness=p.hardness_shore_a, volume_cm3=p.volume_cm3, unit="each",
                 standard=p.standard, notes="") for p in parts]
    with engine.begin() as con:
        con.execute(text("INSERT INTO location (code, description) VALUES ('MAIN', 'Shelf')"))
        con.execute(text(
            "INSERT INTO part (code, kind, description, id_mm, od_mm, height_mm, cs_mm, "
            "material, hardness, volume_cm3, unit, standard, notes) VALUES (:code, :kind, "
            ":description, :id_mm, :od_mm, :height_mm, :cs_mm, :material, :hardness, "
            ":volume_cm3, :unit, :standard, :notes)"), rows)
    step = max(1, n // STOCKED)
    with transaction(engine) as s:
        for p in parts[::step][:STOCKED]:
            ledger.receive(s, ledger.Receipt(p.code, 5, "0.30", cured="2025Q1", received=date(2025, 6, 1)))
    engine.dispose()


SELECT_SCRIPT = """
import sqlite3, sys
con = sqlite3.connect(sys.argv[1])
rows = con.execute("SELECT code, kind, id_mm, od_mm, height_mm, cs_mm, material, hardness, "
                   "volume_cm3, standard FROM part ORDER BY code").fetchall()
assert len(rows) > 0
"""

ORM_SCRIPT = """
import sys
from sqlmodel import Session, select
from inventory.core.convert import part_spec
from inventory.core.db import make_engine
from inventory.core.tables import Part
with Session(make_engine(sys.argv[1])) as s:
    specs = [part_spec(p) for p in s.exec(select(Part).order_by(Part.code))]
assert specs
"""


def run(cmd: list[str], runs: int) -> tuple[float, float, float, str]:
    """Median wall seconds, peak MB and median CPU seconds (user + system) over ``runs``
    fresh processes; the last stdout. CPU time is what the command costs; wall time also
    counts waiting for the other work on a shared machine."""
    walls, peaks, cpus, out = [], [], [], ""
    probe = ("import resource, subprocess, sys, time; t = time.perf_counter(); "
             "p = subprocess.run(sys.argv[1:], capture_output=True, text=True); "
             "w = time.perf_counter() - t; "
             "sys.stderr.write(p.stderr); sys.stdout.write(p.stdout); "
             "u = resource.getrusage(resource.RUSAGE_CHILDREN); "
             "print(f'@@ {w} {u.ru_maxrss} {p.returncode} {u.ru_utime + u.ru_stime}')")
    for _ in range(runs):
        p = subprocess.run([sys.executable, "-c", probe, *cmd], capture_output=True, text=True,
                           cwd=ROOT)
        last = p.stdout.strip().splitlines()[-1].split()
        wall, rss_kb, code, cpu = float(last[1]), int(last[2]), int(last[3]), float(last[4])
        if code != 0:
            raise SystemExit(f"{' '.join(cmd)} failed ({code}): {p.stderr.strip()}")
        walls.append(wall)
        cpus.append(cpu)
        peaks.append(rss_kb / 1024.0)
        out = "\n".join(p.stdout.strip().splitlines()[:-1])
    return statistics.median(walls), max(peaks), statistics.median(cpus), out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--parts", type=int, default=100_000)
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--db", type=Path, help="reuse (or build) the catalog database here")
    ap.add_argument("--strict", action="store_true", help="exit 1 when a target is missed")
    args = ap.parse_args(argv)

    tmp = None
    db = args.db
    if db is None:
        tmp = tempfile.TemporaryDirectory()
        db = Path(tmp.name) / "catalog.db"
    if not db.exists():
        t0 = time.perf_counter()
        build(db, args.parts)
        print(f"built {db} with {args.parts:,} parts in {time.perf_counter() - t0:.1f} s")
    py = sys.executable
    env_inventory = [str(Path(py).with_name("inventory"))]  # the installed console script
    if not Path(env_inventory[0]).exists():
        env_inventory = [py, "-c", "from inventory.cli.main import run; run()"]
    os.environ.setdefault("COLUMNS", "120")

    results = [
        ("python -c pass", *run([py, "-c", "pass"], args.runs)[:3], None),
        ("plain SELECT of the columns", *run([py, "-c", SELECT_SCRIPT, str(db)], args.runs)[:3],
         None),
        ("catalog as ORM objects (before)",
         *run([py, "-c", ORM_SCRIPT, f"sqlite:///{db}"], args.runs)[:3], None),
    ]
    wall, peak, cpu, out = run([*env_inventory, "--db", str(db), *QUERY], args.runs)
    results.append(("inventory match --id 24.99 --cs 3.53", wall, peak, cpu, (WALL_S, PEAK_MB)))

    print(f"\n{args.parts:,} parts, median of {args.runs} runs, fresh process each, "
          f"load average {os.getloadavg()[0]:.1f}")
    print(f"{'command':40s} {'wall s':>8s} {'CPU s':>8s} {'peak MB':>8s}  target")
    ok = True
    for name, w, p, c, target in results:
        verdict = ""
        if target:
            good = w <= target[0] and p <= target[1]
            ok &= good
            verdict = (f"<= {target[0]} s, <= {target[1]:.0f} MB: "
                       f"{'PASS' if good else 'FAIL'}")
        print(f"{name:40s} {w:8.3f} {c:8.3f} {p:8.1f}  {verdict}")
    base, base_cpu = results[0][1], results[0][3]
    print(f"match / python -c pass = {wall / base:.1f}x wall, {cpu / base_cpu:.1f}x CPU")
    print("\nfirst lines of the match output:")
    print("\n".join(out.splitlines()[:6]))
    if tmp is not None:
        tmp.cleanup()
    return 0 if ok or not args.strict else 1


if __name__ == "__main__":
    raise SystemExit(main())
