"""Closing and reopening a month: the manager's act, and the proof that a closed month's
report still gives the figures it gave when it was closed.

Closing builds the month's report (so a month whose ledger does not reconcile cannot be
closed), stores its ledger totals with the act (:mod:`inventory.stock.months`), and from
then on the ledger refuses any movement dated up to the month's last day. Each later run of
the report compares its totals with that snapshot (:func:`verify`). Figures that depend on
the day the report is run (dead, slow and expiring stock, the reorder list) are not part of
the snapshot.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from decimal import Decimal

from sqlmodel import Session

from inventory.core.errors import InventoryError
from inventory.monthend.records import parse_month
from inventory.monthend.report import MonthReport, month_report
from inventory.stock import months
from inventory.stock.ledger import current_user

#: The report totals that only the ledger decides (and so must never change once closed).
SNAPSHOT = ("opening_value", "receipts_value", "job_issues_value", "other_issues_value",
            "adjust_value", "count_value", "closing_value", "parts_on_hand", "jobs")


def totals_of(report: MonthReport) -> dict[str, str]:
    out = {}
    for name in SNAPSHOT:
        v = getattr(report.totals, name)
        out[name] = str(v.quantize(Decimal("0.01"))) if isinstance(v, Decimal) else str(v)
    return out


@dataclass(frozen=True, slots=True)
class Closed:
    month: str
    totals: dict[str, str]


def close_month(session: Session, month: str, *, today: date, user: str | None = None) -> Closed:
    """Close ``month`` (``YYYY-MM``, over by ``today``) in the caller's transaction."""
    m = parse_month(month, today=today)
    months.lock_for_close(session)
    if months.is_closed(session, m.label):
        raise InventoryError(f"{m.label} is already closed (the books are closed through "
                             f"{months.closed_through(session)})", kind="conflict")
    report = month_report(session, m, today=today)
    totals = totals_of(report)
    months.record_close(session, m.label, totals, user=user or current_user(), today=today)
    return Closed(m.label, totals)


def reopen_month(session: Session, month: str, *, reason: str, user: str | None = None) -> str:
    """Reopen the latest closed month; the act and its reason stay on record."""
    act = months.record_reopen(session, month, reason, user=user or current_user())
    return act.month


def verify(session: Session, report: MonthReport) -> dict[str, str] | None:
    """For a closed month, raise when the report's totals differ from the snapshot taken at
    close; return the snapshot (``None`` for an open month)."""
    snap = months.snapshot(session, report.month.label)
    if snap is None:
        return None
    now = totals_of(report)
    diff = [f"{k} {snap.get(k)} at close, {now[k]} now" for k in SNAPSHOT if snap.get(k) != now[k]]
    if diff:
        raise InventoryError(
            f"closed month {report.month.label} no longer matches the totals stored when it "
            f"was closed: {'; '.join(diff)}", kind="conflict",
            hint="run `inventory check` to find the movement that changed it")
    return snap


def acts(session: Session) -> list[dict]:
    return [{"month": a.month, "action": a.action, "ts": a.ts, "user": a.user,
             "reason": a.reason} for a in months.history(session)]


def verify_closed(session: Session, *, today: date) -> list[str]:
    """For ``inventory check``: one line per closed month whose report no longer gives the
    totals stored at its close."""
    out = []
    for month, act in sorted(months.latest_acts(session).items()):
        if act.action != "close":
            continue
        try:
            verify(session, month_report(session, parse_month(month, today=today), today=today))
        except InventoryError as exc:
            out.append(str(exc.problems[0]))
    return out
