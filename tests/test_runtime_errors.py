"""Runtime failures people can act on (issue 12, item 7): database locked, disk full,
permission, connection, constraint and value errors each become one line naming the
database file, server, table or value; ``--debug`` shows the traceback; a failed atomic
file write names the file asked for, not its temporary file.

The failures are real ones raised by the database drivers (SQLite's ``SQLITE_FULL`` via
``PRAGMA max_page_count``, its read-only open mode, a held write lock, PostgreSQL refusing
a connection on a closed port and reporting the unique constraint and the column), not
hand-made exception objects; only the file-system failure of the atomic write is
simulated (the tests run as root, whom permissions do not stop).
"""

from __future__ import annotations

import errno
import multiprocessing as mp
import os
from datetime import date
from pathlib import Path

import pytest
from sqlalchemy import create_engine, event, text
from sqlmodel import Session

from inventory.core.db import dispose_all, explain, transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import Lot
from inventory.stock import ledger
from tests.conftest import inv, write_catalog

FORK = mp.get_context("fork")


@pytest.fixture
def shop(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    db = str(tmp_path / "shop.db")
    for args in (("init",), ("catalog", "load", str(write_catalog(tmp_path / "cat"))),
                 ("stock", "receive", "OR-214", "10", "--cost", "0.25")):
        code, _, err = inv(monkeypatch, capsys, "--db", db, *args)
        assert code == 0, err
    dispose_all()
    return db


def _hold(db: str, ready, done) -> None:
    import sqlite3

    con = sqlite3.connect(db, isolation_level=None)
    con.execute("BEGIN IMMEDIATE")
    ready.set()
    done.wait(30)
    con.rollback()


def test_locked_database_is_one_line_and_debug_shows_the_rest(shop, monkeypatch, capsys):
    monkeypatch.setenv("INVENTORY_LOCK_TIMEOUT", "1")
    ready, done = FORK.Event(), FORK.Event()
    p = FORK.Process(target=_hold, args=(shop, ready, done))
    p.start()
    try:
        assert ready.wait(20)
        code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "issue", "OR-214", "1")
        dispose_all()
        code2, _, err2 = inv(monkeypatch, capsys, "--db", shop, "--debug", "stock", "issue",
                             "OR-214", "1")
    finally:
        done.set()
        p.join(20)
    dispose_all()
    assert code == 1
    assert err.strip().splitlines() == [
        f"error: another booking is in progress (database file {shop} is locked by another "
        "writer) (try again in a moment)"]
    assert code2 == 1 and "Traceback" in err2 and "database is locked" in err2
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "on-hand", "--json")
    assert code == 0 and '"on_hand": 10' in out  # nothing was taken by the refused issues


def test_disk_full_names_the_database_file(tmp_path, store, db_url):
    if not db_url.startswith("sqlite"):
        pytest.skip("SQLITE_FULL is SQLite's; PostgreSQL's disk-full needs a full disk")
    path = tmp_path / "test.db"
    engine = create_engine(f"sqlite:///{path}")

    @event.listens_for(engine, "connect")
    def _small(dbapi_conn, _rec):  # the database may not grow: a real SQLITE_FULL
        n = dbapi_conn.execute("PRAGMA page_count").fetchone()[0]
        dbapi_conn.execute(f"PRAGMA max_page_count={n}")

    with pytest.raises(Exception) as err, Session(engine) as s:
        for i in range(5000):
            s.add(Lot(part_id=1, code=f"FULL-{i:05d}" + "x" * 40, received=date(2026, 12, 4),
                      unit_cost=1))
        s.commit()
    mapped = explain(err.value, engine.url)
    assert mapped is not None and mapped.kind == "disk"
    assert str(mapped) == f"disk full: cannot write to database file {path}"
    engine.dispose()


def test_read_only_database_names_the_file(store, db_url, tmp_path):
    if not db_url.startswith("sqlite"):
        pytest.skip("a read-only file is SQLite's case")
    path = tmp_path / "test.db"
    ro = create_engine(f"sqlite:///file:{path}?mode=ro&uri=true")
    with pytest.raises(Exception) as err, ro.begin() as conn:
        conn.execute(text("UPDATE part SET description = 'x'"))
    mapped = explain(err.value, f"sqlite:///{path}")
    assert mapped is not None and mapped.kind == "permission"
    assert str(mapped) == f"permission denied: cannot write to database file {path}"
    ro.dispose()


def test_unreachable_server_is_one_line(monkeypatch, capsys):
    url = "postgresql://postgres@127.0.0.1:1/nowhere"  # port 1: nothing listens
    code, out, err = inv(monkeypatch, capsys, "--db", url, "stock", "on-hand")
    dispose_all()
    assert code == 1
    [line] = err.strip().splitlines()
    assert line.startswith("error: cannot reach database nowhere on 127.0.0.1:1: ")
    assert "Traceback" not in err and "sqlalchemy" not in line


def test_constraint_names_the_table_and_value(store, db_url):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 1, "0.25", lot="L-1"))
    with pytest.raises(Exception) as err, transaction(store) as s:
        part_id = s.exec(text("SELECT id FROM part WHERE code = 'OR-214'")).scalar_one()
        s.add(Lot(part_id=part_id, code="L-1", received=date(2026, 12, 4), unit_cost=1))
        s.flush()
    mapped = explain(err.value, store.url)
    assert mapped is not None and mapped.kind == "conflict"
    line = str(mapped)
    assert "\n" not in line and "refused the change" in line
    if db_url.startswith("sqlite"):
        assert line.endswith("refused the change: lot.part_id, lot.code")
    else:  # PostgreSQL names the table, the constraint and the value
        assert "lot uq_lot" in line and "(part_id, code)" in line and "L-1" in line


def test_too_long_value_names_the_column_on_postgres(store, db_url):
    if not db_url.startswith("postgresql"):
        pytest.skip("SQLite does not enforce VARCHAR lengths")
    with pytest.raises(Exception) as err, transaction(store) as s:
        s.execute(text("UPDATE part SET description = :d"), {"d": "x" * 100_000})
    mapped = explain(err.value, store.url)
    assert mapped is not None and mapped.kind == "invalid"
    assert "refused a value" in str(mapped) and "too long" in str(mapped)


def test_unknown_failures_are_not_dressed_up():
    assert explain(RuntimeError("boom")) is None
    assert explain(OSError(errno.ENOENT, "No such file", "x.csv")) is None
    assert explain(InventoryError("already one line")).lines() == ["already one line"]


def test_a_failed_atomic_write_names_the_target_not_the_temporary_file(tmp_path, monkeypatch):
    from inventory.sheets import write

    target = tmp_path / "out" / "report.csv"

    def full(src, dst):
        raise OSError(errno.ENOSPC, "No space left on device", str(src))

    monkeypatch.setattr(write.os, "replace", full)
    with pytest.raises(InventoryError) as err:
        write.write_csv(target, ["a"], [["1"]])
    assert str(err.value) == f"disk full: cannot write {target}"
    assert ".~" not in str(err.value)
    assert not target.exists()
    assert [p.name for p in target.parent.iterdir()] == []  # the temporary file is gone

    def denied(src, dst):
        raise PermissionError(errno.EACCES, "Permission denied", str(src))

    monkeypatch.setattr(write.os, "replace", denied)
    with pytest.raises(InventoryError, match=f"permission denied: cannot write {target}$"):
        write.write_csv(target, ["a"], [["1"]])


def test_the_cli_names_the_target_of_a_failed_write(shop, monkeypatch, capsys, tmp_path):
    from inventory.sheets import write

    def full(src, dst):
        raise OSError(errno.ENOSPC, "No space left on device", str(src))

    monkeypatch.setattr(write.os, "replace", full)
    target = tmp_path / "parts.xlsx"
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "export", "parts", "--xlsx",
                         str(target))
    assert code == 1
    assert err.strip().splitlines() == [
        f"error: disk full: cannot write {target} (free some space and run the command again)"]
    assert not Path(target).exists() and os.listdir(tmp_path).count("parts.xlsx") == 0
