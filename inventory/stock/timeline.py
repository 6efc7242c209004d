"""Stock in time order: what a lot held on a given day, and what may still be taken from it.

The books are kept by day (UTC): a movement dated D may take from a lot and location only
what the lot held at the end of day D *and* what every later day's closing balance can give
up, so a back-dated issue can never drive a later balance below zero. Movements within one
day net out (a delivery booked in the afternoon covers a job booked for that day).

The common case, a booking dated today with nothing after it, reads no extra rows: the cached
balances already are the answer. Only a back-dated booking reads the part's later movements
(one indexed query on ``movement (part_id, ts)``).
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta

from sqlalchemy import select
from sqlmodel import Session

from inventory.core.tables import Movement


def day_of(ts: datetime) -> date:
    """The booking day of a timestamp (UTC; a naive value is taken as UTC)."""
    if ts.tzinfo is not None:
        ts = ts.astimezone(UTC)
    return ts.date()


def day_end(day: date) -> datetime:
    """The first instant after ``day`` (UTC): movements before it belong to ``day`` or earlier."""
    return datetime.combine(day + timedelta(days=1), time(0), tzinfo=UTC)


@dataclass(frozen=True, slots=True)
class Slot:
    """One lot at one location seen from day D."""

    at_day: int  # closing balance of day D
    free: int  # what may be taken on day D: the lowest closing balance from D on
    low_day: date | None  # the later day that sets ``free`` (None when it is day D itself)


def window(balances: dict[tuple[int, int], int], later: list[tuple[datetime, int, int, int]],
           day: date) -> dict[tuple[int, int], Slot]:
    """Pure core of :func:`slots`: ``balances`` are today's cached (location, lot) balances,
    ``later`` the part's movements (ts, location, lot, qty) booked after ``day``."""
    per_key: dict[tuple[int, int], dict[date, int]] = defaultdict(lambda: defaultdict(int))
    for ts, loc, lot, qty in later:
        per_key[(loc, lot)][day_of(ts)] += qty
    out: dict[tuple[int, int], Slot] = {}
    for key in set(balances) | set(per_key):
        days = per_key.get(key, {})
        at = balances.get(key, 0) - sum(days.values())
        low, low_day, run = at, None, at
        for d in sorted(days):
            run += days[d]
            if run < low:
                low, low_day = run, d
        out[key] = Slot(at, max(low, 0), low_day)
    return out


def later_movements(session: Session, part_id: int, day: date, *,
                    location_id: int | None = None) -> list[tuple[datetime, int, int, int]]:
    q = select(Movement.ts, Movement.location_id, Movement.lot_id, Movement.qty).where(
        Movement.part_id == part_id, Movement.ts >= day_end(day))
    if location_id is not None:
        q = q.where(Movement.location_id == location_id)
    return [(ts, loc, lot, int(qty)) for ts, loc, lot, qty in session.exec(q)]


def slots(session: Session, part_id: int, day: date, balances: dict[tuple[int, int], int], *,
          location_id: int | None = None) -> dict[tuple[int, int], Slot]:
    """Per (location, lot): the balance at the end of ``day`` and what may be taken then."""
    return window(balances, later_movements(session, part_id, day, location_id=location_id), day)


def lowest_balances(rows: list[tuple[int, int, datetime, int]]) -> list[tuple[int, int, date, int]]:
    """For ledger rows (location, lot, ts, qty) of one part, each (location, lot) whose
    closing balance goes below zero on some day: (location, lot, first such day, balance)."""
    per: dict[tuple[int, int], dict[date, int]] = defaultdict(lambda: defaultdict(int))
    for loc, lot, ts, qty in rows:
        per[(loc, lot)][day_of(ts)] += qty
    out = []
    for (loc, lot), days in per.items():
        run = 0
        for d in sorted(days):
            run += days[d]
            if run < 0:
                out.append((loc, lot, d, run))
                break
    return out


def ledger_start(session: Session) -> date | None:
    """The day of the ledger's first movement (``None`` for an empty ledger)."""
    from sqlalchemy import func

    first = session.execute(select(func.min(Movement.ts))).scalar()
    if first is None:
        return None
    if not isinstance(first, datetime):
        first = datetime.fromisoformat(str(first))
    return day_of(first)
