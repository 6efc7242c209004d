"""Demand history out of the database, as plain arrays for the forecaster.

What a shop "used" is what left the shelf: issue movements (to jobs and direct issues, not
adjustments, count variances or moves). The month of a movement is its UTC timestamp's
month; grouping happens in SQL, so a large ledger is not pulled into memory.

Two views:
- :func:`item_demand` per stock item as it left the shelf (a kit issued whole counts as one
  kit; a kit assembled from loose seals counts as its seals). This is what replenishes.
- :func:`job_counts` jobs per month by fork family and service level, for pooled seasonal
  indices and the installed base of forks that come back. A voided job
  (``ServiceJob.voided_at``) is no job: every job query here and in
  :mod:`inventory.forecast.data` leaves it out.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
from numpy.typing import NDArray
from sqlalchemy import extract, func
from sqlmodel import Session, col, select

from inventory.core.model import KitSpec, PartKind, ServiceLevel
from inventory.core.tables import ForkFamily, Kit, KitLine, Movement, Part, ServiceJob


@dataclass(frozen=True)
class ItemDemand:
    """Monthly demand ``values[i, t]`` of ``codes[i]`` in the month ``months[t]``.

    ``start[i]`` is the index of the month of the item's first movement of any kind (its
    first receipt or use); months before it are "not yet stocked", not zero demand.
    ``start[i] == len(months)`` for an item that has never moved.
    """

    codes: list[str]
    kinds: list[str]
    months: NDArray[np.datetime64]  # datetime64[M]
    values: NDArray[np.float64]
    start: NDArray[np.int64]

    def row(self, code: str) -> NDArray[np.float64]:
        return self.values[self.codes.index(code)]


def _month_span(first: date, last: date) -> NDArray[np.datetime64]:
    a = np.datetime64(first.strftime("%Y-%m"), "M")
    b = np.datetime64(last.strftime("%Y-%m"), "M")
    return np.arange(a, b + 1, dtype="datetime64[M]")


def _month_no(year: int, month: int, months: NDArray[np.datetime64]) -> int:
    if not months.size:  # no whole month of history yet: nothing falls inside the span
        return -1
    return int((np.datetime64(f"{int(year):04d}-{int(month):02d}", "M") - months[0]).astype(int))


def item_demand(session: Session, *, until: date, since: date | None = None,
                include_kits: bool = True) -> ItemDemand:
    """Monthly issues per stock item from ``since`` (default: the first movement) through
    the month of ``until`` (inclusive). Every non-kit part (and kit, if asked) gets a row."""
    q = select(Part.id, Part.code, Part.kind).order_by(Part.code)
    if not include_kits:
        q = q.where(Part.kind != PartKind.KIT.value)
    parts = list(session.exec(q))
    index = {pid: i for i, (pid, _, _) in enumerate(parts)}
    first_ts = session.exec(select(func.min(Movement.ts))).one()
    if since is None:
        since = first_ts.date() if first_ts is not None else until
    months = _month_span(since, until)
    values = np.zeros((len(parts), len(months)))
    start = np.full(len(parts), len(months), dtype=np.int64)
    y, m = extract("year", Movement.ts), extract("month", Movement.ts)
    rows = session.exec(
        select(Movement.part_id, y, m, func.sum(Movement.qty))
        .where(Movement.kind == "issue")
        .group_by(Movement.part_id, y, m)
    )
    for pid, yy, mm, qty in rows:
        i = index.get(pid)
        t = _month_no(yy, mm, months)
        if i is not None and 0 <= t < len(months):
            values[i, t] += -float(qty)
    firsts = session.exec(
        select(Movement.part_id, func.min(Movement.ts)).group_by(Movement.part_id)
    )
    for pid, ts in firsts:
        i = index.get(pid)
        if i is not None:
            start[i] = max(0, min(len(months), _month_no(ts.year, ts.month, months)))
    return ItemDemand([c for _, c, _ in parts], [k for _, _, k in parts], months, values, start)


@dataclass(frozen=True)
class JobCounts:
    """Jobs per month: ``values[g, t]`` for group ``groups[g]`` = (fork family, level)."""

    groups: list[tuple[str, str]]
    months: NDArray[np.datetime64]
    values: NDArray[np.float64]


def job_counts(session: Session, *, until: date, since: date | None = None) -> JobCounts:
    y, m = extract("year", ServiceJob.day), extract("month", ServiceJob.day)
    rows = list(session.exec(
        select(ForkFamily.code, ServiceJob.service_level, y, m, func.count())
        .join(ForkFamily, ForkFamily.id == ServiceJob.fork_family_id)
        .where(col(ServiceJob.voided_at).is_(None))
        .group_by(ForkFamily.code, ServiceJob.service_level, y, m)
    ))
    if since is None:
        first = session.exec(select(func.min(ServiceJob.day))
                             .where(col(ServiceJob.voided_at).is_(None))).one()
        since = first or until
    months = _month_span(since, until)
    groups = sorted({(f, s) for f, s, _, _, _ in rows})
    gi = {g: i for i, g in enumerate(groups)}
    values = np.zeros((len(groups), len(months)))
    for f, s, yy, mm, n in rows:
        t = _month_no(yy, mm, months)
        if 0 <= t < len(months):
            values[gi[(f, s)], t] += n
    return JobCounts(groups, months, values)


def kit_specs(session: Session) -> list[KitSpec]:
    """Every kit with its bill of materials, as plain records."""
    kit_part = Part.__table__.alias("kit_part")
    rows = session.exec(
        select(kit_part.c.code, ForkFamily.code, Kit.service_level, Part.code, KitLine.qty)
        .join(Kit, Kit.part_id == kit_part.c.id)
        .join(ForkFamily, ForkFamily.id == Kit.fork_family_id)
        .join(KitLine, KitLine.kit_id == Kit.id)
        .join(Part, Part.id == KitLine.part_id)
        .order_by(kit_part.c.code, Part.code)
    )
    kits: dict[str, tuple[str, str, list[tuple[str, int]]]] = {}
    for kcode, fork, level, pcode, qty in rows:
        kits.setdefault(kcode, (fork, level, []))[2].append((pcode, int(qty)))
    return [KitSpec(code, fork, ServiceLevel(level), tuple(lines))
            for code, (fork, level, lines) in kits.items()]
