"""Write the month-end report: the workbook, the HTML page, or both, from one database.

The CLI (``inventory report month``) calls :func:`month_end`, the demo tour
:func:`write_month_end`;
:func:`latest_complete_month` picks the last complete month (the demo tour uses it).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

from sqlalchemy import func, select
from sqlmodel import Session

from inventory.core.tables import Movement
from inventory.monthend.records import Month as Month
from inventory.monthend.records import last_complete

if TYPE_CHECKING:  # the report, its writers and the planner load numpy, scipy, openpyxl,
    # matplotlib: imported by the calls that use them, so a face can import this module
    from inventory.monthend.report import MonthReport, ReorderSource


@dataclass(frozen=True, slots=True)
class MonthEndFiles:
    report: MonthReport
    xlsx: Path | None
    html: Path | None


def default_xlsx(month: Month, reports: str | Path = "reports") -> Path:
    return Path(reports) / f"stock-{month.label}.xlsx"


def write_month_end(session: Session, month: str | Month, *, today: date,
                    xlsx: str | Path | None = None, html: str | Path | None = None,
                    method: str = "fifo", reorder: ReorderSource | None = None) -> MonthEndFiles:
    """Build the report (refusing if the ledger does not reconcile) and write the files
    asked for; nothing is written when the report cannot be built."""
    from inventory.monthend.html import write_month_html
    from inventory.monthend.report import month_report
    from inventory.monthend.workbook import write_month_workbook

    report = month_report(session, month, today=today, method=method, reorder=reorder)
    if method == "fifo":  # a closed month's ledger totals are those stored at its close
        from inventory.monthend.closing import verify

        verify(session, report)
    x = write_month_workbook(xlsx, report) if xlsx else None
    h = write_month_html(html, report) if html else None
    return MonthEndFiles(report, x, h)


def month_html(session: Session, month: str | Month, *, today: date) -> str:
    """The month-end report as one HTML page (the web app's report page), checked against a
    closed month's stored totals as the files of :func:`write_month_end` are."""
    from inventory.monthend.closing import verify
    from inventory.monthend.html import render_html
    from inventory.monthend.report import month_report

    report = month_report(session, month, today=today)
    verify(session, report)
    return render_html(report)


def latest_complete_month(session: Session, today: date) -> Month:
    """The month of the latest movement, or the last month over by ``today`` if earlier."""
    last = session.execute(select(func.max(Movement.ts))).scalar()
    done = last_complete(today)
    if last is None:
        return done
    day = last.date() if hasattr(last, "date") else date.fromisoformat(str(last)[:10])
    return min(Month.of(day), done)


@dataclass(frozen=True, slots=True)
class Outputs:
    """The files a month end writes: the workbook (``reports/stock-YYYY-MM.xlsx`` unless
    given, when ``default_workbook``) and the HTML page if given."""

    xlsx: str | Path | None = None
    html: str | Path | None = None
    default_workbook: bool = True


def month_end(session: Session, month: str, *, today: date, outputs: Outputs = Outputs(),
              method: str = "fifo", plan: bool = True) -> MonthEndFiles:
    """``report month`` for the faces: parse the month (a complete one, as of ``today``),
    take the reorder list from the order planner when ``plan`` (else the usage rule), and
    write the ``outputs``."""
    from inventory.monthend.records import parse_month
    from inventory.ordering.service import reorder_source

    m = parse_month(month, today=today)
    xlsx = outputs.xlsx
    if xlsx is None and outputs.default_workbook:
        xlsx = default_xlsx(m)
    return write_month_end(session, m, today=today, xlsx=xlsx, html=outputs.html, method=method,
                           reorder=reorder_source() if plan else None)


def report_json(files: MonthEndFiles) -> dict:
    """The ``report month --json`` document (also the web API's)."""
    from inventory.monthend.report import report_dict

    return report_dict(files.report)


def close_month(session: Session, month: str, *, today: date, user: str | None = None):
    """Close ``month`` (see :mod:`inventory.monthend.closing`), for the faces."""
    from inventory.monthend.closing import close_month as close

    return close(session, month, today=today, user=user)


def is_closed(session: Session, month: str) -> bool:
    from inventory.stock.months import is_closed as closed

    return closed(session, month)


def reopen_month(session: Session, month: str, *, reason: str, user: str | None = None) -> str:
    """Reopen the latest closed month with a reason (see :mod:`inventory.monthend.closing`);
    returns the month reopened."""
    from inventory.monthend.closing import reopen_month as reopen

    return reopen(session, month, reason=reason, user=user)


def month_acts(session: Session) -> list[dict]:
    """Every close and reopen, oldest first: month, action, ts, user, reason."""
    from inventory.monthend.closing import acts

    return acts(session)


def check_books(session: Session, *, today: date) -> list[str]:
    """``inventory check``: one line per problem (empty when the books are sound): cached
    balances against the ledger's sums, no lot below zero on any day, foreign keys, SQLite
    integrity (:mod:`inventory.stock.check`), and closed months against their snapshots."""
    from inventory.monthend.closing import verify_closed
    from inventory.stock.check import run

    return run(session) + verify_closed(session, today=today)
