"""The stock ledger on SQLite and PostgreSQL.

What is checked is the bookkeeping identity of a perpetual inventory (on hand = sum of
signed movements, per part, location and lot) and first-in-first-out by cure quarter, the
issue rule ISO 2230 recommends for rubber (../shared/REFERENCE.md section 5: "FIFO by cure
quarter", common practice).
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import delete
from sqlmodel import Session, select

from inventory.core.db import transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import Lot, Movement, StockBalance
from inventory.stock import ledger


def test_receive_issue_fifo_by_cure_quarter(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.30", lot="NEW", cured="2026Q2"))
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.20", lot="OLD", cured="3/24"))  # month/year: 2024Q1
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25", lot="MID", cured="2025Q1"))
    with transaction(store) as s:
        moves = ledger.issue(s, ledger.Issue("OR-214", 7, reference="J-1"))
    lots = {}
    with Session(store) as s:
        for mv in moves:
            lots[s.get(Lot, mv.lot_id).code] = -mv.qty
        by_lot = {ln.lot: ln.on_hand for ln in ledger.on_hand(s, part="OR-214", by_lot=True)}
    assert lots == {"OLD": 5, "MID": 2}
    assert by_lot == {"MID": 3, "NEW": 5}


def test_issue_more_than_on_hand_fails_and_changes_nothing(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", 3, "6.50"))
    with pytest.raises(InventoryError, match=r"not enough stock of WP-32: asked 2, on hand 1"):
        with transaction(store) as s:
            ledger.issue(s, ledger.Issue("WP-32", 2))
            ledger.issue(s, ledger.Issue("WP-32", 2))  # the second one fails: the first is rolled back too
    with Session(store) as s:
        assert [ln.on_hand for ln in ledger.on_hand(s, part="WP-32")] == [3]
        assert len(list(s.exec(select(Movement)))) == 1


def test_count_books_the_variance_and_move_keeps_lots(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 10, "0.25", lot="A", cured="2025Q4"))
        assert ledger.count(s, ledger.Count("OR-214", 10)) == []
        (mv,) = ledger.count(s, ledger.Count("OR-214", 8))
        assert mv.qty == -2 and mv.kind == "count"
        ledger.move(s, "OR-214", 3, from_location="MAIN", to_location="BENCH")
    with Session(store) as s:
        lines = {(ln.location, ln.lot): ln.on_hand for ln in ledger.on_hand(s, by_lot=True)}
        assert lines == {("BENCH", "A"): 3, ("MAIN", "A"): 5}
        assert ledger.verify_balances(s) == []


def test_database_refuses_a_negative_balance(store):
    """The check constraint is the last line of defence, below the application check."""
    from sqlalchemy.exc import IntegrityError

    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 1, "0.25"))
    with pytest.raises(IntegrityError):
        with transaction(store) as s:
            bal = s.exec(select(StockBalance)).one()
            bal.qty = -1
            s.add(bal)


# --- property test: random sequences of operations -------------------------------------

PARTS = ["OR-214", "WP-32"]
LOCS = ["MAIN", "BENCH"]
QUARTERS = ["2024Q1", "2024Q3", "2025Q2", "2026Q1", None]

op = st.one_of(
    st.tuples(st.just("receive"), st.sampled_from(PARTS), st.integers(1, 20),
              st.sampled_from(LOCS), st.sampled_from(QUARTERS)),
    st.tuples(st.just("issue"), st.sampled_from(PARTS), st.integers(1, 25),
              st.sampled_from(LOCS + [None])),
    st.tuples(st.just("adjust"), st.sampled_from(PARTS), st.integers(-10, 10).filter(bool),
              st.sampled_from(LOCS)),
    st.tuples(st.just("count"), st.sampled_from(PARTS), st.integers(0, 30), st.sampled_from(LOCS)),
    st.tuples(st.just("move"), st.sampled_from(PARTS), st.integers(1, 15),
              st.sampled_from(LOCS), st.sampled_from(LOCS)),
)


def _fifo_key(lot: Lot):
    return (lot.cured is None, lot.cured or "", lot.received, lot.id)


def _clear(engine) -> None:
    with transaction(engine) as s:
        for model in (Movement, StockBalance, Lot):
            s.exec(delete(model))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=st.lists(op, min_size=1, max_size=25))
def test_random_ledger_sequences_keep_on_hand_exact(store, ops):
    _clear(store)
    t0 = datetime(2026, 1, 1, tzinfo=UTC)
    for i, o in enumerate(ops):
        ts = t0 + timedelta(hours=i)
        before = _state(store)
        try:
            with transaction(store) as s:
                if o[0] == "receive":
                    ledger.receive(s, ledger.Receipt(
                        o[1], o[2], "1.00", location=o[3], cured=o[4], ts=ts,
                        received=date(2026, 1, 1) + timedelta(days=i)))
                elif o[0] == "issue":
                    moves = ledger.issue(s, ledger.Issue(o[1], o[2], location=o[3], ts=ts))
                    _assert_fifo(s, before, moves, o[1], o[3])
                elif o[0] == "adjust":
                    ledger.adjust(s, ledger.Adjustment(o[1], o[2], reason="test", location=o[3], ts=ts))
                elif o[0] == "count":
                    ledger.count(s, ledger.Count(o[1], o[2], location=o[3], ts=ts))
                    assert _total(s, o[1], o[3]) == o[2]
                else:
                    ledger.move(s, o[1], o[2], from_location=o[3], to_location=o[4], ts=ts)
        except InventoryError as exc:
            # a refused operation must leave everything as it was
            assert exc.kind in {"shortage", "invalid"}, exc
            assert _state(store) == before
        with Session(store) as s:
            assert ledger.verify_balances(s) == []
            for ln in ledger.on_hand(s, by_lot=True):
                assert ln.on_hand > 0


def _state(engine) -> dict:
    with Session(engine) as s:
        return {(ln.part, ln.location, ln.lot): ln.on_hand for ln in ledger.on_hand(s, by_lot=True)}


def _total(s, part, loc) -> int:
    return sum(ln.on_hand for ln in ledger.on_hand(s, part=part, location=loc))


def _assert_fifo(s, before, moves, part, loc) -> None:
    """No lot still holding stock may be older than a lot the issue took from."""
    taken = {mv.lot_id for mv in moves}
    lots = {lot.code: lot for lot in s.exec(select(Lot))}
    newest_taken = max(_fifo_key(s.get(Lot, i)) for i in taken)
    for (p, location, code), qty in before.items():
        if p != part or (loc is not None and location != loc):
            continue
        lot = lots[code]
        if lot.id not in taken and qty > 0:
            assert _fifo_key(lot) > newest_taken, "an older lot was skipped"
