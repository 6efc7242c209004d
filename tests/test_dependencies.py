"""Every package the code imports is declared in pyproject.toml (a fresh virtual environment
in CI installs only those, so an undeclared one would fail there; this names it at once).

Imports are read from the source with ``ast``; each top-level module is mapped to the
distribution that provides it with ``importlib.metadata.packages_distributions`` (standard
library, Python documentation). The package's own modules need ``[project] dependencies``;
the tests and benchmarks may also use the ``test`` extra.
"""

from __future__ import annotations

import ast
import importlib.metadata as md
import re
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _declared(specs: list[str]) -> set[str]:
    return {re.split(r"[\s\[<>=!~;]", s, maxsplit=1)[0].lower().replace("_", "-") for s in specs}


def _imports(folder: Path) -> dict[str, str]:
    found: dict[str, str] = {}
    for path in folder.rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names = [node.module]
            for name in names:
                found.setdefault(name.split(".")[0], str(path.relative_to(ROOT)))
    return found


def _undeclared(folder: str, declared: set[str]) -> list[str]:
    dists = md.packages_distributions()
    local = {"inventory", "tests", "benchmarks", "catalog_demo", "conftest"}
    local |= {p.stem for p in (ROOT / folder).rglob("*.py")}  # scripts importing siblings
    missing = []
    for module, where in sorted(_imports(ROOT / folder).items()):
        if module in sys.stdlib_module_names or module in local or module.startswith("_"):
            continue
        provided = {d.lower().replace("_", "-") for d in dists.get(module, [])}
        if not provided & declared:
            missing.append(f"{module} (imported in {where}; provided by "
                           f"{', '.join(sorted(provided)) or 'nothing installed'})")
    return missing


def test_the_package_imports_only_declared_dependencies():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    assert _undeclared("inventory", _declared(project["dependencies"])) == []


def test_tests_and_benchmarks_import_only_declared_dependencies():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    declared = _declared(project["dependencies"] + project["optional-dependencies"]["test"])
    assert _undeclared("tests", declared) + _undeclared("benchmarks", declared) == []
