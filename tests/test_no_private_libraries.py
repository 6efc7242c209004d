"""Dependencies only where used, no library's private internals (issue 10 item 10): no module
of the package imports pandas (it stays a test oracle), and the month-end workbook is written
through XlsxWriter's public API, not by patching openpyxl."""

from __future__ import annotations

import ast
from pathlib import Path

import inventory

PACKAGE = Path(inventory.__file__).resolve().parent


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    out: set[str] = set()
    for node in ast.walk(tree):  # module level and inside functions alike
        if isinstance(node, ast.Import):
            out.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            out.add(node.module.split(".")[0])
    return out


def test_no_module_of_the_package_imports_pandas():
    users = [str(p.relative_to(PACKAGE)) for p in PACKAGE.rglob("*.py") if "pandas" in _imports(p)]
    assert users == []


def test_month_workbook_uses_no_openpyxl_internals():
    path = PACKAGE / "monthend" / "workbook.py"
    assert "openpyxl" not in _imports(path)
    tree = ast.parse(path.read_text(encoding="utf-8"))
    private = {n.attr for n in ast.walk(tree) if isinstance(n, ast.Attribute)
               and n.attr.startswith("_") and not n.attr.startswith("__")}
    assert private == set()


def test_declared_dependencies_match_what_the_package_imports():
    import tomllib

    project = tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text())["project"]
    runtime = {d.split(">")[0].split("<")[0].split("[")[0].split("=")[0].strip().lower()
               for d in project["dependencies"]}
    assert "pandas" not in runtime and "xlsxwriter" in runtime
    openpyxl = next(d for d in project["dependencies"] if d.lower().startswith("openpyxl"))
    assert "<3.2" not in openpyxl  # the pin the old patch needed is gone


def test_no_spreadsheet_writer_reaches_into_a_library():
    # every module that uses openpyxl or XlsxWriter sticks to their public API: no attribute
    # starting with an underscore on anything but its own objects
    found = {}
    for path in PACKAGE.rglob("*.py"):
        if not {"openpyxl", "xlsxwriter"} & _imports(path):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        hits = [n.attr for n in ast.walk(tree) if isinstance(n, ast.Attribute)
                and n.attr.startswith("_") and not n.attr.startswith("__")
                and not (isinstance(n.value, ast.Name) and n.value.id in ("self", "cls"))]
        if hits:
            found[str(path.relative_to(PACKAGE))] = hits
    assert found == {}
