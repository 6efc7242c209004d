"""Purchase orders in the store, on SQLite and PostgreSQL (the ``store`` fixture's tiny
catalog: SUP-A sells OR-214 at 0.25 in packs of 10 and WP-32 at 6.50 in packs of 2):
recording drafts, references, receiving against an order (partial, complete, over-delivery
tolerance), and the errors a user can meet."""

from __future__ import annotations

from datetime import UTC, date, datetime
from decimal import Decimal

import pytest
from sqlmodel import Session, select

from inventory.core.db import transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import Lot, PurchaseOrder, PurchaseOrderLine
from inventory.ordering.model import DraftLine, DraftOrder
from inventory.ordering.orders import create_orders, list_orders, receive_against_order
from inventory.stock import ledger

DAY = date(2026, 12, 2)
TS = datetime(2026, 12, 2, 12, tzinfo=UTC)


def draft(*lines, supplier="SUP-A", source="plan.json: orders[0]"):
    return DraftOrder(supplier, DAY, None, tuple(DraftLine(*ln) for ln in lines), source)


def test_create_orders_assigns_references_and_expected_dates(store):
    with transaction(store) as s:
        # a reference already used by history booked before the tool: numbering goes past it
        ledger.receive(s, ledger.Receipt("OR-214", 10, "0.25", ts=TS, reference="PO-2026-0007"))
        made = create_orders(s, [draft(("OR-214", 50, None, "why"), ("WP-32", 4, Decimal("6.40")))],
                             created=DAY)
        made += create_orders(s, [draft(("OR-214", 20, None))], created=DAY)
    assert [m.ref for m in made] == ["PO-2026-0008", "PO-2026-0009"]
    first = made[0]
    # SUP-A lead time 2 days; the price list's cost where the draft gives none
    assert first.expected == date(2026, 12, 4)
    assert first.total == Decimal("38.10")  # 50 x 0.25 + 4 x 6.40
    with Session(store) as s:
        lines = s.exec(select(PurchaseOrderLine).order_by(PurchaseOrderLine.id)).all()
        assert [(ln.qty, ln.received_qty, ln.unit_cost) for ln in lines[:2]] == [
            (50, 0, Decimal("0.2500")), (4, 0, Decimal("6.4000"))]
        assert lines[0].reason == "why"
    with Session(store) as s:
        rows = list_orders(s)
    assert [(r.ref, r.status, r.lines, r.ordered) for r in rows] == [
        ("PO-2026-0009", "open", 1, 20), ("PO-2026-0008", "open", 2, 54)]


def test_every_bad_line_reported_and_nothing_written(store):
    drafts = [draft(("OR-215", 10, None), ("OIL-5", 100, None), ("OR-214", 10, None),
                    ("OR-214", 5, None)),
              draft(("OR-214", 10, None), supplier="SUP-Q", source="plan.json: orders[1]")]
    with pytest.raises(InventoryError) as err, transaction(store) as s:
        create_orders(s, drafts, created=DAY)
    assert err.value.lines() == [
        "plan.json: orders[0]: unknown part 'OR-215' (did you mean OR-214?)",
        "plan.json: orders[0]: SUP-A has no supplier item for OIL-5",
        "plan.json: orders[0]: OR-214 is listed twice for SUP-A",
        "plan.json: orders[1]: unknown supplier 'SUP-Q' (did you mean SUP-A?)",
    ]
    with Session(store) as s:
        assert s.exec(select(PurchaseOrder)).all() == []


def test_receive_partial_then_complete_closes_the_order(store):
    with transaction(store) as s:
        [po] = create_orders(s, [draft(("OR-214", 50, None), ("WP-32", 4, None))], created=DAY)
    with transaction(store) as s:
        got = receive_against_order(s, po.ref, ledger.Receipt("OR-214", 30, cured="2026Q3", ts=TS))
    assert got.summary == f"{po.ref}: OR-214 30 of 50 received" and got.status == "open"
    with transaction(store) as s:
        receive_against_order(s, po.ref, ledger.Receipt("OR-214", 20, ts=TS))
        got = receive_against_order(s, po.ref, ledger.Receipt("WP-32", 4, ts=TS))
    assert got.status == "closed" and got.summary.endswith("order complete, closed")
    with Session(store) as s:
        # booked with the order's reference, supplier and unit cost
        lot = s.exec(select(Lot).where(Lot.cured == "2026Q3")).one()
        assert lot.unit_cost == Decimal("0.2500") and lot.supplier_id is not None
        on_hand = {ln.part: ln.on_hand for ln in ledger.on_hand(s)}
        assert on_hand == {"OR-214": 50, "WP-32": 4}
        assert list_orders(s) == []
        [closed] = list_orders(s, status="closed")
        assert closed.received == closed.ordered == 54


def test_over_delivery_beyond_the_tolerance_is_refused(store):
    with transaction(store) as s:
        [po] = create_orders(s, [draft(("OR-214", 50, None))], created=DAY)
    with transaction(store) as s:
        receive_against_order(s, po.ref, ledger.Receipt("OR-214", 40, ts=TS))
    # 5 % of 50 = 2.5: at most 52 in all
    with pytest.raises(InventoryError) as err, transaction(store) as s:
        receive_against_order(s, po.ref, ledger.Receipt("OR-214", 13, ts=TS))
    assert str(err.value) == (f"{po.ref} OR-214: ordered 50, received 40; 13 more would make "
                              "53, beyond the 5% over-delivery tolerance (52)")
    assert err.value.hint == "book the surplus without --order, or raise --tolerance"
    with transaction(store) as s:
        got = receive_against_order(s, po.ref, ledger.Receipt("OR-214", 12, ts=TS))  # 52: within 5 %
    assert got.status == "closed" and got.received == 52
    with transaction(store) as s:
        [po2] = create_orders(s, [draft(("OR-214", 10, None))], created=DAY)
    with pytest.raises(InventoryError), transaction(store) as s:
        receive_against_order(s, po2.ref, ledger.Receipt("OR-214", 11, ts=TS), tolerance=0.0)
    with transaction(store) as s:
        assert receive_against_order(s, po2.ref, ledger.Receipt("OR-214", 11, ts=TS), tolerance=0.10).received == 11


def test_receiving_errors(store):
    with transaction(store) as s:
        [po] = create_orders(s, [draft(("OR-214", 50, None))], created=DAY)
    with pytest.raises(InventoryError) as err, transaction(store) as s:
        receive_against_order(s, "PO-2026-0002", ledger.Receipt("OR-214", 1))
    assert err.value.lines() == ["unknown purchase order 'PO-2026-0002'",
                                 f"hint: did you mean {po.ref}?"]
    with pytest.raises(InventoryError) as err, transaction(store) as s:
        receive_against_order(s, po.ref, ledger.Receipt("WP-32", 1))
    assert str(err.value) == f"{po.ref} has no line for WP-32"
    assert err.value.hint == "its lines: OR-214"
    with Session(store) as s:
        assert s.exec(select(PurchaseOrderLine)).one().received_qty == 0
        assert ledger.on_hand(s) == []


def test_plan_reads_open_orders_and_usable_stock(store):
    # the planning use case on each backend: quantities still due on open orders count as
    # on order; a lot past its ISO 2230 period (AU, group A: 5 years from the end of
    # 2019Q1, REFERENCE.md 5) is not counted as on hand
    from inventory.ordering.service import PlanSpec, make_plan

    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt(
            "WP-32", 3, "6.50", lot="OLD", cured="2019Q1", location="BENCH",
            ts=datetime(2025, 1, 5, 12, tzinfo=UTC)))
        for i in range(18):
            y, m = 2025 + (6 + i) // 12, (6 + i) % 12 + 1
            ts = datetime(y, m, 3, 12, tzinfo=UTC)
            ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25", cured="2025Q1", ts=ts))
            ledger.issue(s, ledger.Issue("OR-214", 5, ts=ts.replace(day=20), reference=f"J{i}"))
        [po] = create_orders(s, [draft(("OR-214", 40, None))], created=DAY)
        receive_against_order(s, po.ref, ledger.Receipt("OR-214", 15, ts=TS))
    with Session(store) as s:
        plan = make_plan(s, PlanSpec(DAY))
    by = {ln.part: ln for ln in plan.lines}
    assert by["OR-214"].on_order == 25 and by["OR-214"].on_hand == 15
    assert by["WP-32"].expired == 3 and by["WP-32"].on_hand == 0
