"""The one stock allocation path: which lots a booking dated D takes from, oldest cure first.

Both the counter (:func:`inventory.stock.ledger.issue` and friends) and the bulk job writer
(:class:`inventory.history.bulk_jobs.StockBook`) hand their candidate lots, already in FIFO order,
to :func:`fifo_take`; the ledger first narrows each lot to what may be taken on day D
(:mod:`inventory.stock.timeline`) and, for issues, sets aside lots past their ISO 2230
storage limit (:mod:`inventory.stock.shelf_life`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from typing import TypeVar

from sqlmodel import Session

from inventory.core.errors import InventoryError
from inventory.core.tables import Location, Lot, Part, StockBalance
from inventory.stock import shelf_life, timeline

K = TypeVar("K")

SHORT_HINT = "receive stock first, or record a count if the shelf holds more than the ledger"


def fifo_take(candidates: Sequence[tuple[K, int]], qty: int) -> list[tuple[K, int]] | None:
    """Take ``qty`` from ``candidates`` (key, available) in their order; ``None`` when they
    hold less than ``qty`` (all or nothing)."""
    if sum(n for _, n in candidates if n > 0) < qty:
        return None
    out, left = [], qty
    for key, n in candidates:
        if left == 0:
            break
        n = min(n, left)
        if n > 0:
            out.append((key, n))
            left -= n
    return out


@dataclass(frozen=True, slots=True)
class Pick:
    balance: StockBalance
    lot: Lot
    location: Location
    qty: int


def _notes(session: Session) -> list[str]:
    return session.info.setdefault("stock_notes", [])


def notes(session: Session) -> list[str]:
    """What the ledger said while booking in this session (skipped lots, extensions)."""
    return list(session.info.get("stock_notes", []))


@dataclass(frozen=True, slots=True)
class Want:
    """Take ``qty`` of ``part`` on ``day`` (only at ``location`` if given); ``skip_expired``
    sets aside lots past their ISO 2230 storage limit unless ``inspected``."""

    part: Part
    qty: int
    location: Location | None
    day: date
    skip_expired: bool = False
    inspected: bool = False


def pick(session: Session, want: Want,
         rows: list[tuple[StockBalance, Lot, Location]]) -> list[Pick]:
    """Choose lots for taking ``want.qty`` of ``want.part`` on ``want.day`` from ``rows``
    (the part's balances above zero, locked, in FIFO order). Raises a one-line shortage
    naming the part, the day, the lots and what they held then."""
    part, qty, location, day = want.part, want.qty, want.location, want.day
    skip_expired, inspected = want.skip_expired, want.inspected
    balances = {(b.location_id, b.lot_id): b.qty for b, _, _ in rows}
    later = timeline.later_movements(session, part.id, day,
                                     location_id=location.id if location else None)
    win = timeline.window(balances, later, day) if later else {
        k: timeline.Slot(n, n, None) for k, n in balances.items()}
    cands, expired, inspect = [], [], {}
    for bal, lot, loc in rows:
        slot = win[(loc.id, lot.id)]
        if skip_expired:
            st = shelf_life.state(lot, part.material, day)
            if st.past:
                if not (inspected and st.extendable):
                    expired.append((lot, st, slot.free))
                    continue
                inspect[lot.id] = st
        cands.append(((bal, lot, loc), slot.free))
    got = fifo_take(cands, qty)
    if got is not None:
        for lot, st, free in expired:
            if free > 0:
                _notes(session).append(
                    f"skipped lot {lot.code} of {part.code} (cured {lot.cured}): past its "
                    f"ISO 2230 storage limit {st.limit}")
        for (_, lot, _), _n in got:
            st = inspect.get(lot.id)
            if st is not None and lot.extended_until is None:
                shelf_life.extend(session, lot, part, st)
                _notes(session).append(
                    f"lot {lot.code} of {part.code} (cured {lot.cured}) is past its ISO 2230 "
                    f"storage limit {st.limit}: used after inspection, extension to "
                    f"{st.extended_limit} recorded")
        return [Pick(b, lot, loc, n) for (b, lot, loc), n in got]
    codes = {lot.id: lot.code for _, lot, _ in rows}
    missing = [lot_id for _, lot_id in win if lot_id not in codes]
    if missing:  # lots empty today that held stock on the day
        from sqlalchemy import select

        codes.update(session.execute(select(Lot.id, Lot.code).where(Lot.id.in_(missing))).all())
    raise _shortage(want, rows, win, expired, dated=bool(later), codes=codes)


def _shortage(want: Want, rows, win, expired, *, dated, codes) -> InventoryError:
    part, qty, location, day = want.part, want.qty, want.location, want.day
    where = f" at {location.code}" if location is not None else ""
    if not dated and not expired:  # nothing booked after the day: today's shelf is the answer
        have = sum(b.qty for b, _, _ in rows)
        return InventoryError(f"not enough stock of {part.code}{where}: asked {qty}, "
                              f"on hand {have}", kind="shortage", hint=SHORT_HINT)
    at_day = sum(max(s.at_day, 0) for s in win.values())
    usable = sum(s.free for (b, lot, loc), s in
                 ((r, win[(r[2].id, r[1].id)]) for r in rows)
                 if lot.id not in {e[0].id for e in expired})
    head = f"not enough stock of {part.code}{where} on {day.isoformat()}: asked {qty}"
    if expired and at_day >= qty:
        lot, state, _ = expired[0]
        extra = "" if state.extendable else " and beyond its extension"
        return InventoryError(
            f"{head}, usable {usable}; lot {lot.code} (cured {lot.cured}) is past its ISO 2230 "
            f"storage limit {state.limit}{extra}", kind="shortage",
            hint="inspect the lot and issue with --inspected to record the extension, "
                 "or receive fresh stock" if state.extendable else "scrap it with an adjustment")
    lots = sorted(((codes.get(lot_id, str(lot_id)), s) for (_, lot_id), s in win.items()),
                  key=lambda cs: cs[0])
    if at_day >= qty:
        code, s = min(((c, s) for c, s in lots if s.low_day is not None),
                      key=lambda cs: cs[1].free, default=lots[0] if lots else ("?", None))
        return InventoryError(
            f"{head}, on hand then {at_day}, free {usable}: later bookings take the rest "
            f"(lot {code} held {s.at_day} then and falls to {s.free} on {s.low_day})",
            kind="shortage", hint="book it on a later date, or reverse the later booking first")
    held = ", ".join(f"lot {c} held {max(s.at_day, 0)}" for c, s in lots[:3]) or "no lots"
    return InventoryError(f"{head}, on hand then {at_day} ({held})", kind="shortage",
                          hint=SHORT_HINT)


def free_on(session: Session, part: Part, day: date) -> int:
    """Units of ``part`` a booking dated ``day`` could take (all locations and lots)."""
    from sqlalchemy import select

    balances = {(loc, lot): int(n) for loc, lot, n in session.execute(
        select(StockBalance.location_id, StockBalance.lot_id, StockBalance.qty)
        .where(StockBalance.part_id == part.id, StockBalance.qty > 0))}
    later = timeline.later_movements(session, part.id, day)
    if not later:
        return sum(balances.values())
    return sum(s.free for k, s in timeline.window(balances, later, day).items() if k in balances)


def check_lot(session: Session, part: Part, location: Location, lot: Lot, qty: int,
              day: date) -> None:
    """Refuse taking ``qty`` from one named lot and location on ``day`` when the lot did not
    hold it then or a later day's balance would go below zero."""
    from sqlalchemy import select

    q = select(StockBalance.qty).where(StockBalance.part_id == part.id,
                                       StockBalance.location_id == location.id,
                                       StockBalance.lot_id == lot.id)
    if session.get_bind().dialect.name == "postgresql":
        q = q.with_for_update()
    bal = session.execute(q).scalar() or 0
    later = timeline.later_movements(session, part.id, day, location_id=location.id)
    later = [m for m in later if m[2] == lot.id]
    slot = timeline.window({(location.id, lot.id): int(bal)}, later, day)[(location.id, lot.id)]
    if slot.free >= qty:
        return
    tail = (f", and later bookings leave {slot.free} free (it falls to that on {slot.low_day})"
            if slot.low_day is not None and slot.at_day >= qty else "")
    raise InventoryError(
        f"not enough stock of {part.code} in lot {lot.code} at {location.code} on "
        f"{day.isoformat()}: asked {qty}, the lot held {max(slot.at_day, 0)} then{tail}",
        kind="shortage", hint="book it on a later date, or correct the later booking first")
