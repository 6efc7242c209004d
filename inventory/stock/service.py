"""Stock use cases for the faces (command line, web): book and read stock through the
ledger, each call in the caller's transaction."""

from __future__ import annotations

from datetime import datetime
from decimal import Decimal
from typing import Any

from sqlmodel import Session, col, select

from inventory.core.tables import Location, Movement
from inventory.stock import balances, ledger
from inventory.stock.balances import StockLine
from inventory.stock.bookings import DEFAULT_LOCATION, Adjustment, Count, Issue, Receipt

__all__ = ["DEFAULT_LOCATION", "Adjustment", "Count", "Issue", "Receipt", "StockLine", "adjust",
           "book_adjustment", "book_count", "book_issue", "book_move", "book_receipt", "count",
           "issue", "locations", "move", "on_hand", "receive"]


def on_hand(session: Session, *, part: str | None = None, location: str | None = None,
            by_lot: bool = False, as_of: datetime | None = None) -> list[StockLine]:
    return balances.on_hand(session, part=part, location=location, by_lot=by_lot, as_of=as_of)


def locations(session: Session) -> list[str]:
    return list(session.exec(select(Location.code).order_by(Location.code)))


def issue(session: Session, part: str, qty: int, *, location: str | None = None,
          reference: str | None = None) -> int:
    """Take ``qty`` out (oldest cure first); returns the units taken."""
    return -sum(m.qty for m in ledger.issue(session, Issue(part, qty, location=location,
                                                           reference=reference)))


def receive(session: Session, part: str, qty: int, *, unit_cost: Decimal | None = None,
            cured: str | None = None, location: str = DEFAULT_LOCATION) -> str:
    """Book a delivery outside any purchase order; returns a one-line summary (against an
    order: :func:`inventory.ordering.service.receive_order`)."""
    ledger.receive(session, Receipt(part, qty, unit_cost, cured=cured, location=location))
    return f"received {qty} x {part} into {location}"


def adjust(session: Session, part: str, qty: int, *, reason: str,
           location: str = DEFAULT_LOCATION) -> int:
    return sum(m.qty for m in ledger.adjust(session, Adjustment(part, qty, reason,
                                                                location=location)))


def count(session: Session, part: str, counted: int, *,
          location: str = DEFAULT_LOCATION) -> int:
    """Book a shelf count; returns the variance booked (0 when the count agrees)."""
    return sum(m.qty for m in ledger.count(session, Count(part, counted, location=location)))


def move(session: Session, part: str, qty: int, *, from_location: str,
         to_location: str) -> int:
    ledger.move(session, part, qty, from_location=from_location, to_location=to_location)
    return qty


# -- bookings for the command line and the demo: the ledger's own calls with its booking
# records (inventory.stock.bookings), returning the movements written (the command line
# prints their lot and movement ids).


def book_receipt(session: Session, receipt: Receipt) -> Movement:
    """:func:`inventory.stock.ledger.receive`."""
    return ledger.receive(session, receipt)


def book_issue(session: Session, issue: Issue) -> tuple[list[Movement], list[str]]:
    """:func:`inventory.stock.ledger.issue`, with the allocation's notes (lots skipped past
    their storage limit, extensions recorded) for the person at the counter."""
    from inventory.stock import allocation

    moves = ledger.issue(session, issue)
    return list(moves), list(allocation.notes(session))


def book_adjustment(session: Session, adjustment: Adjustment) -> list[Movement]:
    """:func:`inventory.stock.ledger.adjust`."""
    return list(ledger.adjust(session, adjustment))


def book_count(session: Session, count: Count) -> list[Movement]:
    """:func:`inventory.stock.ledger.count` (no movement when the count agrees)."""
    return list(ledger.count(session, count))


def book_move(session: Session, part: str, qty: int, *, from_location: str, to_location: str,
              ts: datetime | None = None, user: str | None = None) -> list[Movement]:
    """:func:`inventory.stock.ledger.move` (two movements per lot moved)."""
    return list(ledger.move(session, part, qty, from_location=from_location,
                            to_location=to_location, ts=ts, user=user))


def reverse(session: Session, movement: int, *, reason: str, ts: datetime | None = None,
            user: str | None = None) -> Movement:
    """:func:`inventory.stock.returns.reverse`: a new movement undoing one booked by mistake."""
    from inventory.stock import returns

    return returns.reverse(session, movement, reason=reason, ts=ts, user=user)


def return_from_job(session: Session, job: str, part: str, qty: int, *,
                    ts: datetime | None = None, user: str | None = None) -> Any:
    """:func:`inventory.stock.returns.return_from_job` (its result has ``movements`` and
    ``note``)."""
    from inventory.stock import returns

    return returns.return_from_job(session, job, part, qty, ts=ts, user=user)


def void_job(session: Session, job: str, *, reason: str, ts: datetime | None = None,
             user: str | None = None) -> Any:
    """:func:`inventory.stock.returns.void_job` (its result has ``movements`` and ``note``)."""
    from inventory.stock import returns

    return returns.void_job(session, job, reason=reason, ts=ts, user=user)


def storage_limits(session: Session, lines: list[StockLine], *,
                   on: Any = None) -> list[tuple[Any, bool]]:
    """For each by-lot line: the last day its lot may be fitted under ISO 2230 (the lot's
    inspected extension when it has one; None for plastics, metals and lots without a cure
    quarter) and whether that day is past on ``on`` (default today)."""
    from datetime import date

    from inventory.bench.seals import storage_limit
    from inventory.core.tables import Lot, Part

    on = on or date.today()
    codes = sorted({ln.part for ln in lines})
    material = {c: m for c, m in session.exec(
        select(Part.code, Part.material).where(col(Part.code).in_(codes)))}
    extended = {(p, lot): until for p, lot, until in session.exec(
        select(Part.code, Lot.code, Lot.extended_until).join(Part, Part.id == Lot.part_id)
        .where(col(Part.code).in_(codes), col(Lot.extended_until).is_not(None)))}
    out: list[tuple[Any, bool]] = []
    for ln in lines:
        limit = extended.get((ln.part, ln.lot))
        if limit is None and ln.cured and material.get(ln.part):
            try:
                limit = storage_limit(ln.cured, material[ln.part])
            except ValueError:
                limit = None
        out.append((limit, limit is not None and on > limit))
    return out
