"""Fast start: the everyday commands do not import the heavy libraries.

`inventory --help`, `inventory match` and `inventory stock on-hand` run in fresh interpreters
(the console script's entry point under a small wrapper that reports ``sys.modules`` at exit);
none of scipy, matplotlib, openpyxl, alembic, pandas may have been imported. The list is the
issue's (issue 10, "Fast start"); what each costs to import is measured by
benchmarks/startup.py.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from tests.conftest import write_catalog

HEAVY = ("scipy", "matplotlib", "openpyxl", "alembic", "pandas")
#: What each command may not load besides HEAVY (issue 10, "Fast start"; module names are
#: matched as they are or as the package they start): help loads no database library, no
#: numpy and no service; match with readings only reads SQLite by the standard library's
#: driver (no SQLAlchemy at all), no ORM tables, no numpy.
STRICTER = {
    "help": ("sqlalchemy", "sqlmodel", "numpy", "inventory.core.tables",
             "inventory.bench.service", "inventory.catalog.service",
             "inventory.stock.service", "inventory.history.service",
             "inventory.people.service", "inventory.monthend.service",
             "inventory.forecast.service", "inventory.ordering.service"),
    "match": ("sqlmodel", "sqlalchemy", "numpy", "inventory.core.tables"),
    "on-hand": ("numpy", "inventory.bench.service"),
}

WRAPPER = """
import atexit, json, sys
def report():
    names = set(sys.modules)
    loaded = sorted({m.split('.')[0] for m in names} & set(HEAVY))
    loaded += sorted(w for w in WATCH if w in names)
    with open(OUT, 'w') as f:
        json.dump(loaded, f)
atexit.register(report)
from inventory.cli.main import run
sys.argv = ['inventory', *ARGS]
run()
"""


def loaded_by(args: list[str], cwd, out, watch: tuple[str, ...] = ()
              ) -> tuple[int, list[str], str]:
    code = (f"HEAVY = {HEAVY!r}\nWATCH = {watch!r}\nOUT = {str(out)!r}\nARGS = {args!r}\n"
            + WRAPPER)
    env = {k: v for k, v in os.environ.items() if k != "INVENTORY_DB"}
    proc = subprocess.run([sys.executable, "-c", code], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=300)
    return proc.returncode, json.loads(out.read_text()), proc.stderr


@pytest.fixture(scope="module")
def shop(tmp_path_factory):
    folder = tmp_path_factory.mktemp("startup")
    cat = write_catalog(folder / "cat")
    db = str(folder / "shop.db")
    for args in (["--db", db, "init"], ["--db", db, "catalog", "load", str(cat)],
                 ["--db", db, "stock", "receive", "OR-214", "20", "--cost", "0.25"]):
        proc = subprocess.run([sys.executable, "-m", "inventory", *args], cwd=folder,
                              capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0, proc.stderr
    return folder, db


@pytest.mark.parametrize("args, watch", [
    (["--help"], "help"),
    (["stock", "--help"], "help"),
    (["match", "--help"], "help"),
    (["match", "--id", "24.99", "--cs", "3.53"], "match"),  # AS568-214: 24.99 x 3.53 mm
    (["stock", "on-hand"], "on-hand"),
])
def test_everyday_commands_import_no_heavy_library(shop, tmp_path, args, watch):
    folder, db = shop
    full = args if "--help" in args else ["--db", db, *args]
    code, loaded, err = loaded_by(full, folder, tmp_path / "modules.json", STRICTER[watch])
    assert code == 0, err
    assert loaded == [], f"`inventory {' '.join(args)}` imported {loaded}"


def test_the_strict_check_does_see_the_database_libraries(shop, tmp_path):
    # match with a seat scores the parts as arrays through the ORM's engine: it must show up
    folder, db = shop
    code, loaded, err = loaded_by(["--db", db, "match", "--fork", "nope", "--seat", "x"],
                                  folder, tmp_path / "modules.json", STRICTER["match"])
    assert code == 1 and "sqlalchemy" in loaded, (loaded, err)


def test_option_defaults_and_help_choices_are_the_services(tmp_path):
    # the command line names them without importing the services (inventory.core.names)
    from inventory.catalog import service as catalog
    from inventory.core import names
    from inventory.history import service as history
    from inventory.stock import service as stock

    assert names.DEFAULT_LOCATION == stock.DEFAULT_LOCATION
    assert names.CATALOG_TABLES == catalog.TABLES
    assert names.EXPORT_TABLES == history.TABLES
    assert names.IMPORT_KINDS == tuple(history.KINDS)


def test_the_wrapper_does_see_a_heavy_import(shop, tmp_path):
    # the check itself can fail: a command that writes a workbook must load openpyxl
    folder, db = shop
    target = tmp_path / "parts.xlsx"
    code, loaded, err = loaded_by(["--db", db, "export", "parts", "--xlsx", str(target)], folder,
                                  tmp_path / "modules.json")
    assert code == 0, err
    assert "openpyxl" in loaded


@pytest.mark.parametrize("module", [
    "inventory.bench.service", "inventory.catalog.service", "inventory.stock.service",
    "inventory.history.service", "inventory.monthend.service", "inventory.people.service",
])
def test_services_a_face_imports_at_start_load_no_heavy_library(module):
    # the web face imports these at start-up; the planner and forecaster services
    # (ordering, forecast) load scipy by nature and are imported when a page needs them
    code = (f"import sys, json; import {module}; "
            f"print(json.dumps(sorted({{m.split('.')[0] for m in sys.modules}} & set({HEAVY!r}))))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout.strip().splitlines()[-1]) == []
