"""Readers do not block writers: a month-end report's read transaction stays open while a
bench issue books stock, and the issue goes through at once (issue 10 item 7).

SQLite documents the behaviour relied on (https://www.sqlite.org/wal.html, "Concurrency"
and https://www.sqlite.org/lang_transaction.html): in WAL mode readers do not block writers
and a writer does not block readers; ``BEGIN IMMEDIATE`` takes the write lock at once, so a
session that starts every transaction that way blocks every writer until it ends. The
contrast test shows that on this database.
"""

from __future__ import annotations

import time
from datetime import UTC, date, datetime
from decimal import Decimal

import pytest
from sqlalchemy import text
from sqlmodel import Session

from inventory.core.db import make_engine, read_transaction, transaction
from inventory.stock import ledger

WAIT = 1.0  # seconds a writer waits for a lock in these tests


def _book(engine) -> None:
    with transaction(engine) as s:
        ledger.receive(s, ledger.Receipt(
            "OR-214", 10, "0.25", lot="A", cured="2025Q1", received=date(2025, 5, 1),
            ts=datetime(2025, 5, 1, 12, tzinfo=UTC)))


def _issue(url) -> float:
    """A bench issue from another connection pool (as another process would), timed."""
    other = make_engine(url, fresh=True, timeout=WAIT)
    try:
        t0 = time.perf_counter()
        with transaction(other) as s:
            ledger.issue(s, ledger.Issue("OR-214", 1, reference="J-1"))
        return time.perf_counter() - t0
    finally:
        other.dispose()


def test_a_report_read_open_does_not_hold_up_an_issue(store, db_url):
    _book(store)
    from inventory.monthend.report import month_report

    with read_transaction(store) as s:
        # a report's read: the month-end report for May, then the stock on hand
        report = month_report(s, "2025-05", today=date(2025, 6, 2))
        assert report.totals.receipts_value == 10 * Decimal("0.25")  # the one receipt
        before = sum(line.on_hand for line in ledger.on_hand(s))
        seconds = _issue(db_url)
        assert seconds < WAIT / 2  # at once, not after waiting out the lock timeout
        # the report keeps reading its own snapshot
        assert sum(line.on_hand for line in ledger.on_hand(s)) == before == 10
    with Session(store) as s:
        assert sum(line.on_hand for line in ledger.on_hand(s)) == 9


def test_a_read_transaction_writes_nothing(store):
    _book(store)
    with read_transaction(store) as s:
        s.execute(text("SELECT count(*) FROM movement")).scalar()
    with Session(store) as s:
        assert s.execute(text("SELECT count(*) FROM movement")).scalar() == 1


def test_postgres_read_transaction_refuses_a_write(pg_url):
    from sqlalchemy.exc import DBAPIError

    from inventory.core import migrate

    engine = make_engine(pg_url, fresh=True)
    migrate.upgrade(engine)
    with pytest.raises(DBAPIError, match="read-only transaction"):
        with read_transaction(engine) as s:
            s.execute(text("INSERT INTO location (code, description) VALUES ('X', 'x')"))
    engine.dispose()


def test_contrast_a_write_lock_held_by_a_reader_blocks_the_issue(tmp_path):
    # what every plain session did before: BEGIN IMMEDIATE on SQLite, so the issue waits out
    # the lock timeout and is refused
    from inventory.core import migrate
    from inventory.core.errors import InventoryError

    url = f"sqlite:///{tmp_path / 'c.db'}"
    engine = make_engine(url, fresh=True, timeout=WAIT)
    migrate.upgrade(engine)
    from inventory.catalog.load import load_catalog
    from tests.conftest import write_catalog

    with transaction(engine) as s:
        load_catalog(s, write_catalog(tmp_path / "cat"))
    _book(engine)
    with Session(engine) as s:
        s.execute(text("SELECT count(*) FROM movement")).scalar()  # BEGIN IMMEDIATE
        t0 = time.perf_counter()
        with pytest.raises((InventoryError, Exception)):
            _issue(url)
        assert time.perf_counter() - t0 >= WAIT * 0.9
    engine.dispose()
