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

DEFAULT_LOCATION = "MAIN"


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


def _record(session: Session, *, part: Part, location: Location, lot: Lot, qty: int, kind: str,
            ts: datetime | None, reference: str | None = None, reason: str | None = None,
            user: str | None = None, batch_id: int | None = None,
            reverses_id: int | None = None) -> Movement:
    values = dict(
        ts=ts or _now(), part_id=part.id, location_id=location.id, lot_id=lot.id, qty=qty,
        kind=kind, unit_cost=lot.unit_cost, reference=reference, reason=reason,
        user=user or current_user(), batch_id=batch_id, reverses_id=reverses_id,
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
    picks = allocation.pick(session, part, qty, location, rows, day=timeline.day_of(ts or _now()),
                            skip_expired=skip_expired, inspected=inspected)
    return [Take(p.balance.id, p.location, p.lot, p.qty) for p in picks]


@retry_deadlocks
def receive(session: Session, part_code: str, qty: int, unit_cost: Decimal | str | None = None, *,
            lot: str | None = None, cured: str | None = None, location: str = DEFAULT_LOCATION,
            received: date | None = None, ts: datetime | None = None,
            reference: str | None = None, supplier: str | None = None, user: str | None = None,
            batch_id: int | None = None) -> Movement:
    """Book ``qty`` units into a lot (an existing lot code adds to it) at ``location``."""
    _positive(qty)
    part = lookup.part(session, part_code)
    loc = lookup.location(session, location)
    try:
        cure = parse_quarter(cured) if cured else None
    except ValueError as exc:
        raise InventoryError(str(exc)) from None
    ts = ts or _now()
    received = received or ts.date()
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
    return _record(session, part=part, location=loc, lot=row, qty=qty, kind="receipt", ts=ts,
                   reference=reference, user=user, batch_id=batch_id)


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
def issue(session: Session, part_code: str, qty: int, *, location: str | None = None,
          reference: str | None = None, ts: datetime | None = None, user: str | None = None,
          kind: str = "issue", reason: str | None = None,
          batch_id: int | None = None, inspected: bool = False) -> list[Movement]:
    """Take ``qty`` units out, oldest cure quarter first, from what was on hand on the
    booking's day without taking any later balance below zero; all or nothing. An issue
    skips lots past their ISO 2230 storage limit unless ``inspected`` (which records the
    extension on the lot it uses)."""
    _positive(qty)
    part = lookup.part(session, part_code)
    loc = lookup.location(session, location) if location else None
    ts = ts or _now()
    months.refuse_if_closed(session, ts)
    return [
        _record(session, part=part, location=t.location, lot=t.lot, qty=-t.qty, kind=kind, ts=ts,
                reference=reference, reason=reason, user=user, batch_id=batch_id)
        for t in _allocate(session, part, qty, loc, ts=ts, skip_expired=kind == "issue",
                           inspected=inspected)
    ]


def _add_to_newest_lot(session, part, loc, qty, *, kind, ts, reason, user, unit_cost,
                       reference=None, batch_id=None) -> Movement:
    lot = session.exec(
        select(Lot).where(Lot.part_id == part.id).order_by(Lot.received.desc(), Lot.id.desc())
    ).first()
    if lot is None or unit_cost is not None:
        lock_part_lots(session, part)
        day = (ts or _now()).date()
        lot = Lot(part_id=part.id, code=_next_lot_code(session, part, day), cured=None,
                  received=day, unit_cost=_cost(session, part, unit_cost))
        session.add(lot)
        session.flush()
    return _record(session, part=part, location=loc, lot=lot, qty=qty, kind=kind, ts=ts,
                   reason=reason, user=user, reference=reference, batch_id=batch_id)


@retry_deadlocks
def adjust(session: Session, part_code: str, qty: int, *, reason: str,
           location: str = DEFAULT_LOCATION, ts: datetime | None = None,
           user: str | None = None, unit_cost=None) -> list[Movement]:
    """A signed correction with a reason. Out: oldest cure first. In: to the newest lot
    (or a new lot at ``unit_cost``)."""
    if isinstance(qty, bool) or not isinstance(qty, int) or qty == 0:
        raise InventoryError(f"adjustment must be a whole number other than 0, got {qty!r}")
    if not reason or not reason.strip():
        raise InventoryError("an adjustment needs a reason", hint="add --reason TEXT")
    part = lookup.part(session, part_code)
    loc = lookup.location(session, location)
    if qty < 0:
        return issue(session, part.code, -qty, location=loc.code, ts=ts, user=user,
                     kind="adjust", reason=reason)
    return [_add_to_newest_lot(session, part, loc, qty, kind="adjust", ts=ts, reason=reason,
                               user=user, unit_cost=unit_cost)]


def on_hand_at(session: Session, part: Part, location: Location | None = None) -> int:
    q = select(func.coalesce(func.sum(StockBalance.qty), 0)).where(StockBalance.part_id == part.id)
    if location is not None:
        q = q.where(StockBalance.location_id == location.id)
    return int(session.exec(q).one())


@retry_deadlocks
def count(session: Session, part_code: str, counted: int, *, location: str = DEFAULT_LOCATION,
          ts: datetime | None = None, user: str | None = None,
          reference: str | None = None, batch_id: int | None = None) -> list[Movement]:
    """Record a shelf count; the variance against the ledger becomes a ``count`` movement.
    A matching count writes nothing and returns no movement."""
    if isinstance(counted, bool) or not isinstance(counted, int) or counted < 0:
        raise InventoryError(f"counted quantity must be a whole number, 0 or more, got {counted!r}")
    part = lookup.part(session, part_code)
    loc = lookup.location(session, location)
    _available(session, part, loc, lock=True)
    ts = ts or _now()
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
        return issue(session, part.code, -variance, location=loc.code, ts=ts, user=user,
                     kind="count", reason=reason, reference=reference, batch_id=batch_id)
    return [_add_to_newest_lot(session, part, loc, variance, kind="count", ts=ts, reason=reason,
                               user=user, unit_cost=None, reference=reference,
                               batch_id=batch_id)]


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
        out.append(_record(session, part=part, location=src, lot=t.lot, qty=-t.qty, kind="move",
                           ts=ts, reason=f"to {dst.code}", user=user))
        out.append(_record(session, part=part, location=dst, lot=t.lot, qty=t.qty, kind="move",
                           ts=ts, reason=f"from {src.code}", user=user))
    return out


@dataclass(frozen=True, slots=True)
class StockLine:
    part: str
    location: str
    on_hand: int
    value: Decimal
    lot: str | None = None
    cured: str | None = None

    def to_dict(self) -> dict:
        d = {"part": self.part, "location": self.location, "on_hand": self.on_hand,
             "value": str(self.value)}
        if self.lot is not None:
            d.update(lot=self.lot, cured=self.cured)
        return d


def on_hand(session: Session, *, part: str | None = None, location: str | None = None,
            by_lot: bool = False, as_of: datetime | None = None) -> list[StockLine]:
    """Stock on hand summed from the ledger in SQL (not from the cached balances)."""
    qty = func.sum(Movement.qty)
    value = func.sum(Movement.qty * Movement.unit_cost)
    cols = [Part.code, Location.code]
    if by_lot:
        cols += [Lot.code, Lot.cured]
    q = (
        select(*cols, qty, value)
        .join(Part, Part.id == Movement.part_id)
        .join(Location, Location.id == Movement.location_id)
    )
    if by_lot:
        q = q.join(Lot, Lot.id == Movement.lot_id)
    if part:
        q = q.where(Movement.part_id == lookup.part(session, part).id)
    if location:
        q = q.where(Movement.location_id == lookup.location(session, location).id)
    if as_of is not None:
        q = q.where(Movement.ts <= as_of)
    q = q.group_by(*cols).having(qty != 0).order_by(*cols)
    out = []
    for row in session.exec(q):
        if by_lot:
            p, loc, lot, cured, n, v = row
        else:
            p, loc, n, v = row
            lot = cured = None
        out.append(StockLine(p, loc, int(n), Decimal(str(v or 0)).quantize(Decimal("0.01")),
                             lot, cured))
    return out


def verify_balances(session: Session) -> list[str]:
    """Differences between the cached balances and the ledger (empty when they agree)."""
    led = dict(
        ((p, loc, lot), int(n))
        for p, loc, lot, n in session.exec(
            select(Movement.part_id, Movement.location_id, Movement.lot_id, func.sum(Movement.qty))
            .group_by(Movement.part_id, Movement.location_id, Movement.lot_id)
        )
    )
    bal = {
        (b.part_id, b.location_id, b.lot_id): b.qty for b in session.exec(select(StockBalance))
    }
    problems = []
    for key in sorted(set(led) | set(bal)):
        a, b = led.get(key, 0), bal.get(key, 0)
        if a != b:
            problems.append(f"part {key[0]} location {key[1]} lot {key[2]}: ledger {a}, cached {b}")
        if a < 0:
            problems.append(f"part {key[0]} location {key[1]} lot {key[2]}: negative ledger {a}")
    return problems
