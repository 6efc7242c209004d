"""Everything the forecast needs from the database, read once into plain arrays.

Grouping runs in SQL (issues per item and month or day, jobs and job lines per fork family,
service level and month), so a large ledger is not pulled into memory row by row; the
per-visit table for the installed base has one row per job. A voided job
(``ServiceJob.voided_at``) is left out of the job counts, the job lines and the visits; its
issues and their corrections still meet in the issue sums (each in the month it is booked).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

import numpy as np
from numpy.typing import NDArray
from sqlalchemy import extract, func
from sqlmodel import Session, col, select

from inventory.core.model import KitSpec
from inventory.core.tables import (
    ForkFamily,
    JobLine,
    Lot,
    Movement,
    Part,
    ServiceJob,
    SupplierItem,
)
from inventory.forecast import demand as dm
from inventory.forecast import queries as sd
from inventory.forecast.installed_base import Visits

FloatArray = NDArray[np.float64]


@dataclass(frozen=True)
class DemandHistory:
    """Demand history on one calendar.

    - ``items`` / ``kinds``: every stock item (parts and kits); ``values[i, t]`` its issues
      in period ``periods[t]`` (``freq`` "M" or "W"), NaN before the item's first receipt or
      use; ``month_of[t]``: calendar month (1..12) of each period, for the season.
    - ``months``: the monthly calendar (datetime64[M]) of the same span, with ``jobs[g, m]``
      jobs per (family, level) ``groups[g]`` and ``lines[g, i, m]`` units of item i those
      jobs took (kits as kits, loose parts as parts: what left the shelf).
    - ``visits``: one row per job for the installed base; ``kits``: bills of materials;
      ``unit_cost``: the preferred supplier item's cost per item (first listed), else the
      latest lot's.
    """

    freq: dm.Freq
    periods: NDArray[np.datetime64]
    month_of: NDArray[np.int64]
    items: list[str]
    kinds: list[str]
    values: FloatArray
    months: NDArray[np.datetime64]
    groups: list[tuple[str, str]]
    jobs: FloatArray
    lines: FloatArray
    visits: Visits
    kits: list[KitSpec]
    unit_cost: dict[str, float]


def _day(x: object) -> np.datetime64:
    return np.datetime64(str(x)[:10], "D")


def _month_no(year: object, month: object, first: np.datetime64) -> int:
    m = np.datetime64(f"{int(year):04d}-{int(month):02d}", "M")  # type: ignore[call-overload]
    return int((m - first).astype(int))


def load_history(session: Session, *, until: date, freq: dm.Freq = "M") -> DemandHistory:
    """Issues, jobs, job lines, visits, kits and costs up to ``until`` (inclusive).

    The span starts at the first month with any issue (months before the shop's first
    recorded use, e.g. the month its opening stock was booked, are not history).
    """
    item = sd.item_demand(session, until=until)
    values = item.values
    used = np.flatnonzero(values.sum(axis=0) > 0)
    m0 = int(used[0]) if used.size else max(len(item.months) - 1, 0)
    months = item.months[m0:]
    start = np.maximum(item.start - m0, 0)
    monthly = dm.mask_before_start(values[:, m0:], start)
    since = date.fromisoformat(str(months[0]) + "-01") if months.size else until
    jc = sd.job_counts(session, until=until, since=since)
    groups = list(jc.groups)
    jobs = np.zeros((len(groups), months.size))
    off = int((jc.months[0] - months[0]).astype(int)) if jc.months.size and months.size else 0
    for g in range(len(groups)):
        for t in range(jc.values.shape[1]):
            if 0 <= t + off < months.size:
                jobs[g, t + off] += jc.values[g, t]
    lines = _job_lines(session, item.codes, groups, months)
    visits = _visits(session, until)
    costs = _unit_costs(session)
    if freq == "W":
        periods, weekly = _weekly(session, item.codes, since, until)
        wstart = _week_start_index(start, months, periods)
        values_out = dm.mask_before_start(weekly, wstart)
        month_of = (_mid_week_month(periods) % 12 + 1).astype(np.int64)
    else:
        periods = months.astype("datetime64[D]")
        values_out = monthly
        month_of = (months.astype(np.int64) % 12 + 1).astype(np.int64)
    return DemandHistory(freq, periods, month_of, list(item.codes), list(item.kinds),
                         values_out, months, groups, jobs, lines, visits, sd.kit_specs(session),
                         costs)


def _mid_week_month(periods: NDArray[np.datetime64]) -> NDArray[np.int64]:
    """Calendar month number (months since 1970) of each week's Thursday."""
    return np.asarray((periods + np.timedelta64(3, "D")).astype("datetime64[M]")
                      .astype(np.int64))


def _week_start_index(start_month: NDArray[np.int64], months: NDArray[np.datetime64],
                      weeks: NDArray[np.datetime64]) -> NDArray[np.int64]:
    """Index of the first week that overlaps each item's first month."""
    out = np.full(start_month.size, weeks.size, dtype=np.int64)
    for i, s in enumerate(start_month):
        if s < months.size:
            first_day = months[s].astype("datetime64[D]")
            out[i] = int(np.searchsorted(weeks + np.timedelta64(6, "D"), first_day))
    return out


def _weekly(session: Session, codes: list[str], since: date, until: date
            ) -> tuple[NDArray[np.datetime64], FloatArray]:
    """Issues per item and ISO week (Monday start) from ``since`` to ``until``, summed per
    day in SQL and bucketed here."""
    index = {c: i for i, c in enumerate(codes)}
    day = func.date(Movement.ts)
    rows = session.exec(
        select(Part.code, day, func.sum(Movement.qty))
        .join(Part, Part.id == Movement.part_id)
        .where(Movement.kind == "issue")
        .group_by(Part.code, day)
    ).all()
    dates, series, qty = [], [], []
    for code, d, q in rows:
        if code in index:
            dates.append(_day(d))
            series.append(index[code])
            qty.append(-float(q))
    mat = dm.bucket_demand(np.array(dates, dtype="datetime64[D]"),
                           np.array(series, dtype=np.int64), np.array(qty), n_series=len(codes),
                           freq="W", start=np.datetime64(since, "D"),
                           end=np.datetime64(until, "D"))
    return mat.periods, mat.values


def _job_lines(session: Session, codes: list[str], groups: list[tuple[str, str]],
               months: NDArray[np.datetime64]) -> FloatArray:
    """Units of each item taken by the jobs of each (family, level) group per month."""
    out = np.zeros((len(groups), len(codes), months.size))
    if not months.size:
        return out
    gi = {g: i for i, g in enumerate(groups)}
    ci = {c: i for i, c in enumerate(codes)}
    y, m = extract("year", ServiceJob.day), extract("month", ServiceJob.day)
    rows = session.exec(
        select(ForkFamily.code, ServiceJob.service_level, Part.code, y, m, func.sum(JobLine.qty))
        .join(ServiceJob, ServiceJob.id == JobLine.job_id)
        .join(ForkFamily, ForkFamily.id == ServiceJob.fork_family_id)
        .join(Part, Part.id == JobLine.part_id)
        .where(col(ServiceJob.voided_at).is_(None))
        .group_by(ForkFamily.code, ServiceJob.service_level, Part.code, y, m)
    ).all()
    for fam, level, code, yy, mm, q in rows:
        g, c = gi.get((fam, level)), ci.get(code)
        t = _month_no(yy, mm, months[0])
        if g is not None and c is not None and 0 <= t < months.size:
            out[g, c, t] += float(q)
    return out


def _visits(session: Session, until: date) -> Visits:
    rows = session.exec(
        select(ServiceJob.fork_ref, ForkFamily.code, ServiceJob.day, ServiceJob.service_level,
               ServiceJob.ride_hours)
        .join(ForkFamily, ForkFamily.id == ServiceJob.fork_family_id)
        .where(ServiceJob.day <= until, col(ServiceJob.voided_at).is_(None))
        .order_by(ServiceJob.day, ServiceJob.id)
    ).all()
    return Visits.from_records((r[0], r[1], _day(r[2]), r[3], r[4]) for r in rows)


def _unit_costs(session: Session) -> dict[str, float]:
    """Cost of each part's preferred supplier item (the first listed); for a part no
    supplier lists, the cost of its latest received lot."""
    out: dict[str, float] = {}
    for code, cost in session.exec(
        select(Part.code, Lot.unit_cost).join(Part, Part.id == Lot.part_id)
        .order_by(Lot.received, Lot.id)
    ):
        out[code] = float(cost)
    first = (select(SupplierItem.part_id, func.min(SupplierItem.id).label("sid"))
             .group_by(SupplierItem.part_id).subquery())
    rows = session.exec(
        select(Part.code, SupplierItem.unit_cost)
        .join(first, first.c.sid == SupplierItem.id)
        .join(Part, Part.id == SupplierItem.part_id)
    ).all()
    out.update({code: float(cost) for code, cost in rows})
    return out


def last_complete_period(today: date, freq: dm.Freq) -> tuple[date, date]:
    """(last day of the history, first day of the forecast): the current month (or ISO week)
    is partly over, so the history ends before it and the forecast starts with it."""
    if freq == "W":
        first = today - timedelta(days=today.weekday())
    else:
        first = today.replace(day=1)
    return first - timedelta(days=1), first
