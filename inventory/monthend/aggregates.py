"""The month's figures, aggregated in the database, as plain records.

:func:`load_month` runs a handful of ``GROUP BY`` queries (the same SQL on SQLite and
PostgreSQL, apart from an index hint SQLite needs) and returns a :class:`MonthData`: per
part the opening and closing quantity and value, receipts, issues to jobs, other issues,
adjustments, count variances, the last twelve months of usage and month-end stock value; the
cured lots on hand at month end; usage by fork family and service level; supply terms and
open orders for the reorder list. Rows of the ledger never travel to Python for the default
valuation (lot cost, first in first out by cure date as the ledger picks); the
moving-average option (:mod:`inventory.monthend.average`) has to replay each part's
movements in order, so it streams them.

:mod:`inventory.monthend.report` checks and assembles the report from this data; the records
themselves are in :mod:`inventory.monthend.records`.

Money in the queries is summed as whole ten-thousandths (``round(unit_cost * 10000)`` as a
big integer), so sums are exact on SQLite too, whose ``NUMERIC`` columns hold floats.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Mapping, Sequence
from datetime import UTC, date, datetime
from decimal import Decimal

from sqlalchemy import (
    BigInteger,
    and_,
    case,
    cast,
    func,
    literal_column,
    or_,
    select,
    type_coerce,
)
from sqlalchemy.ext.compiler import compiles
from sqlalchemy.sql.expression import ColumnElement
from sqlalchemy.types import NullType
from sqlmodel import Session

from inventory.core.errors import InventoryError
from inventory.core.tables import (
    ForkFamily,
    JobLine,
    Lot,
    Movement,
    Part,
    PurchaseOrder,
    PurchaseOrderLine,
    ServiceJob,
    StockBalance,
    Supplier,
    SupplierItem,
)
from inventory.monthend.records import (
    HISTORY_MONTHS,
    KNOWN_KINDS,
    METHODS,
    ZERO,
    ForkUsage,
    LotOnHand,
    Month,
    MonthData,
    PartMonth,
    SupplyTerms,
)

# ---------------------------------------------------------------------------- SQL


def cost4(col):
    """Unit cost in whole ten-thousandths, as a big integer (exact sums on any backend)."""
    return cast(func.round(col * 10000), BigInteger)


class _NoIndex(ColumnElement):
    """A column that SQLite must not answer from an index: rendered ``+column`` there (the
    unary plus SQLite documents for this), plain elsewhere. The per-lot scan reads the whole
    ledger, for which a sequential scan and a sort beat walking the ``lot_id`` or ``ts``
    index and fetching rows out of order."""

    inherit_cache = True

    def __init__(self, col):
        self.col = col
        self.type = col.type


@compiles(_NoIndex)
def _no_index_default(element, compiler, **kw):
    return compiler.process(element.col, **kw)


@compiles(_NoIndex, "sqlite")
def _no_index_sqlite(element, compiler, **kw):
    return "+" + compiler.process(element.col, **kw)


def _no_index(col) -> _NoIndex:
    return _NoIndex(col)


def money4(x) -> Decimal:
    """Ten-thousandths (an int, or what the database returns) as Decimal money."""
    return Decimal(int(x)).scaleb(-4) if x else ZERO


def _bigsum(expr):
    """SUM as a big integer (PostgreSQL would widen a bigint sum to numeric)."""
    return cast(func.sum(expr), BigInteger)


def _sum_if(cond, expr):
    return _bigsum(case((cond, expr), else_=0))


def _day(x) -> date | None:
    if x is None:
        return None
    if isinstance(x, str):  # SQLite keeps UTC datetimes as text
        x = datetime.fromisoformat(x)
    if isinstance(x, datetime):
        return (x.astimezone(UTC) if x.tzinfo else x).date()
    return x


def _lot_rows(session: Session, month: Month) -> list:
    """One scan of the ledger up to the month end, grouped by lot in the database: each lot's
    quantity and value (at the movements' cost) at the start and at the end of the month,
    its last issue and first arrival; joined with the lot's own cost and cure quarter."""
    m, lot = Movement.__table__, Lot.__table__
    line = m.c.qty * cost4(m.c.unit_cost)
    before = m.c.ts < month.start
    per_lot = select(
        _no_index(m.c.lot_id).label("lot_id"),
        _bigsum(m.c.qty).label("close_q"),
        _bigsum(line).label("close_v"),
        _sum_if(before, m.c.qty).label("open_q"),
        _sum_if(before, line).label("open_v"),
        # raw values (text on SQLite, datetimes on PostgreSQL): compared per part as they
        # come, turned into dates once per part
        type_coerce(func.max(case((m.c.kind == "issue", m.c.ts))), NullType()).label("last_issue"),
        type_coerce(func.min(case((and_(m.c.qty > 0, m.c.kind != "move"), m.c.ts))),
                    NullType()).label("first_in"),
    ).where(_no_index(m.c.ts) < month.end).group_by(_no_index(m.c.lot_id)).subquery("per_lot")
    raw = NullType()  # dates parsed only for the lots kept (cured, on hand)
    q = select(lot.c.part_id, lot.c.code, lot.c.cured, type_coerce(lot.c.received, raw),
               type_coerce(lot.c.extended_until, raw),
               cost4(lot.c.unit_cost).label("cost4"), per_lot.c.close_q, per_lot.c.close_v,
               per_lot.c.open_q, per_lot.c.open_v, per_lot.c.last_issue, per_lot.c.first_in
               ).join(per_lot, per_lot.c.lot_id == lot.c.id)
    return session.execute(q).all()


FLOWS = ("receipts", "job_issues", "other_issues", "adjust", "count", "move", "unknown")


def _flow_rows(session: Session, month: Month) -> dict[int, dict]:
    """The month's movements per part by kind (qty and value), grouped in the database."""
    m = Movement.__table__
    line = m.c.qty * cost4(m.c.unit_cost)
    kinds = {
        "receipts": m.c.kind == "receipt",
        "job_issues": and_(m.c.kind == "issue", m.c.reference.is_not(None)),
        "other_issues": and_(m.c.kind == "issue", m.c.reference.is_(None)),
        "adjust": m.c.kind == "adjust",
        "count": m.c.kind == "count",
        "move": m.c.kind == "move",
        "unknown": m.c.kind.not_in(KNOWN_KINDS),
    }
    cols = [m.c.part_id]
    for name, cond in kinds.items():
        cols += [_sum_if(cond, m.c.qty).label(f"{name}_q"), _sum_if(cond, line).label(f"{name}_v")]
    q = (select(*cols).where(m.c.ts >= month.start, m.c.ts < month.end)
         .group_by(m.c.part_id))
    return {r.part_id: r._asdict() for r in session.execute(q)}


def _history_rows(session: Session, history: Sequence[Month]) -> list:
    """Per part and history month (0 to 11, by a CASE chain over the month ends): the net
    change of stock value (all movements), and the quantity and value issued to jobs and
    otherwise. Issues give the usage series; the net changes walk the month-end stock values
    back from the closing value."""
    m = Movement.__table__
    line = m.c.qty * cost4(m.c.unit_cost)
    issue = m.c.kind == "issue"
    job = and_(issue, m.c.reference.is_not(None))
    other = and_(issue, m.c.reference.is_(None))
    bucket = case(*[(m.c.ts < h.end, literal_column(str(i)))
                    for i, h in enumerate(history[:-1])], else_=literal_column(str(len(history) - 1)))
    q = (select(m.c.part_id, bucket.label("bucket"), _bigsum(line).label("net_v"),
                _bigsum(case((job, m.c.qty), else_=0)), _bigsum(case((job, line), else_=0)),
                _bigsum(case((other, m.c.qty), else_=0)), _bigsum(case((other, line), else_=0)))
         .where(m.c.ts >= history[0].start, m.c.ts < history[-1].end)
         .group_by(m.c.part_id, bucket))
    return session.execute(q).all()


def _fork_usage(session: Session, month: Month) -> list[ForkUsage]:
    """Jobs and units per fork family and service level from the job lines of the month's
    jobs; value from the issues booked against those jobs.

    A job voided before the month ends is no job of the month. One voided after it counts
    only while it keeps lines: a void in closed books leaves them (and the close's snapshot
    holds the count), a void in open books takes them off
    (:func:`inventory.stock.returns.void_job`)."""
    m = Movement.__table__
    sj, jl, ff = ServiceJob.__table__, JobLine.__table__, ForkFamily.__table__
    units = select(ff.c.code, sj.c.service_level, func.count(func.distinct(sj.c.id)),
                   func.sum(jl.c.qty)).select_from(jl).join(sj, sj.c.id == jl.c.job_id) \
        .join(ff, ff.c.id == sj.c.fork_family_id) \
        .where(sj.c.day >= month.first_day, sj.c.day <= month.last_day,
               or_(sj.c.voided_at.is_(None), sj.c.voided_at >= month.end)) \
        .group_by(ff.c.code, sj.c.service_level)
    value = select(ff.c.code, sj.c.service_level,
                   func.sum(-m.c.qty * cost4(m.c.unit_cost))).select_from(m) \
        .join(sj, sj.c.ref == m.c.reference).join(ff, ff.c.id == sj.c.fork_family_id) \
        .where(m.c.kind == "issue", m.c.ts >= month.start, m.c.ts < month.end) \
        .group_by(ff.c.code, sj.c.service_level)
    values = {(f, s): money4(v) for f, s, v in session.execute(value)}
    rows = [ForkUsage(f, s, int(j), int(u or 0), values.get((f, s), ZERO))
            for f, s, j, u in session.execute(units)]
    return sorted(rows, key=lambda r: (-r.value, r.fork_family, r.service_level))


def _supply(session: Session, codes: Mapping[int, tuple]) -> dict[str, SupplyTerms]:
    """Per part, the cheapest supplier's terms (shorter lead time breaks a tie)."""
    si, sup = SupplierItem.__table__, Supplier.__table__
    q = select(si.c.part_id, sup.c.code, si.c.unit_cost, si.c.pack_size, si.c.min_order_qty,
               func.coalesce(si.c.lead_time_days, sup.c.lead_time_days),
               sup.c.order_cycle_days).join(sup, sup.c.id == si.c.supplier_id)
    best: dict[int, tuple] = {}
    for pid, scode, cost, pack, moq, lead, cycle in session.execute(q):
        key = (Decimal(str(cost)), lead, scode)
        if pid not in best or key < best[pid][0]:
            best[pid] = (key, SupplyTerms(scode, int(lead), int(cycle), int(pack), int(moq)))
    return {codes[pid][0]: terms for pid, (_, terms) in best.items() if pid in codes}


def _on_order(session: Session, month: Month, codes: Mapping[int, tuple]) -> dict[str, int]:
    po, pol = PurchaseOrder.__table__, PurchaseOrderLine.__table__
    q = select(pol.c.part_id, func.sum(pol.c.qty - pol.c.received_qty)) \
        .join(po, po.c.id == pol.c.order_id) \
        .where(po.c.status == "open", po.c.created <= month.last_day).group_by(pol.c.part_id)
    return {codes[p][0]: int(n) for p, n in session.execute(q) if p in codes and n and n > 0}


def _cached_balances(session: Session, month: Month) -> dict[int, int] | None:
    """The cached balance per part when nothing was booked after the month, else ``None``."""
    m = Movement.__table__
    later = session.execute(select(m.c.id).where(m.c.ts >= month.end).limit(1)).first()
    if later is not None:
        return None
    sb = StockBalance.__table__
    return {p: int(n) for p, n in
            session.execute(select(sb.c.part_id, func.sum(sb.c.qty)).group_by(sb.c.part_id))}


def load_month(session: Session, month: Month, *, method: str = "fifo") -> MonthData:
    """The month's figures from the database as plain records; see the module docstring.

    Three passes over the movements, each grouped in the database: the whole ledger up to
    the month end by lot (opening and closing), the month by part and kind (the flows) and
    the last twelve months by part, class and month (usage, and the month-by-month change of
    stock value from which the month-end values are walked back from the closing value).
    Raises :class:`InventoryError` when the ledger holds no movement before the month ends.
    """
    if method not in METHODS:
        raise InventoryError(f"unknown valuation method {method!r}: use fifo or average")
    m = Movement.__table__
    first = session.execute(select(func.min(m.c.ts))).scalar()
    first_day = _day(first)
    if first_day is None or first_day >= month.end.date():
        since = f" (the ledger starts {first_day:%Y-%m})" if first_day else " (the ledger is empty)"
        raise InventoryError(f"no stock movements up to the end of {month}: nothing to report"
                             + since, kind="empty")
    p = Part.__table__
    codes = {r[0]: tuple(r[1:]) for r in session.execute(
        select(p.c.id, p.c.code, p.c.description, p.c.kind, p.c.material, p.c.unit))}
    history = tuple(month.shift(-k) for k in range(HISTORY_MONTHS - 1, -1, -1))
    n = len(history)

    # per part: open q, open v, close q, close v, open at lot cost, close at lot cost,
    # lots below zero, last issue, first arrival
    acc: dict[int, list] = {}
    lots: list[LotOnHand] = []
    for (pid, lot_code, cured, received, extended, cost, cq, cv, oq, ov, last,
         first) in _lot_rows(session, month):
        a = acc.get(pid)
        if a is None:
            a = acc[pid] = [0, 0, 0, 0, 0, 0, 0, None, None]
        oq, cq, cost = int(oq or 0), int(cq or 0), int(cost or 0)
        a[0] += oq
        a[1] += int(ov or 0)
        a[2] += cq
        a[3] += int(cv or 0)
        a[4] += oq * cost
        a[5] += cq * cost
        a[6] += (oq < 0) or (cq < 0)
        if last is not None and (a[7] is None or last > a[7]):
            a[7] = last
        if first is not None and (a[8] is None or first < a[8]):
            a[8] = first
        if cured is not None and cq > 0:
            code = codes[pid]
            lots.append(LotOnHand(code[0], code[3], lot_code, cured, _day(received),
                                  _day(extended), cq, money4(cost)))

    flows = _flow_rows(session, month)
    usage_q: dict[int, list[int]] = defaultdict(lambda: [0] * n)
    usage_v: dict[int, list[int]] = defaultdict(lambda: [0] * n)
    net_v: dict[int, list[int]] = defaultdict(lambda: [0] * n)
    job_v, other_v = [0] * n, [0] * n
    for pid, i, nv, jq, jv, oq, ov in _history_rows(session, history):
        i = int(i)
        net_v[pid][i] += int(nv or 0)
        if jq or oq:
            usage_q[pid][i] -= int(jq or 0) + int(oq or 0)
            usage_v[pid][i] -= int(jv or 0) + int(ov or 0)
            job_v[i] -= int(jv or 0)
            other_v[i] -= int(ov or 0)
    cached = _cached_balances(session, month)

    parts = []
    empty = dict.fromkeys((f"{k}_{x}" for k in FLOWS for x in "qv"), 0)
    for pid, (open_q, open_v, close_q, close_v, open_lv, close_lv, neg, last,
              first) in acc.items():
        code, desc, kind, material, unit = codes[pid]
        f = flows.get(pid, empty)
        ends = [close_v]
        for i in range(n - 1, -1, -1):  # walk back from the closing value
            ends.append(ends[-1] - net_v[pid][i])
        ends.reverse()  # end of month-12, ..., end of the report month
        parts.append(PartMonth(
            part=code, description=desc, kind=kind, material=material, unit=unit,
            opening_qty=open_q, opening_value=money4(open_v),
            receipts_qty=int(f["receipts_q"]), receipts_value=money4(f["receipts_v"]),
            job_issues_qty=-int(f["job_issues_q"]), job_issues_value=-money4(f["job_issues_v"]),
            other_issues_qty=-int(f["other_issues_q"]),
            other_issues_value=-money4(f["other_issues_v"]),
            adjust_qty=int(f["adjust_q"]), adjust_value=money4(f["adjust_v"]),
            count_qty=int(f["count_q"]), count_value=money4(f["count_v"]),
            move_qty=int(f["move_q"]), move_value=money4(f["move_v"]),
            unknown_qty=int(f["unknown_q"]), unknown_value=money4(f["unknown_v"]),
            closing_qty=close_q, closing_value=money4(close_v),
            opening_lot_value=money4(open_lv), closing_lot_value=money4(close_lv),
            negative_lots=neg, cached_qty=None if cached is None else cached.get(pid, 0),
            last_issue=_day(last), first_in=_day(first),
            usage_qty=tuple(usage_q[pid]), usage_value=tuple(money4(x) for x in usage_v[pid]),
            month_end_values=tuple(money4(x) for x in ends),
        ))
    parts.sort(key=lambda x: x.part)
    data = MonthData(
        month=month, method=method, parts=tuple(parts), history=history,
        job_usage_value=tuple(money4(x) for x in job_v),
        other_usage_value=tuple(money4(x) for x in other_v),
        lots=tuple(sorted(lots, key=lambda x: (x.part, x.cured, x.lot))),
        fork_usage=tuple(_fork_usage(session, month)),
        supply=_supply(session, codes), on_order=_on_order(session, month, codes),
    )
    if method == "average":
        from inventory.monthend.average import revalue_average

        data = revalue_average(session, data, codes)
    return data
