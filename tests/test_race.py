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
            ledger.issue(s, "WP-32", 1, reference="RACE")
        results.put("ok")
    except InventoryError as exc:
        results.put(exc.kind)
    except Exception as exc:  # surfaced as a failure below
        results.put(f"error: {type(exc).__name__}: {exc}")
    finally:
        engine.dispose()


def test_last_units_issued_once(store, db_url):
    with transaction(store) as s:
        ledger.receive(s, "WP-32", UNITS, "6.50")
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
