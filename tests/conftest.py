"""Shared fixtures: a database per test on SQLite and on PostgreSQL, and a tiny catalog.

PostgreSQL is the server at 127.0.0.1:5432 (trust auth); each test session creates a
uniquely named database and drops it at the end. Under CI=true an unreachable server fails
the run; elsewhere the PostgreSQL cases skip with the reason.
"""

from __future__ import annotations

import os
import sys
import uuid
from pathlib import Path

import pytest

from inventory.core import migrate
from inventory.core.db import dispose_all, make_engine, transaction

PG_ADMIN_URL = os.environ.get("INVENTORY_TEST_PG", "postgresql+psycopg://postgres@127.0.0.1:5432/postgres")
IN_CI = os.environ.get("CI", "").lower() == "true"

TINY = {
    "locations.csv": "code,description\nMAIN,Store room\nBENCH,Bench drawer\n",
    "parts.csv": (
        "code,kind,description,id_mm,od_mm,height_mm,cs_mm,material,hardness,volume_cm3,unit,standard,notes\n"
        "OR-214,o_ring,O-ring 24.99x3.53,24.99,,,3.53,NBR,70,,each,AS568-214,\n"
        "WP-32,dust_wiper,Wiper 32x42,31.2,42.1,10.5,,AU,90,,each,,\n"
        "OIL-5,oil,Fork oil 5wt,,,,,OIL,,,ml,,\n"
        "K-TST,kit,Test kit,,,,,,,,each,,\n"
    ),
    "suppliers.csv": (
        "code,name,lead_time_days,lead_time_sd_days,min_order_value,order_cycle_days,currency\n"
        "SUP-A,Supplier A,2,1,50.00,7,EUR\n"
    ),
    "supplier_items.csv": (
        "supplier,part,supplier_code,unit_cost,pack_size,min_order_qty,lead_time_days\n"
        "SUP-A,OR-214,A-214,0.25,10,10,\nSUP-A,WP-32,A-W32,6.50,2,2,\n"
    ),
    "fork_families.csv": (
        "code,description,stanchion_mm,travel_min_mm,travel_max_mm,spring,year_from,year_to\n"
        "XC-32,Test fork,32,100,120,air_coil_negative,2020,\n"
    ),
    "kits.csv": "kit,fork,service_level,description\nK-TST,XC-32,lower_leg,Test kit\n",
    "kit_lines.csv": "kit,part,qty\nK-TST,WP-32,2\nK-TST,OR-214,1\n",
}


def inv(monkeypatch, capsys, *args: str) -> tuple[int, str, str]:
    """Run ``inventory ARGS`` through the console entry point (as a user would, with its
    error handler); returns (exit code, stdout, stderr)."""
    from inventory.cli.main import run

    monkeypatch.setattr(sys, "argv", ["inventory", *args])
    code = 0
    try:
        run()
    except SystemExit as exc:
        code = exc.code or 0
    out = capsys.readouterr()
    return code, out.out, out.err


def write_catalog(folder: Path, files: dict[str, str] | None = None) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in (files or TINY).items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def _pg_available() -> str | None:
    try:
        import psycopg

        with psycopg.connect(PG_ADMIN_URL.replace("+psycopg", ""), connect_timeout=3):
            return None
    except Exception as exc:  # pragma: no cover - depends on the machine
        return f"PostgreSQL not reachable at {PG_ADMIN_URL}: {exc}"


@pytest.fixture(scope="session")
def pg_server():
    """Admin connection string for a reachable PostgreSQL, or skip/fail as the policy says."""
    reason = _pg_available()
    if reason:
        if IN_CI:
            pytest.fail(f"CI=true and {reason}")
        pytest.skip(reason)
    return PG_ADMIN_URL


def _create_pg_db(admin_url: str) -> tuple[str, str]:
    import psycopg

    name = f"inv_test_{uuid.uuid4().hex[:12]}"
    with psycopg.connect(admin_url.replace("+psycopg", ""), autocommit=True) as conn:
        conn.execute(f'CREATE DATABASE "{name}"')
    return name, admin_url.rsplit("/", 1)[0] + f"/{name}"


def _drop_pg_db(admin_url: str, name: str) -> None:
    import psycopg

    dispose_all()
    with psycopg.connect(admin_url.replace("+psycopg", ""), autocommit=True) as conn:
        conn.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


@pytest.fixture
def pg_url(pg_server):
    name, url = _create_pg_db(pg_server)
    yield url
    _drop_pg_db(pg_server, name)


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def db_url(request, tmp_path):
    """An empty, migrated database on each backend."""
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path / 'test.db'}"
        yield url
        dispose_all()
    else:
        yield request.getfixturevalue("pg_url")


@pytest.fixture
def store(db_url, tmp_path):
    """A migrated database holding the tiny catalog; yields the engine."""
    engine = make_engine(db_url, fresh=True)
    migrate.upgrade(engine)
    from inventory.catalog.load import load_catalog

    with transaction(engine) as s:
        load_catalog(s, write_catalog(tmp_path / "cat"))
    yield engine
    engine.dispose()


def pytest_sessionfinish(session, exitstatus):
    """No tests collected is a failure, not pytest's exit status 5: a run that tested
    nothing must not pass CI (e.g. a wrong path or -k)."""
    if exitstatus == pytest.ExitCode.NO_TESTS_COLLECTED:
        session.exitstatus = pytest.ExitCode.TESTS_FAILED

