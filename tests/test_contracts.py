"""The import contracts in pyproject.toml hold for the code, and really catch violations.

`lint-imports` (import-linter) is run twice: on the project as it is (every contract kept),
and on a throw-away copy of the package layout with one planted violation per contract kind
(a pure module importing sqlalchemy, a face importing the ledger, a lower layer importing a
higher one, the sheets edge importing a feature), where each of those contracts must break.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGES = ("core", "sheets", "bench", "catalog", "stock", "history", "forecast", "ordering",
            "monthend", "people", "cli", "web", "demo")


def lint_imports(cwd: Path, pythonpath: Path) -> subprocess.CompletedProcess[str]:
    exe = Path(sys.executable).parent / "lint-imports"
    cmd = [str(exe)] if exe.exists() else [shutil.which("lint-imports") or "lint-imports"]
    env = {**os.environ, "PYTHONPATH": str(pythonpath)}
    return subprocess.run([*cmd, "--no-cache"], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=600)


def test_the_code_keeps_every_contract():
    proc = lint_imports(ROOT, ROOT)
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-2000:]
    assert "0 broken" in proc.stdout


@pytest.fixture
def planted(tmp_path):
    """A copy of the package skeleton (every module the contracts name exists, empty), the
    project's pyproject.toml, and four violations."""
    pkg = tmp_path / "inventory"
    for name in PACKAGES:
        (pkg / name).mkdir(parents=True)
        (pkg / name / "__init__.py").write_text("")
    (pkg / "__init__.py").write_text("")
    src = ROOT / "inventory"
    for path in src.rglob("*.py"):  # the same module names, without their imports
        rel = path.relative_to(src)
        if rel.parts[0] in PACKAGES and "migrations" not in rel.parts:
            target = pkg / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            (target.parent / "__init__.py").touch()
            target.write_text("")
    (pkg / "core" / "units.py").write_text("import sqlalchemy\n")  # pure module -> database
    (pkg / "cli" / "stock.py").write_text("from inventory.stock import ledger\n")  # face -> ledger
    (pkg / "stock" / "valuation.py").write_text("")
    (pkg / "stock" / "months.py").write_text("import inventory.monthend.report\n")  # layer
    (pkg / "sheets" / "write.py").write_text("from inventory.bench import fit\n")  # edge -> feature
    # the one import the layers contract ignores by name must exist, or import-linter stops
    (pkg / "bench" / "service.py").write_text("from inventory.stock import ledger\n")
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    return tmp_path


def test_each_contract_catches_a_planted_violation(planted):
    proc = lint_imports(planted, planted)
    out = proc.stdout
    assert proc.returncode != 0, out
    broken = [ln for ln in out.splitlines() if ln.rstrip().endswith("BROKEN")]
    text = "\n".join(broken)
    assert "Pure modules" in text
    assert "Faces call services" in text
    assert "spreadsheet edge" in text
    assert "inventory.stock is not allowed to import inventory.monthend" in out
    assert "inventory.core.units -> sqlalchemy" in out


# ------------------------------------------------ faces reach a feature through its service

#: Feature packages: a face (command line, web app) imports from them only ``service``.
FEATURES = ("sheets", "bench", "catalog", "stock", "history", "forecast", "ordering",
            "monthend", "people")
FACES = ("cli", "web")
#: The demo's walk through every flow is a face too; the demo's builder is not (it writes the
#: invented shop from its source files with the catalog loader and the import engine, as a
#: data generator, so it may use their parts).
FACE_FILES = ("demo/tour.py",)


def face_imports_past_services(source: str, feature_packages=FEATURES) -> list[tuple[int, str]]:
    """(line, module) for every import of a feature module other than its ``service``, at
    any depth of the file (imports inside functions and under TYPE_CHECKING count too)."""
    import ast

    found = []
    for node in ast.walk(ast.parse(source)):
        names: list[str] = []
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            parts = node.module.split(".")
            names = ([f"{node.module}.{a.name}" for a in node.names] if len(parts) == 2
                     else [node.module])
        elif isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        for name in names:
            parts = name.split(".")
            if (parts[0] == "inventory" and len(parts) > 1 and parts[1] in feature_packages
                    and (len(parts) < 3 or parts[2] != "service")):
                found.append((node.lineno, name))
    return found


def test_faces_reach_features_only_through_their_services():
    """DEVELOPERS.md: the faces call the services and the shared core, nothing else. The
    import-linter contracts forbid the tables, look-ups, ledger and queries; this check
    closes the rest (a face importing ``history.jobs`` or ``monthend.report`` directly)."""
    offenders = []
    paths = [p for face in FACES for p in sorted((ROOT / "inventory" / face).rglob("*.py"))]
    for path in paths + [ROOT / "inventory" / f for f in FACE_FILES]:
        for line, name in face_imports_past_services(path.read_text()):
            offenders.append(f"{path.relative_to(ROOT)}:{line} imports {name}")
    assert not offenders, "\n".join(offenders)


def test_the_face_check_catches_a_planted_import():
    planted = ("from inventory.bench import service\n"
               "from inventory.core import parse\n"
               "def f():\n"
               "    from inventory.history.jobs import record_job\n"
               "    import inventory.monthend.report\n"
               "    from inventory.stock import ledger, service as stock\n")
    assert face_imports_past_services(planted) == [
        (4, "inventory.history.jobs"), (5, "inventory.monthend.report"),
        (6, "inventory.stock.ledger")]


# ------------------------------------------------ the services' doors are typed, not **kwargs

def service_kwargs(source: str) -> list[tuple[int, str]]:
    """(line, name) of each public function of a service module taking ``**kwargs``."""
    import ast

    return [(node.lineno, node.name) for node in ast.parse(source).body
            if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef)
            and not node.name.startswith("_") and node.args.kwarg is not None]


def test_services_name_their_parameters():
    """A face calls a service with named parameters or a record (DEVELOPERS.md, house
    limits): a ``**kwargs`` pass-through would hide the parameters the limit counts and
    leave a typo to fail deep inside the feature."""
    offenders = [f"{path.relative_to(ROOT)}:{line} {name}(**...)"
                 for path in sorted((ROOT / "inventory").glob("*/service.py"))
                 for line, name in service_kwargs(path.read_text())]
    assert not offenders, "\n".join(offenders)


def test_the_kwargs_check_catches_a_planted_pass_through():
    planted = ("def book(session, part, **kwargs):\n    pass\n"
               "def _inner(**kw):\n    pass\n"
               "def named(session, *, reason):\n    pass\n")
    assert service_kwargs(planted) == [(1, "book")]
