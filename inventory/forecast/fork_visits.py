"""Installed base, part 1: past service visits and each fork's timeline.

The visits (:class:`Visits`), the service intervals and return-model knobs, the riding
clock and :func:`service_timeline`: ride rate, next due day and full-service state after
every visit. The model is described in :mod:`inventory.forecast.installed_base`.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

LOWER_LEG = "lower_leg"
NOT_DUE, DUE, UNKNOWN, ANY = 0, 1, 2, 3
FLAG_NAMES = {NOT_DUE: "full service not due", DUE: "full service due",
              UNKNOWN: "last full service unknown", ANY: "any"}
DAYS_PER_MONTH = 365.25 / 12


# -- inputs and options ------------------------------------------------------------------------


@dataclass(frozen=True)
class Visits:
    """Past service visits as parallel arrays (one entry per job).

    ``fork``: anonymous customer fork reference ("" when the job has none: such visits
    count as new customers and never as returns); ``hours``: ride hours since the previous
    service as reported (NaN when not reported).
    """

    fork: NDArray[np.str_]
    family: NDArray[np.str_]
    day: NDArray[np.datetime64]
    level: NDArray[np.str_]
    hours: FloatArray

    @classmethod
    def from_records(
        cls, records: Iterable[tuple[str | None, str, date | str, str, float | None]]
    ) -> Visits:
        """From ``(fork_ref, family, day, level, hours)`` tuples."""
        rows = list(records)
        return cls(
            np.array([r[0] or "" for r in rows], dtype=str),
            np.array([r[1] for r in rows], dtype=str),
            np.array([np.datetime64(r[2], "D") for r in rows], dtype="datetime64[D]"),
            np.array([str(r[3]) for r in rows], dtype=str),
            np.array([np.nan if r[4] is None else float(r[4]) for r in rows], dtype=float),
        )

    def __len__(self) -> int:
        return int(self.day.size)

    def before(self, cutoff: date | np.datetime64) -> Visits:
        """The visits strictly before ``cutoff``."""
        keep = self.day < np.datetime64(cutoff, "D")
        return Visits(self.fork[keep], self.family[keep], self.day[keep], self.level[keep],
                      self.hours[keep])


@dataclass(frozen=True)
class ServiceIntervals:
    """Service intervals (common practice, REFERENCE.md section 9; the maker's data wins).

    - ``lower_leg_hours``: lower-leg service about every 50 ride hours.
    - ``full_hours`` / ``full_days``: full service (air spring, damper) every 100 to 200
      hours, here the middle, 150, or yearly, whichever comes first.
    - ``full_levels``: the service levels that count as a full service.
    """

    lower_leg_hours: float = 50.0
    full_hours: float = 150.0
    full_days: float = 365.0
    full_levels: tuple[str, ...] = ("air_spring", "damper")


@dataclass(frozen=True)
class ReturnOptions:
    """Knobs of the return model, with their defaults.

    - ``prior_days``: how many days of observation the pooled ride rate counts for in a
      fork's own rate (120: a fork needs about a season of its own intervals to outweigh
      the shop's median customer).
    - ``default_hours_per_week``: the pooled rate when no fork has two visits with hours
      yet (2 h a week, an assumption: a weekend rider).
    - ``window_months``: a visit counts as followed by a return if the next visit comes
      within this many months after its due month; ``early_months``: returns earlier than
      this before the due month are counted at that lag.
    - ``min_visits``: fewest visits with a known outcome needed to measure ``p`` and the
      lags; with fewer, every visit due before the cutoff is used (``p`` is then a lower
      bound, reported as ``fallback``).
    - ``share_prior``: pseudo-visits pulling a family's level shares to the pooled shares.
    - ``max_returns``: visits per fork followed within the horizon (1 = the next only).
    """

    prior_days: float = 120.0
    default_hours_per_week: float = 2.0
    window_months: int = 12
    early_months: int = 12
    min_visits: int = 30
    share_prior: float = 5.0
    max_returns: int = 3


# -- per-visit timeline ---------------------------------------------------------------------------


def month_index(day: NDArray[np.datetime64] | np.datetime64) -> IntArray:
    return np.asarray(np.asarray(day, dtype="datetime64[D]").astype("datetime64[M]")
                      .astype(np.int64))


@dataclass(frozen=True)
class Timeline:
    """Every visit before the cutoff, sorted by fork then day, with what was known then.

    ``rate``: the fork's ride rate (h/day) estimated from its intervals up to this visit;
    ``due``: the day its next visit is due; ``flag``: whether a full service is due then
    (:data:`NOT_DUE`, :data:`DUE`, :data:`UNKNOWN`); ``next_day`` / ``next_level``: the
    fork's following visit before the cutoff (NaT / "" when none); ``last``: the fork's
    latest visit. ``pooled_rate``: the shop's median interval rate (h/day).
    """

    fork: NDArray[np.str_]
    family: NDArray[np.str_]
    day: NDArray[np.datetime64]
    level: NDArray[np.str_]
    rate: FloatArray
    due: NDArray[np.datetime64]
    flag: IntArray
    next_day: NDArray[np.datetime64]
    next_level: NDArray[np.str_]
    last: NDArray[np.bool_]
    pooled_rate: float
    n_intervals: int


class RideClock:
    """Cumulative riding days from ``start``: a calendar day in month m counts
    ``season[m - 1]`` riding days (all 1 without a season), so hours = rate x riding days."""

    def __init__(self, start: np.datetime64, end: np.datetime64,
                 season: ArrayLike | None = None) -> None:
        self.start = np.datetime64(start, "D")
        days = np.arange(self.start, np.datetime64(end, "D") + 1, dtype="datetime64[D]")
        if season is None:
            w = np.ones(days.size)
        else:
            sw = np.asarray(season, dtype=float)
            if sw.shape != (12,) or np.any(sw < 0) or sw.sum() <= 0:
                raise ValueError("season must be 12 non-negative monthly weights")
            w = (sw / sw.mean())[month_index(days) % 12]
        self.cum = np.concatenate([[0.0], np.cumsum(w)])  # cum[i] = riding days before day i

    def at(self, day: ArrayLike) -> FloatArray:
        """Riding days from ``start`` to the start of ``day``."""
        i = (np.asarray(day, dtype="datetime64[D]") - self.start).astype(np.int64)
        return self.cum[np.clip(i, 0, self.cum.size - 1)]

    def after(self, day: ArrayLike, riding_days: ArrayLike) -> NDArray[np.datetime64]:
        """The first day by which ``riding_days`` riding days have passed since ``day``."""
        target = self.at(day) + np.asarray(riding_days, dtype=float)
        i = np.minimum(np.searchsorted(self.cum, target - 1e-9, side="left"), self.cum.size - 1)
        return self.start + i.astype("timedelta64[D]")


def interval_rates(v: Visits, order: IntArray, clock: RideClock
                    ) -> tuple[FloatArray, FloatArray, NDArray[np.bool_]]:
    """(hours, riding days, same-fork mask) of the interval ENDING at each sorted visit."""
    fork, day, hours = v.fork[order], v.day[order], v.hours[order]
    same = np.zeros(order.size, dtype=bool)
    same[1:] = (fork[1:] == fork[:-1]) & (fork[1:] != "")
    days = np.zeros(order.size)
    if order.size:
        ride = clock.at(day)
        days[1:] = ride[1:] - ride[:-1]
    ok = same & (days > 0) & np.isfinite(hours) & (hours > 0)
    return np.where(ok, hours, 0.0), np.where(ok, days, 0.0), same


def service_timeline(
    visits: Visits,
    *,
    cutoff: date | np.datetime64,
    intervals: ServiceIntervals | None = None,
    options: ReturnOptions | None = None,
    season: ArrayLike | None = None,
) -> Timeline:
    """Ride rate, next due day and full-service state after every visit before ``cutoff``;
    ``season``: monthly riding weights (see :class:`RideClock`)."""
    iv = intervals or ServiceIntervals()
    opt = options or ReturnOptions()
    v = visits.before(cutoff)
    cut = np.datetime64(cutoff, "D")
    first = v.day.min() if len(v) else cut
    clock = RideClock(first, cut + np.timedelta64(3660, "D"), season)
    # forks without a reference are one-off visits: give each its own key
    fork = np.where(v.fork == "", np.char.add("~", np.arange(len(v)).astype(str)), v.fork)
    v = Visits(fork, v.family, v.day, v.level, v.hours)
    order = np.lexsort((v.day, v.fork)).astype(np.int64)
    ih, idays, same = interval_rates(v, order, clock)
    observed = idays > 0
    pooled = (float(np.median(ih[observed] / idays[observed])) if observed.any()
              else opt.default_hours_per_week / 7.0)
    n = order.size
    rate = np.empty(n)
    flag = np.empty(n, dtype=np.int64)
    due = np.empty(n, dtype="datetime64[D]")
    day = v.day[order]
    level = v.level[order]
    hours = v.hours[order]
    full = np.isin(level, iv.full_levels)
    sum_h = sum_d = 0.0
    last_full: np.datetime64 | None = None
    since_full: float | None = None
    for k in range(n):
        if not same[k]:
            sum_h = sum_d = 0.0
            last_full, since_full = None, None
        sum_h += ih[k]
        sum_d += idays[k]
        rate[k] = (sum_h + pooled * opt.prior_days) / (sum_d + opt.prior_days) \
            if sum_d + opt.prior_days > 0 else pooled
        due[k] = clock.after(day[k], iv.lower_leg_hours / max(rate[k], 1e-9))
        if full[k]:
            last_full, since_full = day[k], 0.0
        elif since_full is not None and same[k]:
            ride = hours[k] if np.isfinite(hours[k]) else rate[k] * float(
                clock.at(day[k]) - clock.at(day[k - 1]))
            since_full += float(ride)
        if last_full is None or since_full is None:
            flag[k] = UNKNOWN
        else:
            days_at_due = float((due[k] - last_full).astype(np.int64))
            flag[k] = DUE if (since_full + iv.lower_leg_hours >= iv.full_hours
                              or days_at_due >= iv.full_days) else NOT_DUE
    has_next = np.zeros(n, dtype=bool)
    has_next[:-1] = same[1:]
    next_day = np.full(n, np.datetime64("NaT"), dtype="datetime64[D]")
    next_level = np.full(n, "", dtype=level.dtype)
    next_day[:-1] = np.where(has_next[:-1], day[1:], np.datetime64("NaT"))
    next_level[:-1] = np.where(has_next[:-1], level[1:], "")
    return Timeline(v.fork[order], v.family[order], day, level, rate, due, flag, next_day,
                    next_level, ~has_next, pooled, int(observed.sum()))
