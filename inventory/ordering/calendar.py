"""Calendar arithmetic for the order planner: expected demand between two dates.

The forecaster gives an expected demand per part and calendar month (seasonal where the
forecast is). The planner needs the expected demand between arbitrary days (now until a
delivery, a delivery until the next one, now until a lot's storage limit), so demand is
spread evenly over the days of each month and integrated: a position ``x`` counts months
from the first forecast month, ``x = 2.5`` being the middle of the third month.

A date's position uses the real length of its month, so a month's forecast is spent over
exactly its own days. Months beyond the forecast horizon repeat the last twelve months (the
seasonal pattern) or, with less than a year, the last month.

Why integrate instead of multiplying a rate by a lead time: before the season the rate
changes month by month, and "operational time" (expected demand elapsed, see
:mod:`inventory.ordering.levels`) turns a seasonal window into the stationary one
that the policy formulas assume.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]

#: Average days per month (365.25 / 12), to turn lead times in days into months.
DAYS_PER_MONTH = 365.25 / 12.0


def month_start(day: date) -> date:
    return day.replace(day=1)


def positions(days: ArrayLike, month0: date) -> FloatArray:
    """Month position of each day counted from ``month0`` (a first of month): whole months
    since ``month0`` plus the elapsed share of the day's own month."""
    d = np.asarray(days, dtype="datetime64[D]")
    m = d.astype("datetime64[M]")
    first = m.astype("datetime64[D]")
    length = ((m + 1).astype("datetime64[D]") - first).astype(np.int64)
    whole = (m - np.datetime64(month0.strftime("%Y-%m"), "M")).astype(np.int64)
    return whole + (d - first).astype(np.int64) / length


def add_days(day: date | ArrayLike, days: ArrayLike) -> NDArray[np.datetime64]:
    """``day`` plus a (fractional) number of days, rounded up to whole days."""
    base = np.asarray(day, dtype="datetime64[D]")
    return base + np.ceil(np.asarray(days, dtype=float) - 1e-9).astype("timedelta64[D]")


def to_date(value: np.datetime64) -> date:
    return value.astype("datetime64[D]").item()


def extend_months(monthly: ArrayLike, months: int) -> FloatArray:
    """``monthly`` (parts, H) extended to at least ``months`` columns by repeating its last
    twelve months (the season), or its last month when it holds less than a year."""
    m = np.atleast_2d(np.asarray(monthly, dtype=float))
    h = m.shape[1]
    if h >= months:
        return m
    if h == 0:
        return np.zeros((m.shape[0], months))
    period = 12 if h >= 12 else 1
    tail = m[:, h - period:]
    reps = int(np.ceil((months - h) / period))
    return np.concatenate([m, np.tile(tail, reps)], axis=1)[:, :months]


@dataclass(frozen=True)
class DemandCalendar:
    """Expected demand per part and month from ``month0`` on: ``monthly[i, t]``.

    :meth:`between` integrates it between two month positions (per part), assuming demand is
    spread evenly over each month's days; :meth:`run_out` finds when a stock runs out.
    """

    month0: date
    monthly: FloatArray

    @classmethod
    def build(cls, month0: date, monthly: ArrayLike, *, months: int = 0) -> DemandCalendar:
        m = np.maximum(extend_months(monthly, months), 0.0)
        return cls(month_start(month0), m)

    @property
    def horizon(self) -> int:
        return int(self.monthly.shape[1])

    def _cum(self) -> FloatArray:
        cum = self.__dict__.get("_cum_cache")
        if cum is None:
            cum = np.concatenate([np.zeros((self.monthly.shape[0], 1)),
                                  np.cumsum(self.monthly, axis=1)], axis=1)
            object.__setattr__(self, "_cum_cache", cum)
        return cum

    def cumulative(self, rows: ArrayLike, at: ArrayLike) -> FloatArray:
        """Expected demand of parts ``rows`` from position 0 up to position ``at``."""
        r = np.asarray(rows, dtype=np.int64)
        x = np.clip(np.asarray(at, dtype=float), 0.0, float(self.horizon))
        x = np.broadcast_to(x, r.shape)
        whole = np.minimum(np.floor(x).astype(np.int64), self.horizon - 1)
        frac = x - whole
        cum = self._cum()
        return cum[r, whole] + frac * self.monthly[r, whole]

    def between(self, rows: ArrayLike, start: ArrayLike, end: ArrayLike) -> FloatArray:
        """Expected demand of parts ``rows`` between positions ``start`` and ``end``
        (0 where ``end <= start``)."""
        a = self.cumulative(rows, start)
        b = self.cumulative(rows, end)
        return np.maximum(b - a, 0.0)

    def run_out(self, rows: ArrayLike, start: ArrayLike, stock: ArrayLike) -> FloatArray:
        """Position at which ``stock`` units, used from ``start`` on at the expected rate,
        are gone; ``inf`` when they outlast the horizon, ``start`` when there are none."""
        r = np.asarray(rows, dtype=np.int64)
        s = np.broadcast_to(np.asarray(start, dtype=float), r.shape)
        q = np.broadcast_to(np.asarray(stock, dtype=float), r.shape)
        cum = self._cum()
        target = self.cumulative(r, s) + q
        # first month boundary at which the cumulative demand reaches the target
        reached = cum[r, 1:] >= target[:, None] - 1e-12
        any_hit = reached.any(axis=1)
        t = np.where(any_hit, reached.argmax(axis=1), 0)
        before = cum[r, t]
        rate = self.monthly[r, t]
        inside = np.where(rate > 0, (target - before) / np.where(rate > 0, rate, 1.0), 0.0)
        out = np.where(any_hit, t + np.clip(inside, 0.0, 1.0), np.inf)
        return np.where(q <= 0, s, np.maximum(out, s))


def position_to_day(month0: date, pos: ArrayLike) -> NDArray[np.datetime64]:
    """Inverse of :func:`positions` (to the day, rounded down)."""
    p = np.asarray(pos, dtype=float)
    finite = np.isfinite(p)
    pp = np.where(finite, p, 0.0)
    whole = np.floor(pp).astype(np.int64)
    m = np.datetime64(month0.strftime("%Y-%m"), "M") + whole.astype("timedelta64[M]")
    first = m.astype("datetime64[D]")
    length = ((m + 1).astype("datetime64[D]") - first).astype(np.int64)
    day = first + np.floor((pp - whole) * length + 1e-9).astype("timedelta64[D]")
    return np.where(finite, day, np.datetime64("NaT", "D"))
