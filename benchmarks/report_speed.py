"""Benchmark: the month-end report over 1,000,000 movements of 10,000 parts.

Target (issue 7): the report in at most 10 s on SQLite and on PostgreSQL, peak memory at most
500 MB. The data is generated here (three years, December 2023 to November 2026, of receipts
into lots, issues to jobs oldest cure first, adjustments and shelf counts, with job lines and
the cached balances to match) and written with bulk inserts (executemany on SQLite, COPY on
PostgreSQL), then ``ANALYZE``d as a live database would be. The report for 2026-11 then
runs in a fresh child process, which times each phase and reports its own peak resident
memory (``VmHWM``): loading (the SQL ``GROUP BY`` queries), assembling (with the
reconciliation check), the workbook, the HTML page and the JSON document. "The report" held
to the target is what ``inventory report month`` does when typed bare: load, check and
write the workbook; the HTML page and the JSON document are timed as well and printed.
The machine is shared, so the load average is printed with each run.

    python benchmarks/report_speed.py                  # both backends, 1M movements
    python benchmarks/report_speed.py --backend sqlite --movements 200000 --parts 2000

PostgreSQL: the server at 127.0.0.1:5432, user postgres, trust auth (``--pg-admin`` to
change); a uniquely named database is created and dropped.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import resource
import shutil
import subprocess
import sys
import tempfile
import time
import uuid
from collections import defaultdict
from datetime import date, timedelta
from pathlib import Path

FIRST_DAY = date(2023, 12, 1)
LAST_DAY = date(2026, 11, 30)
MONTH = "2026-11"
TODAY = "2026-12-02"
FAMILIES = ["AA-30", "AB-32", "AC-34", "AD-35", "AE-36", "AF-38", "AG-40", "AH-34"]
LEVELS = ["lower_leg", "air_spring", "damper"]
MATERIALS = ["NBR", "AU", "FKM", "HNBR", "PU-FOAM", "EU", "NBR", None]
TARGET_SECONDS = 10.0
TARGET_MB = 500.0


# ------------------------------------------------------------------------- writing rows


class Sink:
    """Buffers rows per table and writes them in chunks with the fastest bulk path of the
    backend."""

    def __init__(self, url: str, chunk: int = 50_000):
        self.url, self.chunk = url, chunk
        self.rows: dict[str, list[tuple]] = defaultdict(list)
        self.cols: dict[str, tuple[str, ...]] = {}
        self.count: dict[str, int] = defaultdict(int)
        if url.startswith("sqlite"):
            import sqlite3

            self.con = sqlite3.connect(url.split("///", 1)[1])
            self.con.execute("PRAGMA synchronous=OFF")
            self.pg = False
        else:
            import psycopg

            self.con = psycopg.connect(url.replace("+psycopg", ""))
            self.pg = True

    def add(self, table: str, cols: tuple[str, ...], row: tuple) -> None:
        self.cols[table] = cols
        buf = self.rows[table]
        buf.append(row)
        if len(buf) >= self.chunk:
            self.flush()  # every table, parents first (in the order they were first added)

    def flush(self, table: str | None = None) -> None:
        for t in [table] if table else list(self.rows):
            buf = self.rows[t]
            if not buf:
                continue
            cols = self.cols[t]
            if self.pg:
                with self.con.cursor() as cur, cur.copy(
                        f"COPY {t} ({', '.join(cols)}) FROM STDIN") as cp:
                    for row in buf:
                        cp.write_row(row)
            else:
                marks = ", ".join("?" * len(cols))
                self.con.executemany(f"INSERT INTO {t} ({', '.join(cols)}) VALUES ({marks})", buf)
            self.count[t] += len(buf)
            buf.clear()

    def close(self) -> None:
        self.flush()
        self.con.commit()
        if self.pg:
            self.con.autocommit = True
            self.con.execute("ANALYZE")
        else:
            self.con.execute("ANALYZE")
        self.con.close()


def _ts(day: date, minute: int, pg: bool) -> str:
    text = f"{day.isoformat()} {12 + minute // 60:02d}:{minute % 60:02d}:00"
    return text + ("+00" if pg else ".000000")


# ------------------------------------------------------------------------- the data


def generate(url: str, *, parts: int, movements: int, seed: int = 7) -> dict[str, int]:
    """Write a shop with ``parts`` parts and about ``movements`` movements to ``url``."""
    rnd = random.Random(seed)
    sink = Sink(url)
    pg = sink.pg
    sink.add("location", ("id", "code", "description"), (1, "MAIN", "Store room"))
    for i in range(3):
        sink.add("supplier", ("id", "code", "name", "lead_time_days", "lead_time_sd_days",
                              "min_order_value", "order_cycle_days", "currency"),
                 (i + 1, f"SUP-{i + 1}", f"Supplier {i + 1}", [2, 5, 21][i], 1.0, 50.0,
                  7, "EUR"))
    for i, code in enumerate(FAMILIES, start=1):
        sink.add("fork_family", ("id", "code", "description", "stanchion_mm", "travel_min_mm",
                                 "travel_max_mm", "spring", "year_from"),
                 (i, code, f"Family {code}", float(code[-2:]), 100, 160, "air_coil_negative",
                  2018))
    days = (LAST_DAY - FIRST_DAY).days + 1
    # service jobs: a seasonal number per day (spring peak, winter trough)
    jobs_by_day: list[list[int]] = []
    job_id = 0
    for d in range(days):
        day = FIRST_DAY + timedelta(days=d)
        season = 1.0 + 0.6 * (day.month in (3, 4, 5, 6)) - 0.4 * (day.month in (12, 1))
        ids = []
        for _ in range(max(1, int(rnd.gauss(120 * season, 15)))):
            job_id += 1
            ids.append(job_id)
            sink.add("service_job", ("id", "ref", "day", "fork_family_id", "service_level"),
                     (job_id, f"J{job_id:07d}", day, rnd.randint(1, len(FAMILIES)),
                      LEVELS[rnd.randrange(3)]))
        jobs_by_day.append(ids)
    sink.flush()

    weights = [rnd.expovariate(1.0) + 0.05 for _ in range(parts)]
    scale = movements / sum(weights)
    budgets = [max(6, round(w * scale)) for w in weights]
    lot_id = 0
    mv_cols = ("ts", "part_id", "location_id", "lot_id", "qty", "kind", "unit_cost", "reference",
               "reason")
    lot_cols = ("id", "part_id", "code", "cured", "received", "unit_cost", "supplier_id")
    moves: list[tuple] = []  # the ledger is appended in time order: sorted before writing
    for p in range(1, parts + 1):
        material = MATERIALS[p % len(MATERIALS)]
        kind = "oil" if material is None else "o_ring"
        sink.add("part", ("id", "code", "kind", "description", "material", "unit", "notes"),
                 (p, f"P{p:05d}", kind, f"Bench part {p}", material,
                  "ml" if material is None else "each", ""))
        cost = round(rnd.lognormvariate(0.5, 1.0), 2) + 0.05
        sink.add("supplier_item", ("supplier_id", "part_id", "supplier_code", "unit_cost",
                                   "pack_size", "min_order_qty"),
                 (1 + p % 3, p, f"S{p}", cost, [1, 5, 10, 25][p % 4], 1))
        # this part's share of the movements, and when it stops selling (some go dead)
        budget = budgets[p - 1]
        stop = days if rnd.random() > 0.08 else rnd.randint(days // 3, days - 380)
        receipts = max(2, budget // 14)
        n_issue = max(1, budget - receipts)
        issue_days = sorted(rnd.randrange(30, stop) for _ in range(n_issue))
        issue_qty = [1 + (rnd.random() < 0.3) + (rnd.random() < 0.1) for _ in issue_days]
        cuts = [int(i * days / receipts) for i in range(receipts)] + [days + 1]
        lots: list[list] = []  # [lot_id, remaining, cost] in issue order
        balance: dict[int, int] = {}
        job_qty: dict[int, int] = defaultdict(int)
        k = 0
        for r in range(receipts):
            day0 = max(0, cuts[r] - rnd.randrange(1, 6))  # before the issues it serves
            need = sum(issue_qty[j] for j in range(k, len(issue_days))
                       if issue_days[j] < cuts[r + 1])
            qty = need + rnd.randint(0, 6) + 2
            lot_id += 1
            when = FIRST_DAY + timedelta(days=min(day0, days - 1))
            cured = None if material is None else \
                f"{when.year - rnd.choice([0, 0, 1, 5])}Q{(when.month - 1) // 3 + 1}"
            unit = round(cost * rnd.uniform(0.9, 1.15), 4)
            sink.add("lot", lot_cols, (lot_id, p, f"L{lot_id}", cured, when, unit, 1 + p % 3))
            moves.append((_ts(when, 0, pg), p, 1, lot_id, qty, "receipt", unit, f"PO-{lot_id}",
                          None))
            lots.append([lot_id, qty, unit])
            lots.sort(key=lambda x: x[0])
            balance[lot_id] = qty
            while k < len(issue_days) and issue_days[k] < cuts[r + 1]:
                d = issue_days[k]
                when = FIRST_DAY + timedelta(days=d)
                q = issue_qty[k]
                k += 1
                kind_ = "issue"
                ref = None
                if rnd.random() < 0.03:
                    kind_ = "count" if rnd.random() < 0.6 else "adjust"
                elif rnd.random() < 0.95:
                    ref = rnd.choice(jobs_by_day[d])
                minute = 1 + k % 600
                for lot in lots:
                    if q == 0:
                        break
                    if lot[1] == 0:
                        continue
                    n = min(q, lot[1])
                    lot[1] -= n
                    q -= n
                    balance[lot[0]] -= n
                    moves.append((_ts(when, minute, pg), p, 1, lot[0], -n, kind_, lot[2],
                                  f"J{ref:07d}" if ref else None,
                                  "bench" if kind_ != "issue" else None))
                    if ref:
                        job_qty[ref] += n
        for ref, q in job_qty.items():
            sink.add("job_line", ("job_id", "part_id", "qty"), (ref, p, q))
        for lid, q in balance.items():
            if q > 0:
                sink.add("stock_balance", ("part_id", "location_id", "lot_id", "qty"),
                         (p, 1, lid, q))
    sink.flush()
    moves.sort(key=lambda m: (m[0], m[1]))
    for row in moves:
        sink.add("movement", mv_cols, row)
    del moves
    sink.close()
    return dict(sink.count)


# ------------------------------------------------------------------------- the child


def child(url: str, outdir: str, method: str) -> None:
    """Run the report once in this (fresh) process and print timings as JSON."""
    from datetime import date as _date

    from sqlmodel import Session

    from inventory.core.db import make_engine
    from inventory.monthend.aggregates import load_month
    from inventory.monthend.html import write_month_html
    from inventory.monthend.records import parse_month
    from inventory.monthend.report import assemble, report_dict
    from inventory.monthend.workbook import write_month_workbook

    today = _date.fromisoformat(TODAY)
    t: dict[str, float] = {}
    cpu: dict[str, float] = {}

    def phase(name: str, fn):
        w0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        t[name], cpu[name] = time.perf_counter() - w0, time.process_time() - c0
        return out

    def load():
        with Session(make_engine(url)) as s:
            return load_month(s, parse_month(MONTH, today=today), method=method)

    data = phase("load (SQL)", load)
    report = phase("assemble", lambda: assemble(data, today=today))
    phase("workbook", lambda: write_month_workbook(
        Path(outdir) / f"stock-{MONTH}-{method}.xlsx", report))
    phase("html", lambda: write_month_html(Path(outdir) / f"stock-{MONTH}-{method}.html", report))
    doc = phase("json", lambda: json.dumps(report_dict(report)))
    peak = _peak_mb()
    print(json.dumps({"seconds": t, "cpu": cpu, "peak_mb": peak, "parts": len(report.parts),
                      "closing_value": str(report.totals.closing_value), "json_bytes": len(doc),
                      "load_average": os.getloadavg()[0]}))


def _peak_mb() -> float:
    """Peak resident memory of this process image. ``VmHWM`` where Linux has it: unlike
    ``ru_maxrss`` it starts afresh at exec, so the generating parent's size does not leak
    into the child's figure."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # kB on Linux


def run_child(url: str, outdir: str, method: str) -> dict:
    out = subprocess.run([sys.executable, __file__, "--child", url, outdir, method],
                         capture_output=True, text=True)
    if out.returncode:
        raise SystemExit(f"the report failed ({method}):\n{out.stderr[-3000:]}")
    return json.loads(out.stdout.strip().splitlines()[-1])


# ------------------------------------------------------------------------- main


def _create(backend: str, tmp: Path, admin: str) -> tuple[str, str | None]:
    if backend == "sqlite":
        return f"sqlite:///{tmp / 'bench.db'}", None
    import psycopg

    name = f"inv_bench_{uuid.uuid4().hex[:12]}"
    with psycopg.connect(admin.replace("+psycopg", ""), autocommit=True) as con:
        con.execute(f'CREATE DATABASE "{name}"')
    return admin.rsplit("/", 1)[0] + f"/{name}", name


def _drop(admin: str, name: str | None) -> None:
    if name is None:
        return
    import psycopg

    with psycopg.connect(admin.replace("+psycopg", ""), autocommit=True) as con:
        con.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def bench(backend: str, args) -> list[tuple]:
    from inventory.core import migrate
    from inventory.core.db import make_engine

    tmp = Path(tempfile.mkdtemp(prefix="inv_bench_"))
    url, name = _create(backend, tmp, args.pg_admin)
    results = []
    try:
        eng = make_engine(url, fresh=True)
        migrate.upgrade(eng)
        eng.dispose()
        t0 = time.perf_counter()
        counts = generate(url, parts=args.parts, movements=args.movements)
        gen = time.perf_counter() - t0
        print(f"[{backend}] generated {counts.get('movement', 0):,} movements, "
              f"{counts.get('part', 0):,} parts, {counts.get('lot', 0):,} lots, "
              f"{counts.get('service_job', 0):,} jobs, {counts.get('job_line', 0):,} job lines "
              f"in {gen:.1f} s")
        for method in args.methods:
            res = run_child(url, str(tmp), method)
            s, c = res["seconds"], res["cpu"]
            report = s["load (SQL)"] + s["assemble"] + s["workbook"]  # `report month` as typed
            every = sum(s.values())
            phases = ", ".join(f"{k} {v:.2f}" for k, v in s.items())
            ok = report <= TARGET_SECONDS and res["peak_mb"] <= TARGET_MB
            print(f"[{backend}] {method}: report (data + checks + workbook) {report:.2f} s, "
                  f"with HTML and JSON too {every:.2f} s ({phases}; this process's CPU "
                  f"{sum(c.values()):.2f} s); peak {res['peak_mb']:.0f} MB; "
                  f"{res['parts']:,} parts; closing value {res['closing_value']}; load average "
                  f"{res['load_average']:.1f} -> {'OK' if ok else 'OVER TARGET'}")
            results.append((backend, method, report, res["peak_mb"], ok))
    finally:
        if not args.keep:
            _drop(args.pg_admin, name)
            shutil.rmtree(tmp, ignore_errors=True)
        else:
            print(f"[{backend}] kept {url} and {tmp}")
    return results


def main() -> int:
    if len(sys.argv) > 1 and sys.argv[1] == "--child":
        child(*sys.argv[2:5])
        return 0
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--backend", choices=["sqlite", "postgres", "both"], default="both")
    ap.add_argument("--movements", type=int, default=1_000_000)
    ap.add_argument("--parts", type=int, default=10_000)
    ap.add_argument("--methods", nargs="+", default=["fifo", "average"],
                    choices=["fifo", "average"])
    ap.add_argument("--pg-admin", default=os.environ.get(
        "INVENTORY_TEST_PG", "postgresql+psycopg://postgres@127.0.0.1:5432/postgres"))
    ap.add_argument("--keep", action="store_true", help="keep the database and the outputs")
    args = ap.parse_args()
    backends = ["sqlite", "postgres"] if args.backend == "both" else [args.backend]
    results = []
    for b in backends:
        results += bench(b, args)
    print(f"target: report <= {TARGET_SECONDS:.0f} s, peak <= {TARGET_MB:.0f} MB "
          "(the moving-average option is measured for information)")
    return 0 if all(ok for b, m, *_, ok in results if m == "fifo") else 1


if __name__ == "__main__":
    sys.exit(main())
