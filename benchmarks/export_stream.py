"""Benchmark: `export movements --csv` over 1,000,000 movements streams in bounded memory.

    python benchmarks/export_stream.py [--movements 1000000] [--parts 10000] [--strict]

Builds a SQLite shop with :func:`benchmarks.report_speed.generate` (the month-end benchmark's
generator), then exports the movements to csv through the library
(:func:`inventory.history.exports.export_table`) in a fresh process, reading the process's
peak resident memory (``VmHWM``) and its wall and CPU seconds; the same process also reads
the rows into a list first (the old way) in a second fresh process, as the baseline of the
same run. Target (issue 14 item 5): <= 300 MB peak at 1M movements.
"""

from __future__ import annotations

import argparse
import json
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

CHILD = r"""
import json, sys, time
sys.path.insert(0, {root!r})
from sqlmodel import Session
from inventory.core.db import make_engine
from inventory.history import exports
url, out, how = sys.argv[1], sys.argv[2], sys.argv[3]
w0, c0 = time.perf_counter(), time.process_time()
with Session(make_engine(url)) as s:
    if how == "stream":
        _, n = exports.export_table(s, "movements", out)
    else:
        data = exports._movements(s)
        rows = list(data.rows)
        exports.write_csv(out, data.header, rows)
        n = len(rows)
wall, cpu = time.perf_counter() - w0, time.process_time() - c0
peak = 0.0
for line in open("/proc/self/status"):
    if line.startswith("VmHWM:"):
        peak = int(line.split()[1]) / 1024
print(json.dumps({{"rows": n, "wall": wall, "cpu": cpu, "peak_mb": peak}}))
"""


def run(url: str, out: Path, how: str) -> dict:
    res = subprocess.run([sys.executable, "-c", CHILD.format(root=str(ROOT)), url, str(out), how],
                         capture_output=True, text=True)
    if res.returncode:
        raise SystemExit(res.stderr[-2000:])
    return json.loads(res.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--movements", type=int, default=1_000_000)
    ap.add_argument("--parts", type=int, default=10_000)
    ap.add_argument("--strict", action="store_true")
    args = ap.parse_args(argv)
    from report_speed import generate

    from inventory.core import migrate
    from inventory.core.db import make_engine

    tmp = Path(tempfile.mkdtemp(prefix="inv_export_"))
    try:
        url = f"sqlite:///{tmp / 'bench.db'}"
        migrate.upgrade(make_engine(url))
        t0 = time.perf_counter()
        generate(url, parts=args.parts, movements=args.movements)
        print(f"built {args.movements:,} movements in {time.perf_counter() - t0:.0f} s\n")
        stream = run(url, tmp / "stream.csv", "stream")
        listed = run(url, tmp / "list.csv", "list")
        same = (tmp / "stream.csv").read_bytes() == (tmp / "list.csv").read_bytes()
        print("| export | rows | wall s | CPU s | peak MB |")
        print("|---|---|---|---|---|")
        for name, r in (("streamed (now)", stream), ("rows read into a list first (before)",
                                                     listed)):
            print(f"| {name} | {r['rows']:,} | {r['wall']:.1f} | {r['cpu']:.1f} | "
                  f"{r['peak_mb']:.0f} |")
        ok = stream["peak_mb"] <= 300.0
        print(f"\nidentical files: {same}")
        print(f"{'PASS' if ok else 'FAIL'}  streamed export <= 300 MB peak: "
              f"{stream['peak_mb']:.0f} MB")
        return 1 if args.strict and not (ok and same) else 0
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    raise SystemExit(main())
