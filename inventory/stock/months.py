"""Closed months: once a manager closes a month, no movement may be dated in it.

Closing and reopening are acts recorded in ``month_close`` (who, when, why, and at a close
the snapshot of the month's report totals); a month is closed when its latest act is a
close. The ledger calls :func:`refuse_if_closed` for every movement it writes, the bulk job
writer for every batch. Computing the totals is the month-end report's business
(:mod:`inventory.monthend.closing`); this module only keeps the acts.
"""

from __future__ import annotations

import json
import re
from datetime import UTC, date, datetime

from sqlalchemy import event, select, text
from sqlalchemy.orm import Session as OrmSession
from sqlmodel import Session

from inventory.core.errors import InventoryError
from inventory.core.tables import MonthClose
from inventory.stock.timeline import day_of

_LABEL = re.compile(r"^(\d{4})-(\d{2})$")
_CACHE = "closed_months"
#: PostgreSQL advisory lock key: bookings hold it shared for their transaction, a close
#: exclusively, so a close waits for bookings in flight and bookings wait for the close.
CLOSE_LOCK = (72_012, 0)


@event.listens_for(OrmSession, "after_transaction_end")
def _forget(session, transaction) -> None:
    if transaction.parent is None:  # the closed months are read again in the next one
        session.info.pop(_CACHE, None)


def _pg(session: Session) -> bool:
    return session.get_bind().dialect.name == "postgresql"


def lock_for_close(session: Session) -> None:
    """Wait for bookings in flight and hold new ones until this transaction ends."""
    if _pg(session):
        session.execute(text("SELECT pg_advisory_xact_lock(:a, :b)"),
                        {"a": CLOSE_LOCK[0], "b": CLOSE_LOCK[1]})


def parse_month(text: str) -> str:
    """``"2026-11"`` -> ``"2026-11"``; anything else is refused in one line."""
    m = _LABEL.match(str(text).strip())
    if not m or not 1 <= int(m.group(2)) <= 12 or int(m.group(1)) < 1900:
        raise InventoryError(f"bad month {text!r}: expected a month like 2026-11")
    return m.group(0)


def label(day: date) -> str:
    return f"{day.year:04d}-{day.month:02d}"


def next_label(month: str) -> str:
    y, m = int(month[:4]), int(month[5:7])
    return f"{y + (m == 12):04d}-{m % 12 + 1:02d}"


def first_day(month: str) -> date:
    return date(int(month[:4]), int(month[5:7]), 1)


def latest_acts(session: Session) -> dict[str, MonthClose]:
    rows = session.execute(select(MonthClose).order_by(MonthClose.month, MonthClose.id)).scalars()
    out: dict[str, MonthClose] = {}
    for r in rows:
        out[r.month] = r
    return out


def closed_months(session: Session) -> frozenset[str]:
    """The closed months, read once per session (a close or reopen here refreshes it)."""
    cached = session.info.get(_CACHE)
    if cached is None:
        if _pg(session):  # SQLite: the write transaction already holds the whole database
            session.execute(text("SELECT pg_advisory_xact_lock_shared(:a, :b)"),
                            {"a": CLOSE_LOCK[0], "b": CLOSE_LOCK[1]})
        cached = frozenset(m for m, act in latest_acts(session).items() if act.action == "close")
        session.info[_CACHE] = cached
    return cached


def closed_through(session: Session) -> str | None:
    """The latest closed month: the books are closed up to its last day (a movement dated
    in an earlier month would change the closed month's opening and closing too)."""
    closed = closed_months(session)
    return max(closed) if closed else None


def first_open(session: Session) -> str | None:
    through = closed_through(session)
    return next_label(through) if through else None


def refuse_if_closed(session: Session, ts: datetime | date) -> None:
    """Raise when ``ts`` falls in the closed books, naming the first open month to use."""
    through = closed_through(session)
    if through is None:
        return
    day = ts if not isinstance(ts, datetime) else day_of(ts)
    month = label(day)
    if month <= through:
        why = "is closed" if month == through else f"is closed (the books are closed through {through})"
        raise InventoryError(
            f"{month} {why}: nothing dated {day.isoformat()} can be booked; book the "
            f"correction in {next_label(through)}, the first open month", kind="closed")


def refuse_days_if_closed(session: Session, days) -> None:
    """:func:`refuse_if_closed` for many days at once (the bulk writers)."""
    if closed_through(session) is None:
        return
    for day in sorted(set(days))[:1]:
        refuse_if_closed(session, day)


def is_closed(session: Session, month: str) -> bool:
    through = closed_through(session)
    return through is not None and parse_month(month) <= through


def record_close(session: Session, month: str, totals: dict, *, user: str,
                 today: date, ts: datetime | None = None) -> MonthClose:
    month = parse_month(month)
    if is_closed(session, month):
        raise InventoryError(f"{month} is already closed (the books are closed through "
                             f"{closed_through(session)})", kind="conflict")
    if first_day(next_label(month)) > today:
        raise InventoryError(f"{month} is not over yet: a month is closed after its last day",
                             kind="invalid")
    act = MonthClose(month=month, action="close", ts=ts or datetime.now(UTC), user=user,
                     reason="", totals=json.dumps(totals, sort_keys=True))
    session.add(act)
    session.flush()
    session.info.pop(_CACHE, None)
    return act


def record_reopen(session: Session, month: str, reason: str, *, user: str,
                  ts: datetime | None = None) -> MonthClose:
    month = parse_month(month)
    if not reason or not reason.strip():
        raise InventoryError("reopening a month needs a reason", hint="add --reason TEXT")
    through = closed_through(session)
    if month not in closed_months(session):
        raise InventoryError(f"{month} is not closed", kind="conflict")
    if month != through:
        raise InventoryError(f"only the latest closed month, {through}, can be reopened",
                             kind="conflict", hint=f"reopen {through} first")
    act = MonthClose(month=month, action="reopen", ts=ts or datetime.now(UTC), user=user,
                     reason=reason.strip()[:200], totals="")
    session.add(act)
    session.flush()
    session.info.pop(_CACHE, None)
    return act


def snapshot(session: Session, month: str) -> dict | None:
    """The totals stored when ``month`` was closed (``None`` when it is not closed)."""
    act = latest_acts(session).get(parse_month(month))
    if act is None or act.action != "close":
        return None
    return json.loads(act.totals or "{}")


def history(session: Session) -> list[MonthClose]:
    return list(session.execute(select(MonthClose).order_by(MonthClose.id)).scalars())
