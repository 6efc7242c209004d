"""Usage errors and the global options, through the installed console script.

The expected behaviour is click's documented standalone-mode contract (typer runs on it):
a usage error prints ``Usage: ...`` and ``Try '... --help' for help.`` and exits with status
2 (click documentation, "Exception Handling": UsageError exit code 2). The tool's own
refusals exit with status 1 and one ``error:`` line (this project's README).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest


def console_script() -> str:
    """The ``inventory`` script installed beside this interpreter (pip install -e .)."""
    here = Path(sys.executable).parent / "inventory"
    found = str(here) if here.exists() else shutil.which("inventory")
    if not found:
        pytest.fail("the `inventory` console script is not installed (pip install -e '.[test]')")
    return found


def run_script(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    env = {k: v for k, v in os.environ.items() if k != "INVENTORY_DB"}
    env["COLUMNS"] = "200"
    return subprocess.run([console_script(), *args], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=120)


@pytest.mark.parametrize(
    ("args", "usage", "message"),
    [
        (["stok"], "Usage: inventory", "No such command 'stok'"),
        (["stock", "receive"], "Usage: inventory stock receive", "Missing argument"),
        (["stock", "on-hand", "--bogus"], "Usage: inventory stock on-hand", "No such option: --bogus"),
        (["stock", "receive", "OR-214"], "Usage: inventory stock receive", "Missing argument"),
        (["job", "list", "--limit", "many"], "Usage: inventory job list", "Invalid value for '--limit'"),
        # a bad choice (choices are Enums): typer lists the allowed values
        (["forecast", "--by", "nothing"], "Usage: inventory forecast", "'nothing' is not one of"),
        (["report", "month", "2026-11", "--method", "lifo"], "Usage: inventory report month",
         "'lifo' is not one of 'fifo', 'average'"),
    ],
)
def test_usage_error_prints_usage_and_exits_2(tmp_path, args, usage, message):
    proc = run_script(*args, cwd=tmp_path)
    assert proc.returncode == 2, proc.stderr
    assert usage in proc.stderr
    assert "--help' for help" in proc.stderr
    assert message in proc.stderr
    assert "Traceback" not in proc.stderr + proc.stdout
    assert "click" not in proc.stderr


def test_unknown_command_gets_a_did_you_mean_hint(tmp_path):
    proc = run_script("stok", cwd=tmp_path)
    assert "Did you mean 'stock'?" in proc.stderr


@pytest.mark.parametrize("args", [["match", "--id", "24.99", "--cs", "3.53"], ["stock", "on-hand"]])
def test_a_file_that_is_not_a_database_is_one_line(tmp_path, args):
    # match reads through the standard library's sqlite3, on-hand through SQLAlchemy: the
    # driver's "file is not a database" is the same one line either way
    (tmp_path / "notes.db").write_text("part,qty\nOR-214,3\n" * 200)
    proc = run_script("--db", "notes.db", *args, cwd=tmp_path)
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert proc.returncode == 1
    assert lines == ["error: database file notes.db is not a SQLite database (check the path "
                     "given with --db or $INVENTORY_DB)"], proc.stderr


def test_tool_refusal_is_one_line_and_exit_1(tmp_path):
    proc = run_script("stock", "on-hand", cwd=tmp_path)  # no inventory.db here
    assert proc.returncode == 1
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: no database file")
    assert "Traceback" not in proc.stderr


def test_after_the_demo_a_missing_default_database_points_at_demo_db(tmp_path):
    """README: `inventory demo` builds demo.db, the default database is inventory.db; the
    refusal says where the demo shop is instead of only suggesting `init`."""
    (tmp_path / "demo.db").write_bytes(b"")  # only its presence matters to the hint
    proc = run_script("stock", "on-hand", cwd=tmp_path)
    assert proc.returncode == 1
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: no database file inventory.db")
    assert "add `--db demo.db`" in lines[0]


def test_db_goes_before_or_after_the_sub_command(tmp_path):
    db = tmp_path / "shop.db"
    assert run_script("--db", str(db), "init", cwd=tmp_path).returncode == 0
    before = run_script("--db", str(db), "stock", "on-hand", "--json", cwd=tmp_path)
    after = run_script("stock", "on-hand", "--json", "--db", str(db), cwd=tmp_path)
    assert before.returncode == after.returncode == 0, before.stderr + after.stderr
    assert before.stdout == after.stdout
    # the option really chose the file: without it the default inventory.db is missing
    assert run_script("stock", "on-hand", cwd=tmp_path).returncode == 1


def test_db_after_the_sub_command_wins_over_the_environment(tmp_path):
    db = tmp_path / "shop.db"
    assert run_script("init", "--db", str(db), cwd=tmp_path).returncode == 0
    env = {**os.environ, "INVENTORY_DB": str(tmp_path / "missing.db"), "COLUMNS": "200"}
    proc = subprocess.run([console_script(), "stock", "on-hand", "--db", str(db)], cwd=tmp_path,
                          env=env, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr


def test_every_command_takes_db_after_its_name():
    # walks the built command tree (typer.main.get_command is typer's public API)
    import typer.main

    from inventory.cli.main import app

    missing = []

    def walk(cmd, path):
        subs = getattr(cmd, "commands", None)
        if subs:
            for name, sub in subs.items():
                walk(sub, [*path, name])
            return
        if not any("--db" in getattr(p, "opts", ()) for p in cmd.params):
            missing.append(" ".join(path))

    walk(typer.main.get_command(app), [])
    assert missing == []
