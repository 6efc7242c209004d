"""`inventory demo --db`: never deletes a database that is not a demo shop unless told to
(--replace), and a build that did not finish is reported by every command instead of passing
as an empty shop (issue 12, item 6). The expected lines are this project's error contract."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from sqlalchemy import func
from sqlmodel import Session, select

from inventory.core import build_mark
from inventory.core.db import dispose_all, make_engine
from inventory.core.tables import Movement, Part
from inventory.demo import build
from tests.conftest import write_catalog
from tests.test_import_support import cli

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture
def quick_replay(monkeypatch):
    """The demo's three years take a while: these tests need its catalog, not its history
    (the full build is covered by tests/test_import_demo.py)."""
    monkeypatch.setattr(build, "replay", lambda session, folder, progress=True: {})


@pytest.fixture
def shop(tmp_path):
    db = str(tmp_path / "shop.db")
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat")))[0] == 0
    assert cli("--db", db, "stock", "receive", "OR-214", "36", "--cost", "0.25")[0] == 0
    return db


def _counts(db: str) -> tuple[int, int]:
    dispose_all()
    with Session(make_engine(f"sqlite:///{db}")) as s:
        return (s.exec(select(func.count()).select_from(Part)).one(),
                s.exec(select(func.count()).select_from(Movement)).one())


def test_demo_refuses_a_shop_database(shop, quick_replay):
    before = _counts(shop)
    code, out, err = cli("demo", "--db", shop, "--quick")
    assert code == 1 and "Traceback" not in err
    assert err.strip().splitlines() == [
        f"error: {shop} already holds a database that is not a demo shop: `inventory demo` "
        f"would delete it (give another --db, or run `inventory demo --db {shop} --replace` "
        "to delete it and build the demo there)"]
    assert _counts(shop) == before == (4, 1)  # tests/conftest.py TINY: 4 parts, 1 receipt


def test_demo_replace_deletes_the_shop_and_builds_the_demo(shop, quick_replay):
    code, out, err = cli("demo", "--db", shop, "--quick", "--replace")
    assert code == 0, err
    parts, moves = _counts(shop)
    demo_parts = sum(1 for _ in open(ROOT / "catalog_demo" / "parts.csv", encoding="utf-8")) - 1
    assert (parts, moves) == (demo_parts, 0)  # the shop's 4 parts and its receipt are gone
    assert build_mark.marks(make_engine(f"sqlite:///{shop}")) == {"demo": "finished"}


def test_demo_database_is_rebuilt_without_asking(tmp_path, quick_replay):
    db = str(tmp_path / "demo.db")
    assert cli("demo", "--db", db, "--quick")[0] == 0
    code, out, err = cli("demo", "--db", db, "--quick")
    assert code == 0, err
    assert build_mark.marks(make_engine(f"sqlite:///{db}")) == {"demo": "finished"}


def test_a_file_that_is_not_a_database_is_kept(tmp_path, quick_replay):
    path = tmp_path / "notes.db"
    path.write_text("part,qty\nOR-214,3\n" * 200)
    code, out, err = cli("demo", "--db", str(path), "--quick")
    assert code == 1 and err.startswith(f"error: {path} already holds a database that is not")
    assert path.read_text().startswith("part,qty")
    assert cli("demo", "--db", str(path), "--quick", "--replace")[0] == 0


def test_interrupted_build_is_reported_by_every_command(tmp_path, monkeypatch):
    db = str(tmp_path / "demo.db")

    def killed(session, folder, progress=True):
        raise KeyboardInterrupt  # as Ctrl-C half-way through the replay

    monkeypatch.setattr(build, "replay", killed)
    with pytest.raises(KeyboardInterrupt):
        build.build_demo(db, progress=False)
    assert build_mark.marks(make_engine(f"sqlite:///{db}")) == {"demo": "started"}
    expected = [f"error: demo build did not finish: sqlite:///{db} holds an unfinished demo "
                f"database (run `inventory demo --db {db} --replace` to build it again)"]
    for args in (["stock", "on-hand"], ["match", "--id", "24.99", "--cs", "3.53"]):
        code, out, err = cli("--db", db, *args)
        assert (code, err.strip().splitlines()) == (1, expected), (args, out, err)
    monkeypatch.setattr(build, "replay", lambda session, folder, progress=True: {})
    assert cli("demo", "--db", db, "--quick")[0] == 0  # a demo database: rebuilt, no --replace
    assert cli("--db", db, "stock", "on-hand")[0] == 0


@pytest.mark.slow
def test_kill_9_during_the_build_is_detected(tmp_path):
    db = tmp_path / "demo.db"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen([sys.executable, "-c", "from inventory.cli.main import run; run()",
                             "demo", "--db", str(db), "--quick"], cwd=tmp_path, env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            if db.exists() and build_mark.marks(make_engine(f"sqlite:///{db}")):
                break
            time.sleep(0.2)
        else:
            pytest.fail("the build never wrote its started mark")
        time.sleep(1.0)  # well into the catalog load and the replay
        assert proc.poll() is None, "the build finished before it could be killed"
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        proc.wait(30)
    dispose_all()
    code, out, err = cli("--db", str(db), "stock", "on-hand")
    assert code == 1 and err.startswith("error: demo build did not finish: ")


@pytest.mark.postgres
def test_postgres_shop_is_refused_and_replaced_on_request(pg_url, tmp_path, quick_replay):
    assert cli("--db", pg_url, "init")[0] == 0
    assert cli("--db", pg_url, "catalog", "load", str(write_catalog(tmp_path / "cat")))[0] == 0
    code, out, err = cli("demo", "--db", pg_url, "--quick")
    assert code == 1 and "already holds a database that is not a demo shop" in err, err
    engine = make_engine(pg_url)
    with Session(engine) as s:
        assert s.exec(select(func.count()).select_from(Part)).one() == 4
    code, out, err = cli("demo", "--db", pg_url, "--quick", "--replace")
    assert code == 0, err
    dispose_all()
    engine = make_engine(pg_url)
    with Session(engine) as s:
        assert s.exec(select(Part).where(Part.code == "OR-214")).first() is None
    assert build_mark.marks(engine) == {"demo": "finished"}
    assert cli("demo", "--db", pg_url, "--quick")[0] == 0  # a demo database: no --replace
