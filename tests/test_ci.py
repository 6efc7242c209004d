"""CI runs the README's test command, in a fresh virtual environment, and cannot pass having
tested nothing (pytest's exit status 5, "no tests collected", is turned into a failure)."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def readme_test_command() -> str:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```bash\n(.*?)```", text, flags=re.S)
    found = [line for b in blocks for line in b.splitlines() if "pip install -e '.[test]'" in line]
    assert len(found) == 1, found
    return found[0].strip()


def test_ci_runs_the_readme_command_in_a_fresh_venv():
    script = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    lines = [ln.strip() for ln in script.splitlines()]
    command = readme_test_command()
    assert command in lines
    for step in ("lint-imports", "mypy", "python -m pytest"):
        assert step in command
    venv = next(i for i, ln in enumerate(lines) if "-m venv" in ln)
    activate = next(i for i, ln in enumerate(lines) if ln.startswith(". ") and "activate" in ln)
    assert venv < activate < lines.index(command)
    assert lines[-1] == command  # nothing printed after pytest's summary line


def test_no_tests_collected_fails(tmp_path):
    # pytest documents exit status 5 for "no tests were collected" (pytest docs, "Exit codes");
    # with this project's conftest the same run must fail with status 1 instead.
    proc = subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider",
                           "tests/test_ci.py", "-k", "no_such_test_name_anywhere"],
                          cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 1, proc.stdout + proc.stderr
