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

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast.fork_visits import (
    ANY,
    DAYS_PER_MONTH,
    DUE,
    FLAG_NAMES,
    LOWER_LEG,
    NOT_DUE,
    UNKNOWN,
    FloatArray,
    IntArray,
    ReturnOptions,
    RideClock,
    ServiceIntervals,
    Timeline,
    Visits,
    month_index,
    service_timeline,
)
from inventory.forecast.ib_blend import (
    BlendChoice,
    ClassBlend,
    choose_blend,
    choose_blend_by_class,
    usage_from_kits,
)
from inventory.forecast.return_model import ReturnModel, fit_return_model

__all__ = [
    "ANY", "DAYS_PER_MONTH", "DUE", "FLAG_NAMES", "LOWER_LEG", "NOT_DUE", "UNKNOWN",
    "BlendChoice", "ClassBlend", "FloatArray", "IntArray", "ReturnForecast", "ReturnModel",
    "ReturnOptions", "RideClock", "ServiceIntervals", "Timeline", "Visits",
    "choose_blend", "choose_blend_by_class", "expected_returns", "first_visit_counts",
    "fit_return_model", "return_probabilities", "service_timeline", "usage_from_kits",
]


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
    c = int(month_index(cut))
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
    due_m = month_index(t.due[last])
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
    mm = month_index(v.day[order]) - m0
    for k in np.flatnonzero(new):
        g = gi.get((str(v.family[order][k]), str(v.level[order][k])))
        if g is not None and 0 <= mm[k] < len(months):
            out[g, mm[k]] += 1.0
    return out
