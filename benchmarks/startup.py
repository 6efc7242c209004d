"""Benchmark: how fast the command line starts.

Targets (issue 10, "Benchmarks"): wall time of ``inventory --help`` <= 0.25 s; of
``inventory match --id 24.99 --cs 3.53`` on the demo database <= 0.35 s and <= 10 x the wall
time of ``python -c pass`` measured beside it in the same run (the interpreter's own start,
so the ratio holds on a slow or busy machine too). Each command runs ``--runs`` times as a
fresh process through the installed console script, interleaved with the baseline; the
median is compared with the target (min and max shown, and the median CPU time, which
a busy machine inflates far less than the wall time). The match also reports which heavy
libraries the command imported (none expected: tests/test_startup.py checks the same), and
that ``match`` on SQLite and ``--help`` load no SQLAlchemy, SQLModel or numpy.

    python benchmarks/startup.py [--db demo.db] [--runs 15] [--strict]

Without ``--db`` the demo shop is built once in a temporary folder (``inventory demo --quick``).
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HELP_TARGET = 0.25
MATCH_TARGET = 0.35
MATCH_RATIO = 10.0
HEAVY = ("scipy", "matplotlib", "openpyxl", "alembic", "pandas")
#: Not loaded by ``match`` with readings on SQLite either (it reads through the standard
#: library's sqlite3: inventory.core.sqlread), nor by ``--help``.
LEAN = ("sqlalchemy", "sqlmodel", "numpy")


def script() -> str:
    here = Path(sys.executable).parent / "inventory"
    found = str(here) if here.exists() else shutil.which("inventory")
    if not found:
        sys.exit("the `inventory` console script is not installed (pip install -e .)")
    return found


def wall(cmd: list[str], env: dict[str, str], cwd: str) -> tuple[float, float]:
    """Wall time and CPU time (user + system of the child) of one run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, env=env, cwd=cwd, stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True)
    elapsed = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        sys.exit(f"{' '.join(cmd)} failed ({proc.returncode}): {proc.stderr.strip()}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return elapsed, cpu


def heavy_imported(args: list[str], env: dict[str, str], cwd: str,
                   names: tuple[str, ...] = HEAVY) -> list[str]:
    code = ("import atexit, sys\n"
            f"atexit.register(lambda: print(sorted({{m.split('.')[0] for m in sys.modules}} & {set(names)!r})))\n"
            "from inventory.cli.main import run\n"
            f"sys.argv = ['inventory', *{args!r}]\n"
            "run()\n")
    out = subprocess.run([sys.executable, "-c", code], env=env, cwd=cwd, capture_output=True,
                         text=True).stdout.strip().splitlines()
    return eval(out[-1]) if out else ["?"]  # noqa: S307 - our own printed list


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--db", help="demo database (built in a temporary folder when absent)")
    ap.add_argument("--runs", type=int, default=15)
    ap.add_argument("--strict", action="store_true", help="exit 1 when a target is missed")
    args = ap.parse_args()
    # PYTHONDONTWRITEBYTECODE (set on some build machines) would make every run compile the
    # package from source; an installed tool keeps its bytecode, so the children may write it
    # (the warm-up run below does)
    env = {k: v for k, v in os.environ.items()
           if k not in ("INVENTORY_DB", "PYTHONDONTWRITEBYTECODE")}
    tmp = tempfile.mkdtemp(prefix="startup-")
    db = args.db
    if db is None:
        db = str(Path(tmp) / "demo.db")
        print(f"building the demo shop in {db} ...", flush=True)
        subprocess.run([script(), "demo", "--quick", "--db", db], env=env, cwd=tmp, check=True,
                       stdout=subprocess.DEVNULL)
    db = str(Path(db).resolve())
    inv = script()
    commands = {
        "python -c pass": [sys.executable, "-c", "pass"],
        "inventory --help": [inv, "--help"],
        "inventory match --id 24.99 --cs 3.53": [inv, "--db", db, "match", "--id", "24.99",
                                                 "--cs", "3.53"],
    }
    for cmd in commands.values():  # warm the file cache once
        wall(cmd, env, tmp)
    times: dict[str, list[float]] = {name: [] for name in commands}
    cpu: dict[str, list[float]] = {name: [] for name in commands}
    for _ in range(args.runs):  # interleaved, so load changes hit all three alike
        for name, cmd in commands.items():
            w, c = wall(cmd, env, tmp)
            times[name].append(w)
            cpu[name].append(c)
    med = {name: statistics.median(t) for name, t in times.items()}
    cpu_med = {name: statistics.median(t) for name, t in cpu.items()}
    base = med["python -c pass"]
    heavy = heavy_imported(["--db", db, "match", "--id", "24.99", "--cs", "3.53"], env, tmp)
    lean = {"match": heavy_imported(["--db", db, "match", "--id", "24.99", "--cs", "3.53"],
                                    env, tmp, LEAN),
            "--help": heavy_imported(["--help"], env, tmp, HEAVY + LEAN)}

    print(f"\n{'command':40} {'median s':>9} {'min s':>7} {'max s':>7} {'x pass':>7} "
          f"{'CPU s':>7}")
    for name, t in times.items():
        print(f"{name:40} {med[name]:9.3f} {min(t):7.3f} {max(t):7.3f} {med[name] / base:7.1f} "
              f"{cpu_med[name]:7.3f}")
    print("(wall-time medians are judged; CPU s, the median user + system time of the process, "
          "is what the command costs when the machine is busy)")
    checks = [
        (f"inventory --help <= {HELP_TARGET} s", med["inventory --help"] <= HELP_TARGET),
        (f"match <= {MATCH_TARGET} s",
         med["inventory match --id 24.99 --cs 3.53"] <= MATCH_TARGET),
        (f"match <= {MATCH_RATIO:g} x python -c pass",
         med["inventory match --id 24.99 --cs 3.53"] <= MATCH_RATIO * base),
        ("match imports none of " + ", ".join(HEAVY), heavy == []),
        ("match (SQLite) imports none of " + ", ".join(LEAN), lean["match"] == []),
        ("--help imports none of " + ", ".join(HEAVY + LEAN), lean["--help"] == []),
    ]
    print()
    for label, ok in checks:
        print(f"{'PASS' if ok else 'FAIL'}  {label}")
    for name, found in (("match", heavy + lean["match"]), ("--help", lean["--help"])):
        if found:
            print(f"      {name} imported: {', '.join(found)}")
    from importlib.metadata import version
    print(f"\ntyper {version('typer')}, python {sys.version.split()[0]}, {sys.prefix}")
    print(f"{args.runs} runs each, {os.cpu_count()} CPUs, load average "
          f"{', '.join(f'{x:.2f}' for x in os.getloadavg())}")
    shutil.rmtree(tmp, ignore_errors=True)
    return 1 if args.strict and not all(ok for _, ok in checks) else 0


if __name__ == "__main__":
    sys.exit(main())
