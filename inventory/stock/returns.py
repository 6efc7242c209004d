"""Corrections without deletion: reversals, returns from a job, and voided jobs.

A voided job keeps its row, marked with when and why (``ServiceJob.voided_at``,
``void_reason``), so it stays visible while every job count leaves it out.

Each is a new movement that points at the movement it undoes (``Movement.reverses_id``) and
keeps that movement's kind with the opposite sign, so every sum by kind (usage per month,
the month-end flows, the forecasts' demand) is a net figure with no further change. A
correction is dated when it is booked (default today) and passes the same checks as any
movement: the time-order rule when it takes stock back out, and closed months.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime

from sqlalchemy import func, select
from sqlmodel import Session

from inventory.core import lookup
from inventory.core.errors import InventoryError
from inventory.core.tables import JobLine, Location, Lot, Movement, Part, ServiceJob
from inventory.stock import allocation, months, timeline
from inventory.stock.bookings import Stamp
from inventory.stock.ledger import _record


def _now() -> datetime:
    return datetime.now(UTC)


def _undone(session: Session, ids: list[int]) -> dict[int, int]:
    """Per movement id: the signed sum of the corrections pointing at it."""
    if not ids:
        return {}
    out: dict[int, int] = {}
    for i in range(0, len(ids), 500):
        for rid, n in session.execute(
                select(Movement.reverses_id, func.sum(Movement.qty))
                .where(Movement.reverses_id.in_(ids[i:i + 500]))
                .group_by(Movement.reverses_id)):
            out[rid] = int(n)
    return out


def _undo(session: Session, orig: Movement, qty: int, *, reason: str, ts: datetime,
          user: str | None, reference: str | None) -> Movement:
    """Book ``qty`` (signed) against ``orig``'s part, lot and location, pointing at it."""
    part = session.get(Part, orig.part_id)
    loc = session.get(Location, orig.location_id)
    lot = session.get(Lot, orig.lot_id)
    months.refuse_if_closed(session, ts)
    if qty < 0:
        allocation.check_lot(session, part, loc, lot, -qty, timeline.day_of(ts))
    return _record(session, (part, loc, lot), qty, orig.kind,
                   Stamp(ts=ts, user=user, reference=reference, reason=reason[:200],
                         reverses_id=orig.id))


def reverse(session: Session, movement_id: int, *, reason: str, ts: datetime | None = None,
            user: str | None = None) -> Movement:
    """Undo a movement booked by mistake with a new movement pointing at it."""
    if not reason or not reason.strip():
        raise InventoryError("a reversal needs a reason", hint="add --reason TEXT")
    orig = session.get(Movement, movement_id)
    if orig is None:
        raise InventoryError(f"unknown movement {movement_id}",
                             hint="`inventory export movements` lists their ids")
    if orig.reverses_id is not None:
        raise InventoryError(f"movement {movement_id} is itself a correction of movement "
                             f"{orig.reverses_id}: book the movement again instead",
                             kind="conflict")
    if orig.kind == "move":
        raise InventoryError(f"movement {movement_id} is half of a move between locations: "
                             "move the stock back with `inventory stock move`", kind="conflict")
    left = orig.qty + _undone(session, [orig.id]).get(orig.id, 0)
    if left == 0 or (left > 0) != (orig.qty > 0):
        raise InventoryError(f"movement {movement_id} is already reversed", kind="conflict")
    return _undo(session, orig, -left, reason=f"reversal of movement {orig.id}: {reason.strip()}",
                 ts=ts or _now(), user=user, reference=orig.reference)


@dataclass(frozen=True, slots=True)
class Returned:
    movements: list[Movement]
    note: str | None = None


def _job_issues(session: Session, ref: str, part_id: int | None = None) -> list[Movement]:
    q = select(Movement).where(Movement.reference == ref, Movement.kind == "issue",
                               Movement.qty < 0, Movement.reverses_id.is_(None))
    if part_id is not None:
        q = q.where(Movement.part_id == part_id)
    return list(session.execute(q.order_by(Movement.ts, Movement.id)).scalars())


def _trim_lines(session: Session, ref: str, back: dict[int, int]) -> str | None:
    """Take returned units off the job's lines (what the job used) while its month is open."""
    job = session.execute(select(ServiceJob).where(ServiceJob.ref == ref)).scalar()
    if job is None:
        return None
    if months.is_closed(session, months.label(job.day)):
        return (f"job {ref} ({job.day.isoformat()}) is in closed books: its lines stay as "
                "closed; the return counts in the month it is booked")
    for part_id, n in back.items():
        line = session.execute(select(JobLine).where(JobLine.job_id == job.id,
                                                     JobLine.part_id == part_id)).scalar()
        if line is None:
            continue
        if line.qty <= n:
            session.delete(line)
        else:
            line.qty -= n
            session.add(line)
    session.flush()
    return None


def return_from_job(session: Session, ref: str, part_code: str, qty: int, *,
                    ts: datetime | None = None, user: str | None = None) -> Returned:
    """Put ``qty`` unused units of a part back into the lots the job took them from (the
    latest issue first)."""
    if isinstance(qty, bool) or not isinstance(qty, int) or qty <= 0:
        raise InventoryError(f"quantity must be a whole number above 0, got {qty!r}")
    part = lookup.part(session, part_code)
    issues = _job_issues(session, ref, part.id)
    done = _undone(session, [m.id for m in issues])
    open_ = [(m, -m.qty - done.get(m.id, 0)) for m in issues]
    took = sum(-m.qty for m in issues)
    can = sum(n for _, n in open_ if n > 0)
    if qty > can:
        raise InventoryError(
            f"job {ref} took {took} of {part.code} and {took - can} came back already: "
            f"cannot return {qty}" if issues else f"job {ref} took no {part.code}",
            kind="conflict")
    ts = ts or _now()
    out, left = [], qty
    for m, n in reversed(open_):
        if left == 0:
            break
        n = min(n, left)
        if n <= 0:
            continue
        out.append(_undo(session, m, n, reason="returned unused", ts=ts, user=user,
                         reference=ref))
        left -= n
    return Returned(out, _trim_lines(session, ref, {part.id: qty}))


def void_job(session: Session, ref: str, *, reason: str, ts: datetime | None = None,
             user: str | None = None) -> Returned:
    """Reverse everything a job took (less what came back) with new movements, and mark the
    job voided. A job recorded without taking stock (history from before the ledger) has
    nothing to book back: it is only marked voided."""
    if not reason or not reason.strip():
        raise InventoryError("voiding a job needs a reason", hint="add --reason TEXT")
    issues = _job_issues(session, ref)
    if not issues:
        return _void_recorded_only(session, ref, reason.strip(), ts or _now())
    done = _undone(session, [m.id for m in issues])
    ts = ts or _now()
    out, back = [], {}
    for m in issues:
        n = -m.qty - done.get(m.id, 0)
        if n > 0:
            out.append(_undo(session, m, n, reason=f"void of job {ref}: {reason.strip()}",
                             ts=ts, user=user, reference=ref))
            back[m.part_id] = back.get(m.part_id, 0) + n
    if not out:
        raise InventoryError(f"job {ref} has nothing left to reverse: it was voided or "
                             "returned in full already", kind="conflict")
    _mark_voided(session, ref, ts, reason.strip())
    return Returned(out, _trim_lines(session, ref, back))


def _void_recorded_only(session: Session, ref: str, reason: str, ts: datetime) -> Returned:
    """Void a job that took no stock: the mark, and its lines off while its month is open
    (as a void with movements takes them off)."""
    job = session.execute(select(ServiceJob).where(ServiceJob.ref == ref)).scalar()
    if job is None:
        raise InventoryError(f"no stock was issued to job {ref}", kind="unknown")
    if job.voided_at is not None:
        raise InventoryError(f"job {ref} was voided already ({job.voided_at:%Y-%m-%d})",
                             kind="conflict")
    months.refuse_if_closed(session, ts)
    lines = {pid: int(q) for pid, q in session.execute(
        select(JobLine.part_id, JobLine.qty).where(JobLine.job_id == job.id))}
    _mark_voided(session, ref, ts, reason)
    note = _trim_lines(session, ref, lines)
    return Returned([], note or f"job {ref} was recorded without taking stock: nothing goes "
                              "back to the shelf")


def _mark_voided(session: Session, ref: str, ts: datetime, reason: str) -> None:
    """Record on the job row when and why it was voided (the first void stands): the row
    stays, but no job count includes it (forecast, installed base, month end)."""
    job = session.execute(select(ServiceJob).where(ServiceJob.ref == ref)).scalar()
    if job is None or job.voided_at is not None:  # issues under a reference that is no job
        return
    job.voided_at = ts
    job.void_reason = reason[:200]
    session.add(job)
