"""The month-end report: the reconciliation check, the derived figures and the JSON.

:func:`assemble` (pure) takes a :class:`~inventory.monthend.records.MonthData`, refuses when
the ledger does not reconcile (naming the parts), then derives turns, days of supply,
ABC/XYZ classes, slow and dead stock, expiring lots and the reorder list with the functions
of :mod:`inventory.stock.valuation`. :func:`month_report` loads and assembles;
:func:`report_dict` is the ``report month --json`` document.

The reorder list takes its reorder points and suggested quantities from a
:class:`ReorderSource` (the order planner) where it has a part, else from
:func:`inventory.stock.valuation.fallback_reorder`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import date
from decimal import Decimal
from typing import Protocol

import numpy as np
from sqlmodel import Session

from inventory.bench.seals import storage_limit
from inventory.core.errors import InventoryError, Problem
from inventory.monthend.aggregates import load_month
from inventory.monthend.records import (
    ZERO,
    Month,
    MonthData,
    PartMonth,
    parse_month,
)
from inventory.monthend.report_records import (
    BelowReorder,
    ExpiringLot,
    MonthReport,
    PartLine,
    ReportSettings,
    Totals,
)
from inventory.ordering.model import ReorderAdvice  # defined below the report (ordering < monthend)
from inventory.stock import valuation as val


class ReorderSource(Protocol):
    """What the order planner provides: per part code, its reorder point and the plan's
    suggested quantity, as of a day. Parts it leaves out get the fallback rule."""

    def __call__(self, session: Session, as_of: date) -> Mapping[str, ReorderAdvice]: ...


def reconcile(parts: Sequence[PartMonth], *, method: str = "fifo",
              tolerance: Decimal = Decimal("0.0001"),
              broken: Mapping[str, str] | None = None) -> list[Problem]:
    """The parts whose month does not add up, one problem each.

    Quantity: opening + receipts - issues + adjustments + count variances + transfers must
    equal closing; a movement of a kind the report does not know breaks that. The closing
    quantity must equal the cached balance when no movement follows the month. No lot may
    stand below zero. Value (lot cost): the lots' opening value at their own cost plus the
    month's movements at the cost they were booked at must equal the lots' closing value
    at their own cost, which fails when a movement was booked at another cost than its
    lot's. ``broken`` adds reasons found elsewhere (the moving-average replay), per part.
    """
    out = []
    broken = broken or {}
    for p in parts:
        why = [broken[p.part]] if p.part in broken else []
        moved = (p.receipts_qty - p.job_issues_qty - p.other_issues_qty + p.adjust_qty
                 + p.count_qty + p.move_qty)
        if p.opening_qty + moved != p.closing_qty:
            why.append(f"opening {p.opening_qty} + in/out {moved:+d} = "
                       f"{p.opening_qty + moved}, but closing is {p.closing_qty}"
                       + (f" ({p.unknown_qty:+d} in movements of unknown kind)"
                          if p.unknown_qty else ""))
        if p.cached_qty is not None and p.cached_qty != p.closing_qty:
            why.append(f"closing {p.closing_qty} but the cached balance is {p.cached_qty}")
        if p.negative_lots:
            why.append(f"{p.negative_lots} lot(s) below zero")
        if method == "fifo":
            flows = (p.receipts_value - p.job_issues_value - p.other_issues_value
                     + p.adjustments_value)
            expect = p.opening_lot_value + flows
            if abs(expect - p.closing_lot_value) > tolerance:
                why.append(f"opening value {p.opening_lot_value:.2f} + movements "
                           f"{flows:+.2f} = {expect:.2f}, but the lots are worth "
                           f"{p.closing_lot_value:.2f} at their cost")
        if why:
            out.append(Problem(f"{p.part}: " + "; ".join(why), kind="reconcile"))
    return out


def _days(a: Month, b: Month) -> int:
    return (b.end.date() - a.start.date()).days


def assemble(data: MonthData, *, today: date, reorder: Mapping[str, ReorderAdvice] | None = None,
             settings: ReportSettings = ReportSettings()) -> MonthReport:
    """The report from the month's data (pure). Refuses, naming the parts (the first
    ``settings.max_listed`` of them), when the ledger does not reconcile.

    Turns: the month's cost of issues over its average stock ((opening + closing) / 2),
    annualised by 365 / days in the month; ``turns_12m`` over the twelve months, against the
    mean of the thirteen month-end values. Days of supply: closing quantity over the average
    daily usage of the last twelve months (value for the total). ABC by the twelve months'
    usage value, XYZ by the CV of the twelve monthly quantities (:mod:`inventory.stock.
    valuation` for cut-offs and sources). Slow/dead: no issue for ``slow_months`` /
    ``dead_months``. Expiring: ISO 2230 storage limit (or the inspected extension) past, or
    within ``expiry_warn_months`` of the month's last day. Below reorder: inventory position
    (closing on hand plus open orders) at or below the reorder point, from ``reorder`` (the
    plan) where it has the part, else :func:`inventory.stock.valuation.fallback_reorder`.
    """
    month, st = data.month, settings
    problems = reconcile(data.parts, method=data.method, broken=data.broken)
    if problems:
        listed = problems[:st.max_listed]
        more = len(problems) - len(listed)
        head = Problem(f"the ledger does not reconcile for {month} in {len(problems)} "
                       "part(s); the report is not written", kind="reconcile")
        tail = [Problem(f"... and {more} more part(s)", kind="reconcile")] if more else []
        raise InventoryError([head, *listed, *tail],
                             hint="correct the ledger with new movements (adjust or count); "
                                  "`inventory stock on-hand --part P --by-lot` shows the lots")
    as_of = month.last_day
    parts = data.parts
    n_hist = len(data.history)
    hist_days = _days(data.history[0], month)
    annual = [sum(p.usage_value, ZERO) for p in parts]
    abc = val.abc_classes(annual, a_share=st.abc_cuts[0], b_share=st.abc_cuts[1])
    demand = np.array([p.usage_qty for p in parts], dtype=float).reshape(len(parts), n_hist)
    xyz, cv = val.xyz_classes(demand, x_max=st.xyz_cuts[0], y_max=st.xyz_cuts[1])
    lines = []
    for i, p in enumerate(parts):
        avg = (p.opening_value + p.closing_value) / 2
        lines.append(PartLine(
            data=p,
            turns=val.turns(p.issues_value, avg, period_days=month.days),
            turns_12m=val.turns(annual[i], val.average_stock(p.month_end_values),
                                period_days=hist_days),
            days_of_supply=val.days_of_supply(p.closing_qty, sum(p.usage_qty),
                                              period_days=hist_days),
            annual_usage_value=annual[i], abc=abc[i], xyz=xyz[i],
            cv=None if np.isnan(cv[i]) else float(cv[i]),
            status=val.stock_status(p.closing_qty, p.last_issue, p.first_in, as_of,
                                    slow_months=st.slow_months,
                                    dead_months=st.dead_months),
        ))
    expiring = []
    for lot in data.lots:
        try:
            limit = lot.extended_until or storage_limit(lot.cured, lot.material or "")
        except ValueError:
            continue  # no material or not an ISO 2230 polymer: nothing to judge
        status = val.shelf_status(limit, as_of, warn_months=st.expiry_warn_months)
        if status:
            expiring.append(ExpiringLot(lot, limit, status))
    expiring.sort(key=lambda e: (e.limit, e.lot.part, e.lot.lot))
    below = _below_reorder(lines, data, reorder or {}, hist_days=hist_days,
                           cover_days=st.cover_days)

    def total(attr: str) -> Decimal:
        return sum((getattr(p, attr) for p in parts), ZERO)

    opening, closing = total("opening_value"), total("closing_value")
    issues = total("job_issues_value") + total("other_issues_value")
    stock_value = tuple(sum((p.month_end_values[k] for p in parts), ZERO)
                        for k in range(1, n_hist + 1))
    ends = [sum((p.month_end_values[k] for p in parts), ZERO) for k in range(n_hist + 1)]
    usage_12m = sum(data.job_usage_value, ZERO) + sum(data.other_usage_value, ZERO)
    totals = Totals(
        opening_value=opening, receipts_value=total("receipts_value"),
        job_issues_value=total("job_issues_value"), other_issues_value=total("other_issues_value"),
        adjust_value=total("adjust_value"), count_value=total("count_value"),
        closing_value=closing,
        turns=val.turns(issues, (opening + closing) / 2, period_days=month.days),
        turns_12m=val.turns(usage_12m, val.average_stock(ends), period_days=hist_days),
        days_of_supply=val.days_of_supply(closing, usage_12m, period_days=hist_days),
        slow_value=sum((p.closing_value for p in lines if p.status == "slow"), ZERO),
        dead_value=sum((p.closing_value for p in lines if p.status == "dead"), ZERO),
        expired_value=sum((e.lot.value for e in expiring if e.status == "past"), ZERO),
        expiring_soon_value=sum((e.lot.value for e in expiring if e.status == "soon"), ZERO),
        count_loss_value=sum((p.count_value for p in parts if p.count_value < 0), ZERO),
        count_gain_value=sum((p.count_value for p in parts if p.count_value > 0), ZERO),
        parts_on_hand=sum(1 for p in parts if p.closing_qty > 0),
        jobs=sum(u.jobs for u in data.fork_usage),
    )
    return MonthReport(
        month=month, method=data.method, today=today, totals=totals, parts=tuple(lines),
        history=data.history, job_usage_value=data.job_usage_value,
        other_usage_value=data.other_usage_value, stock_value=stock_value,
        fork_usage=data.fork_usage, expiring_lots=tuple(expiring), below_reorder=below,
        settings={"slow_months": st.slow_months, "dead_months": st.dead_months,
                  "expiry_warn_months": st.expiry_warn_months, "abc_cuts": list(st.abc_cuts),
                  "xyz_cuts": list(st.xyz_cuts), "cover_days": st.cover_days},
    )


def _below_reorder(lines: Sequence[PartLine], data: MonthData,
                   plan: Mapping[str, ReorderAdvice], *, hist_days: int,
                   cover_days: float) -> tuple[BelowReorder, ...]:
    out = []
    for p in lines:
        on_order = data.on_order.get(p.part, 0)
        position = p.closing_qty + on_order
        unit = (p.closing_value / p.closing_qty) if p.closing_qty > 0 else None
        advice = plan.get(p.part)
        if advice is None:
            terms = data.supply.get(p.part)
            lead, review = (terms.lead_days, terms.review_days) if terms else (14, 7)
            rop, qty = val.fallback_reorder(
                sum(p.usage_qty) / hist_days, lead_days=lead, review_days=review,
                position=position, cover_days=cover_days,
                pack=terms.pack if terms else 1, minimum=terms.minimum if terms else 0)
            advice = ReorderAdvice(p.part, rop, qty,
                                   f"fallback: usage over {lead}+{review} days"
                                   + ("" if terms else " (no supplier: 14+7 assumed)"))
        if advice.reorder_point > 0 and position <= advice.reorder_point:
            out.append(BelowReorder(p.part, p.description, p.closing_qty, on_order,
                                    advice.reorder_point, advice.suggested_qty, unit,
                                    advice.basis))
    out.sort(key=lambda b: (b.on_hand + b.on_order - b.reorder_point, b.part))
    return tuple(out)


def month_report(session: Session, month: str | Month, *, today: date, method: str = "fifo",
                 reorder: ReorderSource | None = None,
                 settings: ReportSettings = ReportSettings()) -> MonthReport:
    """Load, check and assemble the month-end report (see :func:`assemble`)."""
    if not isinstance(month, Month):
        month = parse_month(month, today=today)
    data = load_month(session, month, method=method)
    plan = reorder(session, month.last_day) if reorder is not None else None
    return assemble(data, today=today, reorder=plan, settings=settings)
# ---------------------------------------------------------------------------- JSON


def _num(x: float | None, places: int = 2) -> float | None:
    return None if x is None else round(x, places)


def _m(x: Decimal) -> str:
    return str(x.quantize(Decimal("0.01")))


def part_dict(p: PartLine) -> dict:
    return {
        "part": p.part, "description": p.description, "unit": p.unit,
        "opening_qty": p.opening_qty, "opening_value": _m(p.opening_value),
        "receipts_qty": p.receipts_qty, "receipts_value": _m(p.receipts_value),
        "job_issues_qty": p.job_issues_qty, "job_issues_value": _m(p.job_issues_value),
        "other_issues_qty": p.other_issues_qty, "other_issues_value": _m(p.other_issues_value),
        "adjust_qty": p.adjust_qty, "adjust_value": _m(p.adjust_value),
        "count_variance_qty": p.count_qty, "count_variance_value": _m(p.count_value),
        "closing_qty": p.closing_qty, "closing_value": _m(p.closing_value),
        "turns": _num(p.turns), "turns_12m": _num(p.turns_12m),
        "days_of_supply": _num(p.days_of_supply, 1),
        "annual_usage_value": _m(p.annual_usage_value), "abc": p.abc, "xyz": p.xyz,
        "cv": _num(p.cv, 3), "last_issue": p.last_issue.isoformat() if p.last_issue else None,
        "stock_status": p.status,
    }


def report_dict(r: MonthReport) -> dict:
    """The ``report month --json`` document."""
    t = r.totals
    return {
        "month": r.month.label,
        "valuation_method": r.method_label,
        "totals": {
            "opening_value": _m(t.opening_value), "receipts_value": _m(t.receipts_value),
            "issues_value": _m(t.issues_value), "adjustments_value": _m(t.adjustments_value),
            "closing_value": _m(t.closing_value),
            "job_issues_value": _m(t.job_issues_value),
            "other_issues_value": _m(t.other_issues_value),
            "count_variance_value": _m(t.count_value),
            "turns": _num(t.turns), "turns_12m": _num(t.turns_12m),
            "days_of_supply": _num(t.days_of_supply, 1),
            "slow_value": _m(t.slow_value), "dead_value": _m(t.dead_value),
            "expired_value": _m(t.expired_value),
            "expiring_soon_value": _m(t.expiring_soon_value), "jobs": t.jobs,
        },
        "parts": [part_dict(p) for p in r.parts],
        "usage_by_fork": [{"fork_family": u.fork_family, "service_level": u.service_level,
                           "jobs": u.jobs, "units": u.units, "value": _m(u.value)}
                          for u in r.fork_usage],
        "history": [{"month": h.label, "job_issues_value": _m(j), "other_issues_value": _m(o),
                     "stock_value": _m(s)}
                    for h, j, o, s in zip(r.history, r.job_usage_value, r.other_usage_value,
                                          r.stock_value, strict=True)],
        "count_variances": [{"part": p.part, "qty": p.count_qty, "value": _m(p.count_value)}
                            for p in r.count_variances],
        "dead_stock": [{"part": p.part, "status": p.status, "on_hand": p.closing_qty,
                        "value": _m(p.closing_value),
                        "last_issue": p.last_issue.isoformat() if p.last_issue else None}
                       for p in r.stock_problems],
        "expiring_lots": [{"part": e.lot.part, "lot": e.lot.lot, "cured": e.lot.cured,
                           "material": e.lot.material, "qty": e.lot.qty,
                           "value": _m(e.lot.value), "limit": e.limit.isoformat(),
                           "status": e.status} for e in r.expiring_lots],
        "below_reorder": [{"part": b.part, "on_hand": b.on_hand, "on_order": b.on_order,
                           "reorder_point": b.reorder_point, "suggested_qty": b.suggested_qty,
                           "basis": b.basis} for b in r.below_reorder],
    }
