"""The stock of every part loaded once and allocated in memory in the ledger's order, for
the many-jobs writer (:mod:`inventory.history.bulk_jobs`) and the history import."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime
from decimal import Decimal

from sqlmodel import Session, select

from inventory.core.errors import InventoryError
from inventory.core.tables import Lot, Movement, StockBalance
from inventory.history.bulk_write import bulk_insert
from inventory.stock import allocation, ledger, shelf_life, timeline


@dataclass(frozen=True, slots=True)
class PartRef:
    """A part as the bulk paths know it: id, code, kind and material."""

    id: int
    code: str
    kind: str
    material: str | None = None


@dataclass(slots=True)
class _Slot:
    balance_id: int
    location_id: int
    lot_id: int
    unit_cost: Decimal
    qty: int
    cured: str | None = None  # the lot's, for its ISO 2230 storage limit
    extended_until: date | None = None


@dataclass
class StockBook:
    """Every balance of stock, loaded once, allocated in memory in the ledger's order.

    With ``write=False`` it only simulates (a preview); with ``write=True`` the movements and
    balance changes it books are written by :meth:`flush` (called by the writer at the end,
    and before any other ledger call so that call sees them).
    """

    session: Session
    write: bool = True
    user: str | None = None
    slots: dict[int, list[_Slot]] = field(default_factory=dict)
    pending: list[dict] = field(default_factory=list)
    deltas: dict[int, int] = field(default_factory=dict)
    booked: int = 0  # movements booked (written or, when simulating, that would be)
    # per part: (the day it was read from, the part's movements booked after that day)
    later: dict[int, tuple[date, list]] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.user = self.user or ledger.current_user()
        self._load(None)

    def _query(self, part_id: int | None):
        q = (select(StockBalance.part_id, StockBalance.id, StockBalance.location_id,
                    StockBalance.lot_id, StockBalance.qty, Lot.unit_cost, Lot.cured,
                    Lot.extended_until)
             .join(Lot, Lot.id == StockBalance.lot_id)
             .where(StockBalance.qty > 0))
        if part_id is not None:
            q = q.where(StockBalance.part_id == part_id)
        q = q.order_by(StockBalance.part_id, *ledger.fifo_order(), StockBalance.id)
        if self.session.get_bind().dialect.name == "postgresql":
            # Lock in the ledger's one global order (part, lot, location) first, so a bulk
            # booking beside a counter's never holds rows the other waits for in reverse;
            # then read the current values in FIFO order.
            key = select(StockBalance.id)
            if part_id is not None:
                key = key.where(StockBalance.part_id == part_id)
            self.session.execute(key.order_by(StockBalance.part_id, StockBalance.lot_id,
                                              StockBalance.location_id).with_for_update())
        return self.session.exec(q)

    def _load(self, part_id: int | None) -> None:
        if part_id is None:
            self.slots = {}
        else:
            self.slots[part_id] = []
        for pid, bid, loc, lot, qty, cost, cured, ext in self._query(part_id):
            self.slots.setdefault(pid, []).append(_Slot(bid, loc, lot, cost, qty, cured, ext))

    def reload(self, part_id: int) -> None:
        """Read one part's balances again (after a ledger call changed them)."""
        self.flush()
        self._load(part_id)
        self.later.pop(part_id, None)

    def on_hand(self, part_id: int) -> int:
        return sum(s.qty for s in self.slots.get(part_id, ()))

    def _later(self, part_id: int, day: date) -> list:
        got = self.later.get(part_id)
        if got is None or got[0] > day:
            got = (day, timeline.later_movements(self.session, part_id, day))
            self.later[part_id] = got
        return [m for m in got[1] if timeline.day_of(m[0]) > day]

    def free(self, part_id: int, day: date) -> list[tuple[_Slot, int]]:
        """Each slot of the part with what a booking dated ``day`` may take from it (the
        ledger's time-order rule: no later day's balance may go below zero)."""
        slots = self.slots.get(part_id, [])
        later = self._later(part_id, day)
        if not later:
            return [(s, s.qty) for s in slots]
        win = timeline.window({(s.location_id, s.lot_id): s.qty for s in slots}, later, day)
        return [(s, win[(s.location_id, s.lot_id)].free) for s in slots]

    def free_total(self, part_id: int, day: date) -> int:
        return sum(n for _, n in self.free(part_id, day))

    def take(self, part: PartRef, qty: int, *, reference: str | None, ts: datetime,
             batch_id: int | None = None, kind: str = "issue") -> None:
        """Take ``qty`` of ``part``, oldest cure first; all or nothing."""
        slots = self.slots.get(part.id, [])
        if qty <= 0:
            raise InventoryError(f"quantity of {part.code} must be more than 0, got {qty}")
        day = timeline.day_of(ts)
        cands = self.free(part.id, day)
        if kind == "issue":  # as the ledger: lots past their ISO 2230 storage limit are skipped
            cands = [(s, 0 if shelf_life.state(s, part.material, day).past else n)
                     for s, n in cands]
        got = allocation.fifo_take(cands, qty)  # the ledger's one allocation rule
        if got is None:
            have = sum(s.qty for s in slots)
            free = sum(n for _, n in cands)
            if free < sum(n for _, n in self.free(part.id, day)):
                raise InventoryError(
                    f"not enough stock of {part.code} on {day.isoformat()}: asked {qty}, "
                    f"usable {free}; the rest is past its ISO 2230 storage limit",
                    kind="shortage", hint="inspect the lots and book the job with --inspected "
                    "at the counter, or receive fresh stock")
            if free == have:
                raise InventoryError(
                    f"not enough stock of {part.code}: asked {qty}, on hand {have}",
                    kind="shortage", hint=allocation.SHORT_HINT)
            raise InventoryError(
                f"not enough stock of {part.code} on {day.isoformat()}: asked {qty}, free "
                f"then {free} (later bookings take the rest of {have})", kind="shortage",
                hint="book it on a later date")
        for slot, n in got:
            slot.qty -= n
            self.booked += 1
            if self.write:
                self.pending.append(dict(
                    ts=ts, part_id=part.id, location_id=slot.location_id, lot_id=slot.lot_id,
                    qty=-n, kind=kind, unit_cost=slot.unit_cost, reference=reference,
                    reason=None, user=self.user, batch_id=batch_id))
                self.deltas[slot.balance_id] = self.deltas.get(slot.balance_id, 0) - n
        self.slots[part.id] = [s for s in slots if s.qty > 0]

    def flush(self) -> None:
        """Write the movements and balance changes booked so far."""
        if not self.write or not self.pending:
            return
        bulk_insert(self.session, Movement.__table__, self.pending)
        conn = self.session.connection()
        mark = "?" if conn.dialect.paramstyle == "qmark" else "%s"
        changes = [(d, b) for b, d in self.deltas.items() if d]
        if changes:  # the database's check refuses a balance below zero
            conn.exec_driver_sql(
                f"UPDATE stock_balance SET qty = qty + {mark} WHERE id = {mark}", changes)
        self.pending = []
        self.deltas = {}
