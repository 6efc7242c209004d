"""Test oracle: the Decimal moving-average replay as it stood before the integer replay
(inventory/monthend/average.py at commit a06a870, kept unchanged below this paragraph), one
:func:`inventory.stock.valuation.average_step` per movement. tests/test_average_replay.py
checks the new replay gives the same month-end data.

The moving-average valuation of a month: each part's movements replayed in time order.

The default valuation (lot cost, FIFO by cure date) is read straight from the database's
sums; the moving average cannot be, since every outflow leaves at the average of the moment.
So :func:`revalue_average` streams the movements ordered by part and time (``yield_per``),
holding one running :class:`inventory.stock.valuation.AverageState` per part, and replaces
the values of a :class:`~inventory.monthend.records.MonthData`. Quantities, and so the
quantity checks of the reconciliation, are unchanged.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Mapping
from dataclasses import replace
from decimal import Decimal

from sqlalchemy import case, literal_column, select, type_coerce
from sqlalchemy.types import NullType
from sqlmodel import Session

from inventory.core.tables import ForkFamily, Movement, ServiceJob
from inventory.monthend.aggregates import cost4, money4
from inventory.monthend.records import HISTORY_MONTHS, KNOWN_KINDS, ZERO, MonthData, PartMonth
from inventory.stock import valuation as val


def revalue_average(session: Session, data: MonthData, codes: Mapping[int, tuple]) -> MonthData:
    """Replace the lot-cost values with moving-average values.

    Streams each part's movements in time order (transfers left out: they move stock between
    locations and leave the part's quantity and value alone), holding one running state per
    part. Quantities and the reconciliation of quantities are unchanged.
    """
    m = Movement.__table__
    month = data.month
    cuts = [month.shift(-k).end for k in range(HISTORY_MONTHS, -1, -1)]  # 13 month ends
    last = len(cuts) - 1  # period of the report month
    sj, ff = ServiceJob.__table__, ForkFamily.__table__
    jobs = {ref: (f, s) for ref, f, s in session.execute(
        select(sj.c.ref, ff.c.code, sj.c.service_level).join(ff, ff.c.id == sj.c.fork_family_id)
        .where(sj.c.day >= month.first_day, sj.c.day <= month.last_day))}
    # period: 0 before the twelve months, k = 1..12 in history month k-1 (12 = the report
    # month), worked out in the database so Python compares small integers, not timestamps
    period = case(*[(m.c.ts < c, literal_column(str(i))) for i, c in enumerate(cuts[:-1])],
                  else_=literal_column(str(last)))
    q = (select(m.c.part_id, type_coerce(m.c.ts, NullType()), period, m.c.qty, m.c.kind,
                m.c.reference, cost4(m.c.unit_cost))
         .where(m.c.ts < month.end, m.c.kind != "move")
         .order_by(m.c.part_id, m.c.ts, m.c.id).execution_options(yield_per=20_000))
    by_code = {p.part: p for p in data.parts}
    out: dict[str, PartMonth] = {}
    job_v, other_v = [ZERO] * HISTORY_MONTHS, [ZERO] * HISTORY_MONTHS
    fork_v: dict[tuple[str, str], Decimal] = defaultdict(lambda: ZERO)
    broken: dict[str, str] = {}

    class Run:
        __slots__ = ("pid", "state", "ci", "ends", "flows", "uv", "broken")

        def __init__(self, pid):
            self.pid, self.state, self.ci = pid, val.AverageState(), 0
            self.ends: list[Decimal] = []
            self.flows: dict[str, Decimal] = defaultdict(lambda: ZERO)
            self.uv = [ZERO] * HISTORY_MONTHS
            self.broken = False

    def finish(run: Run) -> None:
        while run.ci < len(cuts):
            run.ends.append(run.state.value)
            run.ci += 1
        code = codes[run.pid][0]
        pm = by_code.get(code)
        if pm is None or run.broken:
            return
        f = run.flows
        out[code] = replace(
            pm, opening_value=run.ends[-2], closing_value=run.ends[-1],
            opening_lot_value=run.ends[-2], closing_lot_value=run.ends[-1],
            receipts_value=f["receipt"], job_issues_value=-f["job"], other_issues_value=-f["other"],
            adjust_value=f["adjust"], count_value=f["count"], move_value=ZERO,
            unknown_value=f["unknown"], usage_value=tuple(run.uv),
            month_end_values=tuple(run.ends))

    def step(run: Run, ts, p: int, qty: int, kind: str, ref, cost) -> None:
        if run.broken:
            return
        while run.ci < p:  # month ends passed since the last movement
            run.ends.append(run.state.value)
            run.ci += 1
        try:
            run.state, v = val.average_step(run.state, qty, cost)
        except ValueError as exc:
            run.broken = True
            when = str(ts)[:16]
            broken[codes[run.pid][0]] = f"stock goes below zero at {when} ({exc})"
            return
        if kind == "issue" and p > 0:
            run.uv[p - 1] -= v
            (job_v if ref is not None else other_v)[p - 1] -= v
        if p == last:
            if kind == "issue":
                run.flows["job" if ref is not None else "other"] += v
                if ref in jobs:
                    fork_v[jobs[ref]] -= v
            else:
                run.flows[kind if kind in KNOWN_KINDS else "unknown"] += v

    # One issue taken from several lots is several rows with the same time, kind and
    # reference: it leaves at the average as one transaction (one rounding, as a book would).
    run: Run | None = None
    pending: list = []
    for pid, ts, p, qty, kind, ref, cost in session.execute(q):
        p = int(p)
        if run is None or pid != run.pid:
            if run is not None:
                if pending:
                    step(run, *pending)
                    pending = []
                finish(run)
            run = Run(pid)
        if pending and qty < 0 and (ts, kind, ref) == (pending[0], pending[3], pending[4]):
            pending[2] += qty
            continue
        if pending:
            step(run, *pending)
            pending = []
        if qty < 0:
            pending = [ts, p, qty, kind, ref, None]
        else:
            step(run, ts, p, qty, kind, ref, money4(cost))
    if run is not None:
        if pending:
            step(run, *pending)
        finish(run)
    parts = tuple(out.get(p.part, p) for p in data.parts)
    fork = tuple(sorted((replace(u, value=fork_v.get((u.fork_family, u.service_level), ZERO))
                         for u in data.fork_usage),
                        key=lambda r: (-r.value, r.fork_family, r.service_level)))
    return replace(data, parts=parts, job_usage_value=tuple(job_v),
                   other_usage_value=tuple(other_v), fork_usage=fork, broken=broken)
