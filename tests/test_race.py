"""Several processes issue the last units at the same moment, on SQLite and PostgreSQL:
exactly as many succeed as there were units, and no movement is lost or doubled."""

from __future__ import annotations

import multiprocessing as mp

from sqlmodel import Session, select

from inventory.core.db import transaction
from inventory.core.tables import Movement
from inventory.stock import ledger

WORKERS = 6
UNITS = 3


def _worker(url: str, barrier, results) -> None:
    from inventory.core.db import make_engine
    from inventory.core.db import transaction as tx
    from inventory.core.errors import InventoryError

    engine = make_engine(url, fresh=True)
    barrier.wait()
    try:
        with tx(engine) as s:
            ledger.issue(s, ledger.Issue("WP-32", 1, reference="RACE"))
        results.put("ok")
    except InventoryError as exc:
        results.put(exc.kind)
    except Exception as exc:  # surfaced as a failure below
        results.put(f"error: {type(exc).__name__}: {exc}")
    finally:
        engine.dispose()


def test_last_units_issued_once(store, db_url):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", UNITS, "6.50"))
    ctx = mp.get_context("spawn")
    barrier = ctx.Barrier(WORKERS)
    results = ctx.Queue()
    procs = [ctx.Process(target=_worker, args=(db_url, barrier, results)) for _ in range(WORKERS)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(120)
    outcomes = sorted(results.get(timeout=5) for _ in procs)
    assert outcomes == ["ok"] * UNITS + ["shortage"] * (WORKERS - UNITS), outcomes
    with Session(store) as s:
        assert ledger.on_hand(s, part="WP-32") == []
        issues = s.exec(select(Movement).where(Movement.reference == "RACE")).all()
        assert sum(-m.qty for m in issues) == UNITS
        assert ledger.verify_balances(s) == []


# -- kill -9 during each writer --------------------------------------------------------------------
#
# The child process does one write, all of its statements, and is killed (SIGKILL, no
# clean-up) at the moment it asks to commit. Atomicity (the "A" of ACID; SQLite's WAL and
# PostgreSQL's transaction log both promise it) says none of it may be visible; the cached
# balances must still equal the ledger; and the next writer must not be blocked by a lock
# the dead process held.

import os  # noqa: E402
import signal  # noqa: E402
from datetime import date  # noqa: E402
from decimal import Decimal  # noqa: E402

import pytest  # noqa: E402
from sqlalchemy import func  # noqa: E402

from inventory.core.tables import Lot, PurchaseOrder, PurchaseOrderLine, RecordedPlan  # noqa: E402
from inventory.ordering.model import DraftLine, DraftOrder  # noqa: E402
from inventory.ordering.orders import create_orders, receive_against_order  # noqa: E402

FORK = mp.get_context("fork")


def _plan(qty: int) -> list[DraftOrder]:
    return [DraftOrder("SUP-A", None, None, (DraftLine("WP-32", qty, Decimal("6.50")),),
                       "plan", plan_date=date(2026, 12, 4))]


WRITERS = {
    "receive": lambda s, ref: ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25")),
    "receive new lot": lambda s, ref: ledger.receive(s, ledger.Receipt("OR-214", 5, "0.30")),
    "issue": lambda s, ref: ledger.issue(s, ledger.Issue("OR-214", 2, reference="J-K")),
    "count": lambda s, ref: ledger.count(s, ledger.Count("OR-214", 3)),
    "adjust": lambda s, ref: ledger.adjust(s, ledger.Adjustment("OR-214", -1, reason="damaged")),
    "move": lambda s, ref: ledger.move(s, "OR-214", 1, from_location="MAIN",
                                       to_location="BENCH"),
    "receive against order": lambda s, ref: receive_against_order(s, ref, ledger.Receipt("OR-214", 2)),
    "record plan": lambda s, ref: create_orders(s, _plan(2), created=date(2026, 12, 4)),
}


def _die_at_commit(url: str, name: str, ref: str, ready) -> None:
    from sqlalchemy import event

    from inventory.core.db import make_engine
    from inventory.core.db import transaction as tx

    engine = make_engine(url, fresh=True)

    def hang(session):
        session.flush()
        ready.set()
        import time

        time.sleep(120)  # killed here

    with tx(engine) as s:
        event.listen(s, "before_commit", hang)
        WRITERS[name](s, ref)
    os._exit(3)  # not reached


def _state(store) -> tuple:
    with Session(store) as s:
        return (
            s.exec(select(func.count()).select_from(Movement)).one(),
            tuple(sorted((ln.part, ln.location, ln.lot, ln.on_hand)
                         for ln in ledger.on_hand(s, by_lot=True))),
            s.exec(select(func.count()).select_from(Lot)).one(),
            tuple(s.exec(select(PurchaseOrderLine.received_qty)
                         .order_by(PurchaseOrderLine.id)).all()),
            tuple(s.exec(select(PurchaseOrder.status).order_by(PurchaseOrder.id)).all()),
            s.exec(select(func.count()).select_from(RecordedPlan)).one(),
        )


@pytest.mark.parametrize("name", list(WRITERS))
def test_kill_9_during_each_writer_leaves_nothing_half_written(store, db_url, name):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 20, "0.25", lot="A"))
        (po,) = create_orders(s, [DraftOrder("SUP-A", None, None,
                                             (DraftLine("OR-214", 10, Decimal("0.25")),))],
                              created=date(2026, 12, 4))
    before = _state(store)
    store.dispose()
    ready = FORK.Event()
    child = FORK.Process(target=_die_at_commit, args=(db_url, name, po.ref, ready))
    child.start()
    assert ready.wait(60), "the writer never reached its commit"
    os.kill(child.pid, signal.SIGKILL)
    child.join(30)
    assert child.exitcode == -signal.SIGKILL
    assert _state(store) == before  # nothing of the killed write is visible
    with Session(store) as s:
        assert ledger.verify_balances(s) == []
    # the dead writer's locks are gone: the same write goes through now, once
    with transaction(store) as s:
        WRITERS[name](s, po.ref)
    after = _state(store)
    assert after != before
    with Session(store) as s:
        assert ledger.verify_balances(s) == []
