"""The stock ledger: receipts, issues, adjustments, counts and moves.

Stock on hand is the sum of an append-only list of movements; nothing is edited or deleted,
a correction is a new movement. Each function writes its movements and updates the cached
balance rows in the caller's transaction (``inventory.core.db.transaction``), so a failure
anywhere leaves the database as it was. Taking stock locks the balance rows it reads
(``FOR UPDATE`` on PostgreSQL; SQLite transactions begin ``IMMEDIATE``), and the database
itself refuses a negative balance, so two people issuing the last unit at once cannot both
succeed.

Stock is taken oldest cure quarter first; lots without a cure quarter (oil, metal and plastic
parts) after those, by receipt date, then by lot id.
"""

from __future__ import annotations

import getpass
import os
from dataclasses import dataclass
from datetime import UTC, date, datetime
from decimal import Decimal

from sqlalchemy import case, func, insert, text, update
from sqlalchemy.dialects.postgresql import insert as pg_insert
from sqlalchemy.dialects.sqlite import insert as sqlite_insert
from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.cure import parse_quarter, quarter_start
from inventory.core.db import retry_deadlocks
from inventory.core.errors import InventoryError
from inventory.core.tables import Location, Lot, Movement, Part, StockBalance, SupplierItem
from inventory.stock import allocation, months, timeline
from inventory.stock.balances import StockLine, on_hand, on_hand_at, verify_balances
from inventory.stock.bookings import DEFAULT_LOCATION, Adjustment, Count, Issue, Receipt, Stamp

# The reads and the booking records live in their own modules; the ledger's callers may
# keep naming them here.
__all__ = ["DEFAULT_LOCATION", "Adjustment", "Count", "Issue", "Receipt", "Stamp", "StockLine",
           "adjust", "count", "current_user", "fifo_order", "issue", "lock_part_lots", "move",
           "on_hand", "on_hand_at", "receive", "verify_balances"]


def current_user() -> str:
    """The person signed in to the web app for this request, else ``$INVENTORY_USER``, else
    the operating-system login."""
    from inventory.core.actor import acting_person

    try:
        return acting_person() or os.environ.get("INVENTORY_USER") or getpass.getuser()
    except Exception:
        return "unknown"


def _now() -> datetime:
    return datetime.now(UTC)


def _positive(qty: int, what: str = "quantity") -> int:
    if isinstance(qty, bool) or not isinstance(qty, int):
        raise InventoryError(f"{what} must be a whole number, got {qty!r}")
    if qty <= 0:
        raise InventoryError(f"{what} must be more than 0, got {qty}")
    return qty


def _bump_balance(session: Session, part_id: int, location_id: int, lot_id: int, qty: int) -> None:
    """Add ``qty`` to a balance row: a decrement updates the existing row (the database's
    check refuses to take it below zero); an increment creates the row when absent."""
    if qty < 0:
        bal = StockBalance.__table__
        done = session.execute(
            update(bal).where(bal.c.part_id == part_id, bal.c.location_id == location_id,
                              bal.c.lot_id == lot_id).values(qty=bal.c.qty + qty)
        )
        if done.rowcount != 1:
            raise InventoryError("no stock in that lot to take from", kind="shortage")
        return
    values = dict(part_id=part_id, location_id=location_id, lot_id=lot_id, qty=qty)
    dialect = session.get_bind().dialect.name
    ins = pg_insert if dialect == "postgresql" else sqlite_insert
    stmt = ins(StockBalance).values(**values)
    stmt = stmt.on_conflict_do_update(
        index_elements=["part_id", "location_id", "lot_id"],
        set_={"qty": StockBalance.__table__.c.qty + stmt.excluded.qty},
    )
    session.execute(stmt)


def _record(session: Session, where: tuple[Part, Location, Lot], qty: int, kind: str,
            stamp: Stamp) -> Movement:
    """Write one movement of ``qty`` (signed) of a part at a location in a lot."""
    part, location, lot = where
    values = dict(
        ts=stamp.ts or _now(), part_id=part.id, location_id=location.id, lot_id=lot.id,
        qty=qty, kind=kind, unit_cost=lot.unit_cost, reference=stamp.reference,
        reason=stamp.reason, user=stamp.user or current_user(), batch_id=stamp.batch_id,
        reverses_id=stamp.reverses_id,
    )
    months.refuse_if_closed(session, values["ts"])
    # A Core insert: the ledger is append-only, so the ORM's change tracking buys nothing.
    new_id = session.execute(insert(Movement).values(**values).returning(Movement.id)).scalar_one()
    _bump_balance(session, part.id, location.id, lot.id, qty)
    return Movement(id=new_id, **values)


#: First key of PostgreSQL's two-key advisory locks taken here (the second is a part id):
#: creating a lot of a part is serialised per part, so generated codes never collide.
LOT_LOCK_CLASS = 72_011


def lock_part_lots(session: Session, part: Part) -> None:
    """Hold, until the transaction ends, the right to create lots of ``part``. PostgreSQL:
    a transaction-level advisory lock (waits at most the lock timeout); SQLite: nothing to
    do, every write transaction already holds the database (``BEGIN IMMEDIATE``)."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(text("SELECT pg_advisory_xact_lock(:k, :p)"),
                        {"k": LOT_LOCK_CLASS, "p": part.id})


def _next_lot_code(session: Session, part: Part, received: date) -> str:
    """``YYYYMMDD-n``: one past the highest ``n`` of that day's codes of the part, so a
    manual code such as ``20261204-2`` is stepped over rather than collided with. Call
    with :func:`lock_part_lots` held."""
    stem = received.strftime("%Y%m%d")
    top = 0
    for (code,) in session.execute(
            select(Lot.code).where(Lot.part_id == part.id, Lot.code.like(f"{stem}-%"))):
        tail = code[len(stem) + 1:]
        if tail.isascii() and tail.isdigit():
            top = max(top, int(tail))
    return f"{stem}-{top + 1}"


def fifo_order():
    """ORDER BY terms: oldest cure quarter first, then lots without one by receipt date."""
    return (case((Lot.cured.is_(None), 1), else_=0), Lot.cured, Lot.received, Lot.id)


@dataclass(frozen=True, slots=True)
class Take:
    balance_id: int
    location: Location
    lot: Lot
    qty: int


def _available(session: Session, part: Part, location: Location | None, *, lock: bool):
    q = (
        select(StockBalance, Lot, Location)
        .join(Lot, Lot.id == StockBalance.lot_id)
        .join(Location, Location.id == StockBalance.location_id)
        .where(StockBalance.part_id == part.id, StockBalance.qty > 0)
    )
    if location is not None:
        q = q.where(StockBalance.location_id == location.id)
    q = q.order_by(*fifo_order())
    if lock and session.get_bind().dialect.name == "postgresql":
        # Lock first, in one global order (part, lot, location) and whatever the quantity,
        # so two writers never hold each other's rows (taking the locks in FIFO order over
        # rows filtered by a snapshot's quantities could cross). Then read the locked rows'
        # current values in FIFO order.
        key = select(StockBalance.id).where(StockBalance.part_id == part.id)
        if location is not None:
            key = key.where(StockBalance.location_id == location.id)
        session.execute(key.order_by(StockBalance.part_id, StockBalance.lot_id,
                                     StockBalance.location_id).with_for_update())
        q = q.execution_options(populate_existing=True)
    return list(session.exec(q))


def _allocate(session: Session, part: Part, qty: int, location: Location | None, *,
              ts: datetime | None = None, skip_expired: bool = False,
              inspected: bool = False) -> list[Take]:
    """Lots to take ``qty`` from on the booking's day, in time order (see
    :mod:`inventory.stock.allocation`, the one allocation path)."""
    rows = _available(session, part, location, lock=True)
    want = allocation.Want(part, qty, location, timeline.day_of(ts or _now()),
                           skip_expired=skip_expired, inspected=inspected)
    picks = allocation.pick(session, want, rows)
    return [Take(p.balance.id, p.location, p.lot, p.qty) for p in picks]


@retry_deadlocks
def receive(session: Session, r: Receipt) -> Movement:
    """Book ``r.qty`` units into a lot (an existing lot code adds to it) at ``r.location``."""
    qty, unit_cost, lot, cured, supplier = r.qty, r.unit_cost, r.lot, r.cured, r.supplier
    _positive(qty)
    part = lookup.part(session, r.part)
    loc = lookup.location(session, r.location)
    try:
        cure = parse_quarter(cured) if cured else None
    except ValueError as exc:
        raise InventoryError(str(exc)) from None
    ts = r.ts or _now()
    received = r.received or ts.date()
    if cure and quarter_start(cure) > received:
        raise InventoryError(
            f"cure quarter {cure} of {part.code} starts after the receipt date "
            f"{received.isoformat()}: rubber cannot arrive before it is cured",
            hint="check the cure date on the bag (e.g. 2026Q3 or 3/26)")
    sup = lookup.supplier(session, supplier) if supplier else None
    lock_part_lots(session, part)
    row = None
    if lot:
        row = session.exec(select(Lot).where(Lot.part_id == part.id, Lot.code == lot)).first()
        if row is not None and cure and row.cured and row.cured != cure:
            raise InventoryError(
                f"lot {lot} of {part.code} was cured {row.cured}, not {cure}",
                kind="conflict", hint="give the delivery its own lot code",
            )
    if row is None:
        cost = _cost(session, part, unit_cost)
        row = Lot(part_id=part.id, code=lot or _next_lot_code(session, part, received),
                  cured=cure, received=received, unit_cost=cost,
                  supplier_id=sup.id if sup else None)
        session.add(row)
        session.flush()
    elif unit_cost is not None and Decimal(str(unit_cost)) != row.unit_cost:
        raise InventoryError(
            f"lot {row.code} of {part.code} is costed at {row.unit_cost}, not {unit_cost}",
            kind="conflict", hint="a delivery at another cost needs its own lot code",
        )
    return _record(session, (part, loc, row), qty, "receipt",
                   Stamp(ts=ts, user=r.user, reference=r.reference, batch_id=r.batch_id))


def _cost(session: Session, part: Part, unit_cost) -> Decimal:
    if unit_cost is not None:
        try:
            cost = Decimal(str(unit_cost))
        except Exception as exc:
            raise InventoryError(f"unit cost must be a number, got {unit_cost!r}") from exc
        if not cost.is_finite() or cost < 0:
            raise InventoryError(f"unit cost must be 0 or more, got {unit_cost}")
        return cost
    last = session.exec(
        select(Lot.unit_cost).where(Lot.part_id == part.id).order_by(Lot.received.desc(), Lot.id.desc())
    ).first()
    if last is not None:
        return last
    item = session.exec(
        select(SupplierItem.unit_cost).where(SupplierItem.part_id == part.id)
        .order_by(SupplierItem.unit_cost)
    ).first()
    if item is not None:
        return item
    raise InventoryError(f"no cost known for {part.code}", hint="give --cost")


@retry_deadlocks
def issue(session: Session, i: Issue) -> list[Movement]:
    """Take ``i.qty`` units out, oldest cure quarter first, from what was on hand on the
    booking's day without taking any later balance below zero; all or nothing. An issue
    skips lots past their ISO 2230 storage limit unless ``i.inspected`` (which records the
    extension on the lot it uses)."""
    return _take(session, i, "issue")


def _take(session: Session, i: Issue, kind: str) -> list[Movement]:
    """:func:`issue` booked as ``kind`` (issue, adjust or count: only issues skip lots past
    their storage limit)."""
    _positive(i.qty)
    part = lookup.part(session, i.part)
    loc = lookup.location(session, i.location) if i.location else None
    ts = i.ts or _now()
    months.refuse_if_closed(session, ts)
    stamp = Stamp(ts=ts, user=i.user, reference=i.reference, reason=i.reason,
                  batch_id=i.batch_id)
    return [
        _record(session, (part, t.location, t.lot), -t.qty, kind, stamp)
        for t in _allocate(session, part, i.qty, loc, ts=ts, skip_expired=kind == "issue",
                           inspected=i.inspected)
    ]


def _add_to_newest_lot(session: Session, where: tuple[Part, Location], qty: int, kind: str,
                       stamp: Stamp, unit_cost: Decimal | str | None) -> Movement:
    """Book ``qty`` into the part's newest lot, or into a new lot at ``unit_cost``."""
    part, loc = where
    lot = session.exec(
        select(Lot).where(Lot.part_id == part.id).order_by(Lot.received.desc(), Lot.id.desc())
    ).first()
    if lot is None or unit_cost is not None:
        lock_part_lots(session, part)
        day = (stamp.ts or _now()).date()
        lot = Lot(part_id=part.id, code=_next_lot_code(session, part, day), cured=None,
                  received=day, unit_cost=_cost(session, part, unit_cost))
        session.add(lot)
        session.flush()
    return _record(session, (part, loc, lot), qty, kind, stamp)


@retry_deadlocks
def adjust(session: Session, a: Adjustment) -> list[Movement]:
    """A signed correction with a reason. Out: oldest cure first. In: to the newest lot
    (or a new lot at ``a.unit_cost``)."""
    qty, reason = a.qty, a.reason
    if isinstance(qty, bool) or not isinstance(qty, int) or qty == 0:
        raise InventoryError(f"adjustment must be a whole number other than 0, got {qty!r}")
    if not reason or not reason.strip():
        raise InventoryError("an adjustment needs a reason", hint="add --reason TEXT")
    part = lookup.part(session, a.part)
    loc = lookup.location(session, a.location)
    if qty < 0:
        return _take(session, Issue(part.code, -qty, location=loc.code, ts=a.ts, user=a.user,
                                    reason=reason), "adjust")
    return [_add_to_newest_lot(session, (part, loc), qty, "adjust",
                               Stamp(ts=a.ts, user=a.user, reason=reason), a.unit_cost)]


@retry_deadlocks
def count(session: Session, c: Count) -> list[Movement]:
    """Record a shelf count; the variance against the ledger becomes a ``count`` movement.
    A matching count writes nothing and returns no movement."""
    counted = c.counted
    if isinstance(counted, bool) or not isinstance(counted, int) or counted < 0:
        raise InventoryError(f"counted quantity must be a whole number, 0 or more, got {counted!r}")
    part = lookup.part(session, c.part)
    loc = lookup.location(session, c.location)
    _available(session, part, loc, lock=True)
    ts = c.ts or _now()
    months.refuse_if_closed(session, ts)
    have = int(session.exec(  # on hand at the end of the count's day, from the ledger
        select(func.coalesce(func.sum(Movement.qty), 0)).where(
            Movement.part_id == part.id, Movement.location_id == loc.id,
            Movement.ts < timeline.day_end(timeline.day_of(ts)))).one())
    variance = counted - have
    reason = f"counted {counted}, ledger {have}"
    if variance == 0:
        return []
    if variance < 0:
        return _take(session, Issue(part.code, -variance, location=loc.code, ts=ts, user=c.user,
                                    reason=reason, reference=c.reference,
                                    batch_id=c.batch_id), "count")
    return [_add_to_newest_lot(session, (part, loc), variance, "count",
                               Stamp(ts=ts, user=c.user, reason=reason, reference=c.reference,
                                     batch_id=c.batch_id), None)]


@retry_deadlocks
def move(session: Session, part_code: str, qty: int, *, from_location: str, to_location: str,
         ts: datetime | None = None, user: str | None = None) -> list[Movement]:
    """Move units between locations, keeping their lots (oldest cure first)."""
    _positive(qty)
    part = lookup.part(session, part_code)
    src = lookup.location(session, from_location)
    dst = lookup.location(session, to_location)
    if src.id == dst.id:
        raise InventoryError(f"--from and --to are both {src.code}")
    ts = ts or _now()
    out: list[Movement] = []
    months.refuse_if_closed(session, ts)
    for t in _allocate(session, part, qty, src, ts=ts):
        out.append(_record(session, (part, src, t.lot), -t.qty, "move",
                           Stamp(ts=ts, user=user, reason=f"to {dst.code}")))
        out.append(_record(session, (part, dst, t.lot), t.qty, "move",
                           Stamp(ts=ts, user=user, reason=f"from {src.code}")))
    return out
