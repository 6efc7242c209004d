"""Installed base: forks the shop has serviced come back, and what they will need.

Pure functions over a table of past service visits (anonymous fork reference, fork family,
day, service level, ride hours since the previous service as the customer reports them).

Model, per customer fork (all steps use only visits before the cutoff):

1. Ride rate (hours per riding day). Each pair of consecutive visits with reported hours
   gives hours / riding days, where a calendar day counts as ``season[month]`` riding
   days (optional monthly riding weights with mean 1, e.g. the shop's seasonal profile:
   riders ride more in summer, so hours pile up faster then; without weights every day
   counts 1). A fork's rate is a credibility-weighted mean of its own intervals and the
   pooled rate (the median of every observed interval's rate):
   ``(sum hours + pooled * prior_days) / (sum days + prior_days)``, so a fork seen once
   rides like the median customer and a fork seen often rides like itself.
2. Next service due. Every service includes the lower legs (common practice: a full
   service is done with the lower legs open), so the lower-leg clock restarts at every
   visit: the next visit is due when ``lower_leg_hours / rate`` riding days have passed
   since the last one. A full
   service (air spring or damper) is due at that visit if by then the hours since the last
   full service reach ``full_hours`` or the days since it reach ``full_days``; for a fork
   whose last full service is not in the history the state is "unknown".
   (Intervals: lower legs about every 50 ride hours, full service about every 100 to 200
   hours or yearly; common practice, REFERENCE.md section 9; all settable.)
3. Whether and when it comes back, measured on the shop's own history: of the visits
   whose due month lies at least ``window_months`` before the cutoff (so their outcome is
   known), the share followed by another visit within that window is the return
   probability ``p``; the months between the due month and the actual return give an
   empirical lag distribution (negative = came early).
4. Forecast. A fork due in month d that has not come back by the cutoff month c returns
   in month m with probability ``p * lag(m - d) / (1 - p + p * P(lag >= c - d))`` (Bayes:
   not having come back yet lowers the chance that it will). Later visits within the
   horizon follow by renewal: after a return in month j the next is due
   ``lower_leg_hours / rate`` later, with the same ``p`` and lag distribution.
5. Level of the returning visit: the shop's observed shares of lower-leg, air-spring and
   damper visits among returns whose full service was due / not due / unknown, per fork
   family pulled towards the pooled shares by ``share_prior`` pseudo-visits and limited to
   the levels the family has had.

The result is expected returning-fork jobs per (fork family, service level) and month;
:func:`usage_from_kits` and the application layer turn jobs into part demand, and
:func:`choose_blend` picks the weight of this signal against the time-series forecast by
a backtest.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.core.model import KitSpec
from inventory.forecast.accuracy import rmsse

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


def _month(day: NDArray[np.datetime64] | np.datetime64) -> IntArray:
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
            w = (sw / sw.mean())[_month(days) % 12]
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


def _interval_rates(v: Visits, order: IntArray, clock: RideClock
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
    ih, idays, same = _interval_rates(v, order, clock)
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


# -- return probability, lags and level shares ---------------------------------------------------


@dataclass(frozen=True)
class ReturnModel:
    """What the history says about returns.

    ``p``: share of visits (with a known outcome) followed by a return within the window;
    ``lags``: lag values (months after the due month) and ``pmf`` their probabilities;
    ``shares``: (family, flag) -> {level: share} for the level of the returning visit
    (flag :data:`ANY` for later returns); ``n_visits``: visits the measurement used;
    ``fallback``: True when too few outcomes were known and all visits due before the
    cutoff were used (``p`` is then a lower bound).
    """

    p: float
    lags: IntArray
    pmf: FloatArray
    shares: dict[tuple[str, int], dict[str, float]]
    n_visits: int
    fallback: bool

    def lag_pmf(self, lag: ArrayLike) -> FloatArray:
        """P(lag = x) for integer month lags ``x`` (0 outside the support)."""
        x = np.asarray(lag, dtype=np.int64)
        out = np.zeros(x.shape)
        if self.lags.size:
            i = x - self.lags[0]
            ok = (i >= 0) & (i < self.lags.size)
            out[ok] = self.pmf[i[ok]]
        return out

    def lag_survival(self, lag: ArrayLike) -> FloatArray:
        """P(lag >= x)."""
        x = np.asarray(lag, dtype=np.int64)
        if not self.lags.size:
            return np.zeros(x.shape)
        tail = np.cumsum(self.pmf[::-1])[::-1]  # tail[i] = P(lag >= lags[i])
        i = np.clip(x - self.lags[0], 0, self.lags.size)
        return np.where(i >= self.lags.size, 0.0, tail[np.minimum(i, self.lags.size - 1)])


def fit_return_model(
    timeline: Timeline,
    *,
    cutoff: date | np.datetime64,
    options: ReturnOptions | None = None,
) -> ReturnModel:
    """Return probability, lag distribution and level shares from a :func:`service_timeline`."""
    opt = options or ReturnOptions()
    c = int(_month(np.datetime64(cutoff, "D")))
    due_m = _month(timeline.due)
    has_next = ~np.isnat(timeline.next_day)
    next_m = np.where(has_next, _month(np.where(has_next, timeline.next_day,
                                                timeline.day)), 0)
    lag = next_m - due_m
    known = due_m + opt.window_months < c
    fallback = int(known.sum()) < opt.min_visits
    if fallback:
        known = due_m < c
    returned = has_next & (lag <= opt.window_months)
    lags = np.arange(-opt.early_months, opt.window_months + 1, dtype=np.int64)
    if known.any():
        p = float(returned[known].mean())
        got = np.clip(lag[known & returned], -opt.early_months, opt.window_months)
        counts = np.bincount(got - lags[0], minlength=lags.size).astype(float)
        pmf = counts / counts.sum() if counts.sum() > 0 else np.zeros(lags.size)
    else:
        p, pmf = 0.0, np.zeros(lags.size)
    return ReturnModel(p, lags, pmf, _level_shares(timeline, opt), int(known.sum()), fallback)


def _level_shares(t: Timeline, opt: ReturnOptions) -> dict[tuple[str, int], dict[str, float]]:
    """Level of the returning visit per (family, flag), shrunk to the pooled shares."""
    has_next = t.next_level != ""
    all_levels = sorted(set(t.level.tolist()))
    fam_levels = {f: sorted(set(t.level[t.family == f].tolist())) for f in np.unique(t.family)}

    def counts(mask: NDArray[np.bool_]) -> FloatArray:
        nl = t.next_level[mask]
        return np.array([float((nl == lv).sum()) for lv in all_levels])

    pooled_any = counts(has_next)
    base = (pooled_any / pooled_any.sum() if pooled_any.sum() > 0
            else np.full(len(all_levels), 1.0 / max(len(all_levels), 1)))
    out: dict[tuple[str, int], dict[str, float]] = {}
    for flag in (NOT_DUE, DUE, UNKNOWN, ANY):
        sel = has_next if flag == ANY else has_next & (t.flag == flag)
        pc = counts(sel)
        pooled = _shrunk(pc, base, opt.share_prior)
        for fam, levels in fam_levels.items():
            s = _shrunk(counts(sel & (t.family == fam)), pooled, opt.share_prior)
            allowed = np.isin(all_levels, levels)
            s = np.where(allowed, s, 0.0)
            s = s / s.sum() if s.sum() > 0 else allowed / max(allowed.sum(), 1)
            out[(str(fam), flag)] = {lv: float(x) for lv, x in zip(all_levels, s, strict=True)
                                     if x > 0}
    return out


def _shrunk(counts: FloatArray, prior: FloatArray, weight: float) -> FloatArray:
    """Shares from counts pulled towards ``prior`` by ``weight`` pseudo-counts."""
    total = counts.sum() + weight
    return (counts + weight * prior) / total if total > 0 else prior.copy()


# -- the forecast -------------------------------------------------------------------------------


def return_probabilities(
    due_month: ArrayLike,
    first_month: int,
    horizon: int,
    p: float,
    model: ReturnModel,
) -> FloatArray:
    """P(a fork due in ``due_month`` that has not come back before ``first_month`` returns
    in month ``first_month + j``), ``(forks, horizon)``; months as integers.

    Bayes on "not back yet": ``p * lag(m - d) / (1 - p + p * P(lag >= first_month - d))``.
    """
    d = np.asarray(due_month, dtype=np.int64)
    m = first_month + np.arange(horizon, dtype=np.int64)
    surv = model.lag_survival(first_month - d)
    denom = 1.0 - p + p * surv
    num = p * model.lag_pmf(m[None, :] - d[:, None])
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(denom[:, None] > 0, num / np.where(denom > 0, denom, 1.0)[:, None], 0.0)


@dataclass(frozen=True)
class ReturnForecast:
    """Expected jobs from returning forks: ``values[g, j]`` for ``groups[g]`` = (family,
    level) in month ``first_month + j`` (``months`` as datetime64[M]); with the return
    model and a few facts for the report."""

    groups: list[tuple[str, str]]
    months: NDArray[np.datetime64]
    values: FloatArray
    model: ReturnModel
    n_forks: int
    pooled_rate: float
    intervals: ServiceIntervals = field(default_factory=ServiceIntervals)

    def by_family(self) -> tuple[list[str], FloatArray]:
        fams = sorted({f for f, _ in self.groups})
        out = np.zeros((len(fams), self.values.shape[1]))
        for g, (f, _) in enumerate(self.groups):
            out[fams.index(f)] += self.values[g]
        return fams, out


def expected_returns(
    visits: Visits,
    *,
    cutoff: date | np.datetime64,
    horizon: int,
    intervals: ServiceIntervals | None = None,
    options: ReturnOptions | None = None,
    groups: Sequence[tuple[str, str]] | None = None,
    season: ArrayLike | None = None,
) -> ReturnForecast:
    """Expected returning-fork jobs per (family, level) for ``horizon`` months from the
    month of ``cutoff`` (visits on or after ``cutoff`` are ignored: pass the first day of
    the first forecast month). ``groups`` fixes the row order (default: those seen);
    ``season``: monthly riding weights (see :class:`RideClock`)."""
    iv = intervals or ServiceIntervals()
    opt = options or ReturnOptions()
    cut = np.datetime64(cutoff, "D")
    c = int(_month(cut))
    t = service_timeline(visits, cutoff=cut, intervals=iv, options=opt, season=season)
    model = fit_return_model(t, cutoff=cut, options=opt)
    known = sorted({(str(f), str(lv)) for f, lv in zip(t.family, t.level, strict=True)})
    gl = list(groups) if groups is not None else known
    gi = {g: i for i, g in enumerate(gl)}
    values = np.zeros((len(gl), horizon))
    real = np.array([not f.startswith("~") for f in t.fork.tolist()], dtype=bool)
    last = t.last & real
    months = np.arange(c, c + horizon).astype("datetime64[M]")
    if not last.any() or horizon < 1 or model.p <= 0:
        return ReturnForecast(gl, months, values, model, int(last.sum()), t.pooled_rate, iv)
    due_m = _month(t.due[last])
    fam = t.family[last]
    flag = t.flag[last]
    gap = np.rint(iv.lower_leg_hours / np.maximum(t.rate[last], 1e-9) / DAYS_PER_MONTH)
    gap = np.maximum(gap, 1).astype(np.int64)
    first = return_probabilities(due_m, c, horizon, model.p, model)
    later = np.zeros_like(first)
    prev = first
    j = np.arange(horizon)
    for _ in range(max(opt.max_returns, 1) - 1):
        # next visit due gap months after a return in month j'; at least a month later
        nxt = np.zeros_like(first)
        for jp in range(horizon - 1):
            lagm = j[None, jp + 1:] - jp - gap[:, None]
            nxt[:, jp + 1:] += prev[:, jp:jp + 1] * model.p * model.lag_pmf(lagm)
        later += nxt
        prev = nxt
    for f in np.unique(fam):
        rows = fam == f
        for fl in (NOT_DUE, DUE, UNKNOWN):
            sel = rows & (flag == fl)
            if not sel.any():
                continue
            for lv, share in model.shares[(str(f), fl)].items():
                if (str(f), lv) in gi:
                    values[gi[(str(f), lv)]] += share * first[sel].sum(axis=0)
        for lv, share in model.shares[(str(f), ANY)].items():
            if (str(f), lv) in gi:
                values[gi[(str(f), lv)]] += share * later[rows].sum(axis=0)
    return ReturnForecast(gl, months, values, model, int(last.sum()), t.pooled_rate, iv)


def first_visit_counts(
    visits: Visits,
    months: NDArray[np.datetime64],
    groups: Sequence[tuple[str, str]],
) -> FloatArray:
    """Visits of forks not seen before (or with no reference) per (family, level) group
    and month: ``(groups, months)``; the newcomers the installed base cannot foresee."""
    v = visits
    order = np.lexsort((v.day, v.fork))
    fork = v.fork[order]
    new = np.ones(order.size, dtype=bool)
    new[1:] = (fork[1:] != fork[:-1]) | (fork[1:] == "")
    new[fork == ""] = True
    gi = {g: i for i, g in enumerate(groups)}
    m0 = int(np.asarray(months, dtype="datetime64[M]").astype(np.int64)[0])
    out = np.zeros((len(groups), len(months)))
    mm = _month(v.day[order]) - m0
    for k in np.flatnonzero(new):
        g = gi.get((str(v.family[order][k]), str(v.level[order][k])))
        if g is not None and 0 <= mm[k] < len(months):
            out[g, mm[k]] += 1.0
    return out


# -- jobs -> items, and the blend ------------------------------------------------------------------


def usage_from_kits(
    kits: Sequence[KitSpec],
    groups: Sequence[tuple[str, str]],
    items: Sequence[str],
    *,
    with_lower_leg: bool = True,
) -> FloatArray:
    """Kit items used per job of each (family, level) group, by the kit rule: a job of
    level L on family F takes F's L kit, and (``with_lower_leg``, common practice: a full
    service opens the lower legs) F's lower-leg kit too. ``(groups, items)``; kits not in
    ``items`` are skipped."""
    col = {c: j for j, c in enumerate(items)}
    kit_of = {(k.fork, str(k.service_level)): k.code for k in kits}
    u = np.zeros((len(groups), len(items)))
    for g, (fam, level) in enumerate(groups):
        wanted = [level] + ([LOWER_LEG] if with_lower_leg and level != LOWER_LEG else [])
        for lv in wanted:
            code = kit_of.get((fam, lv))
            if code in col:
                u[g, col[code]] += 1.0
    return u


@dataclass(frozen=True)
class BlendChoice:
    """The weight of the installed-base signal and the backtest that chose it.

    ``scores``: mean RMSSE over series and origins per weight tried; ``ts`` / ``ib`` /
    ``blend``: the scores at weight 0, 1 and the chosen one; ``reason``: one sentence.
    """

    weight: float
    scores: dict[float, float]
    ts: float
    ib: float
    blend: float
    origins: int
    reason: str


def choose_blend(
    actual: Sequence[FloatArray],
    ts: Sequence[FloatArray],
    ib: Sequence[FloatArray],
    history: Sequence[FloatArray],
    *,
    weights: Sequence[float] = tuple(np.round(np.linspace(0.0, 1.0, 11), 2)),
    min_gain: float = 0.01,
) -> BlendChoice:
    """Weight w of ``(1 - w) * ts + w * ib`` with the least mean RMSSE over rolling origins.

    Each list entry is one origin: ``actual``, ``ts``, ``ib`` ``(n, h)`` and ``history``
    ``(n, T_o)`` the data before it (the RMSSE scale). RMSSE because squared error is
    minimised by the mean, which is what the stock model needs (as in the method
    selection). A weight above zero is kept only if it improves the score of the
    time-series forecast alone by at least ``min_gain`` (a fraction): a signal that does
    not clearly help is left out.
    """
    if not actual:
        return BlendChoice(0.0, {}, np.nan, np.nan, np.nan, 0,
                           "no backtest origin: history too short to judge the installed base")

    def score(w: float) -> float:
        vals = [rmsse(a, (1 - w) * t + w * b, hst)
                for a, t, b, hst in zip(actual, ts, ib, history, strict=True)]
        x = np.concatenate(vals)
        x = x[np.isfinite(x)]
        return float(x.mean()) if x.size else np.nan

    scores = {float(w): score(float(w)) for w in weights}
    s0 = scores.get(0.0, score(0.0))
    s1 = scores.get(1.0, score(1.0))
    best = min(scores, key=lambda w: (np.inf if not np.isfinite(scores[w]) else scores[w], w))
    sb = scores[best]
    if not np.isfinite(s0) or not np.isfinite(sb):
        return BlendChoice(0.0, scores, s0, s1, s0, len(actual),
                           "no series with a scale to judge the installed base on")
    if best == 0.0 or sb > s0 * (1.0 - min_gain):
        gain = (s0 - sb) / s0 if s0 > 0 else 0.0
        return BlendChoice(0.0, scores, s0, s1, s0, len(actual),
                           f"time series alone: the best blend (weight {best:.1f}) changes the "
                           f"backtest RMSSE by {-100 * gain:+.1f} %, less than the "
                           f"{100 * min_gain:.0f} % needed (installed base alone {s1:.3f})")
    return BlendChoice(best, scores, s0, s1, sb, len(actual),
                       f"weight {best:.1f} on the installed base: backtest RMSSE {s0:.3f} -> "
                       f"{sb:.3f} ({100 * (sb - s0) / s0:+.1f} %) over {len(actual)} origins "
                       f"(installed base alone {s1:.3f})")


@dataclass(frozen=True)
class ClassBlend:
    """Blend weights per SBC class (as the methods are chosen per class): ``weights`` per
    series, ``choices`` per class with at least ``min_series`` series, ``pooled`` for the
    rest; ``ts`` / ``blend``: mean RMSSE over every series and origin without and with the
    chosen weights."""

    weights: FloatArray
    choices: dict[str, BlendChoice]
    pooled: BlendChoice
    ts: float
    blend: float


def choose_blend_by_class(
    actual: Sequence[FloatArray],
    ts: Sequence[FloatArray],
    ib: Sequence[FloatArray],
    history: Sequence[FloatArray],
    labels: ArrayLike,
    *,
    min_series: int = 5,
    min_gain: float = 0.01,
) -> ClassBlend:
    """:func:`choose_blend` per class of ``labels``; classes with fewer than ``min_series``
    series take the pooled weight."""
    lab = np.asarray(labels).astype(str)
    pooled = choose_blend(actual, ts, ib, history, min_gain=min_gain)
    w = np.full(lab.size, pooled.weight)
    choices: dict[str, BlendChoice] = {}
    for c in np.unique(lab):
        rows = lab == c
        if rows.sum() < min_series:
            continue
        ch = choose_blend([a[rows] for a in actual], [t[rows] for t in ts],
                          [b[rows] for b in ib], [h[rows] for h in history], min_gain=min_gain)
        if np.isfinite(ch.ts):
            choices[str(c)] = ch
            w[rows] = ch.weight

    def score(weights: FloatArray) -> float:
        vals = [rmsse(a, (1 - weights[:, None]) * t + weights[:, None] * b, hst)
                for a, t, b, hst in zip(actual, ts, ib, history, strict=True)]
        x = np.concatenate(vals) if vals else np.zeros(0)
        x = x[np.isfinite(x)]
        return float(x.mean()) if x.size else float("nan")

    return ClassBlend(w, choices, pooled, score(np.zeros(lab.size)), score(w))
