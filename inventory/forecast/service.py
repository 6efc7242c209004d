"""The forecast use case: demand per part, kit or fork family from the database, with its
range and the demand distribution the planner orders against.

Steps (:func:`forecast_items` for people, :func:`demand_outlook` for the planner):

1. History (:mod:`inventory.forecast.data`): issues per stock item and month (or ISO
   week), jobs and job lines per (fork family, service level), one row per visit.
2. Series: ``by="part"`` parts with kits exploded through their bills of materials (seal
   consumption), ``by="kit"`` kit items as issued, ``by="family"`` jobs per fork family,
   ``by="item"`` every stock item as it left the shelf (kits as kits, loose parts as
   parts: what the planner replenishes). A series starts at its first receipt or use.
3. Season (issue item 4): monthly indices from POOLED job counts (all jobs), by ratio to a
   centred 2x12 moving average (:func:`inventory.forecast.methods.seasonal_indices`). Jobs,
   not item demand, because item units differ (oil in ml would outweigh every seal). The
   series are deseasonalised by the profile, fitted, and reseasonalised; the profile stays
   only if it lowers the rolling-origin RMSSE of the fit by ``seasonal_gain``. Needs two
   years of months (the moving average loses six months at each end); shorter histories
   run without it, and say so.
4. Time series: :func:`inventory.forecast.methods.fit_forecast` (methods per SBC class by
   rolling origin).
5. Installed base (monthly only, :mod:`inventory.forecast.installed_base`): returning forks
   plus newcomers (the trailing 12-month mean of first visits, seasonal) give jobs per
   (family, level) and month; jobs become item demand through the units each kind of job
   took in the history before the origin (the kit rule where a kind of job has no
   history). The blend weight is chosen on the same rolling origins as the methods, for
   the periods they score (6 months); beyond those it tapers to zero over as many again,
   as the installed base knows today's forks, not the returns of customers yet to come.
6. Distribution: a negative binomial per series over lead time + review period whose mean
   is the blended forecast and whose variance law is fitted on the backtest's own errors
   (:func:`inventory.forecast.methods.fit_distribution`).

For the planner (issue 6): :func:`demand_outlook` returns a :class:`DemandOutlook` whose
``dist`` is the per-month :class:`~inventory.forecast.distributions.DemandDistribution` to pass
to :func:`inventory.ordering.policy.order_up_to_levels` with the lead time and review period
in months, and whose :meth:`DemandOutlook.per_period` gives the same for any other cover
(e.g. from now through the season's peak). :func:`lead_time_demand` is the short form.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from datetime import date
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from sqlmodel import Session

from inventory.core.errors import InventoryError
from inventory.forecast import demand as dm
from inventory.forecast import installed_base as ib
from inventory.forecast import methods as fc
from inventory.forecast.accuracy import rmsse
from inventory.forecast.data import DemandHistory, last_complete_period, load_history
from inventory.forecast.distributions import DemandDistribution, negative_binomial

By = Literal["part", "kit", "family", "item"]
FloatArray = NDArray[np.float64]
WEEKS_PER_MONTH = 52.1775 / 12
Progress = Callable[[str], None]


# -- plain records --------------------------------------------------------------------------------


@dataclass(frozen=True)
class SeriesForecast:
    """One series: what it is, its history and forecast per period with a 10-90 % range,
    and its demand over lead time + review (mean and 10/50/90 % quantiles, whole units).
    ``ib_weight``: the installed base's weight in the first forecast periods (its class's).
    ``usage_value``: the last 12 months' demand times the unit cost (jobs for families), to
    rank series."""

    code: str
    kind: str
    cls: str
    method: str
    unit_cost: float | None
    usage_value: float
    history: tuple[float | None, ...]
    forecast: tuple[float, ...]
    low: tuple[int, ...]
    high: tuple[int, ...]
    cover_mean: float
    cover_low: int
    cover_median: int
    cover_high: int
    ib_weight: float = 0.0
    unit: str = "each"

    @property
    def label(self) -> str:
        """The technical method, with the installed-base weight when it was blended in."""
        return self.method + (f" +IB {self.ib_weight:.1f}" if self.ib_weight > 0 else "")

    @property
    def phrase(self) -> str:
        """The method in a manager's words: how the demand was smoothed, what its pattern
        is, and whether the forks due back for service fed it."""
        words = PLAIN_CLASS.get(self.cls, f"smoothed, {self.cls}")
        if self.ib_weight > 0.5 + 1e-9:
            words += ", mostly from forks due back"
        elif self.ib_weight >= 0.5 - 1e-9:
            words += ", half from forks due back"
        elif self.ib_weight > 0:
            words += ", partly from forks due back"
        return words

    def to_dict(self) -> dict[str, Any]:
        return {
            "code": self.code, "kind": self.kind, "unit": self.unit, "class": self.cls,
            "method": self.method, "method_phrase": self.phrase,
            "installed_base_weight": self.ib_weight,
            "unit_cost": self.unit_cost, "usage_value": round(self.usage_value, 2),
            "history": list(self.history), "forecast": [round(x, 3) for x in self.forecast],
            "low": list(self.low), "high": list(self.high),
            "cover": {"mean": round(self.cover_mean, 3), "low": self.cover_low,
                      "median": self.cover_median, "high": self.cover_high},
        }


@dataclass(frozen=True)
class SeasonInfo:
    """The seasonal profile (index per calendar month, mean 1) and whether it was used."""

    used: bool
    profile: tuple[float, ...]
    reason: str
    rmsse_plain: float = float("nan")
    rmsse_seasonal: float = float("nan")

    def to_dict(self) -> dict[str, Any]:
        return {"used": self.used, "profile": [round(x, 3) for x in self.profile],
                "reason": self.reason, "rmsse_plain": _r(self.rmsse_plain),
                "rmsse_seasonal": _r(self.rmsse_seasonal)}


@dataclass(frozen=True)
class InstalledBaseInfo:
    """The installed-base signal: its blend weight (``weight`` pooled over all series,
    ``class_weights`` per SBC class where a class has enough series), why, and what the
    return model found."""

    weight: float
    reason: str
    rmsse_ts: float
    rmsse_ib: float
    rmsse_blend: float
    origins: int
    return_probability: float
    hours_per_week: float
    forks: int
    lag_pmf: dict[int, float]
    fallback: bool
    intervals: dict[str, Any] = field(default_factory=dict)
    class_weights: dict[str, float] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"weight": self.weight, "reason": self.reason, "rmsse_ts": _r(self.rmsse_ts),
                "rmsse_installed_base": _r(self.rmsse_ib), "rmsse_blend": _r(self.rmsse_blend),
                "origins": self.origins, "return_probability": _r(self.return_probability),
                "hours_per_week": _r(self.hours_per_week), "forks": self.forks,
                "lag_pmf": {str(k): round(v, 4) for k, v in self.lag_pmf.items()},
                "fallback": self.fallback, "intervals": self.intervals,
                "class_weights": dict(self.class_weights)}


@dataclass(frozen=True)
class ForecastReport:
    """The forecast of every series of one kind, as plain records."""

    today: date
    by: str
    freq: str
    horizon: int
    history_periods: tuple[date, ...]
    forecast_periods: tuple[date, ...]
    lead_time_months: float
    review_months: float
    cover_periods: float
    quantiles: tuple[float, float]
    series: tuple[SeriesForecast, ...]
    season: SeasonInfo
    installed_base: InstalledBaseInfo | None
    class_choice: dict[str, str]
    seconds: float

    def chosen(self, top: int, codes: Sequence[str] = ()) -> list[SeriesForecast]:
        """The ``top`` series by usage value (those with some), then any named in
        ``codes`` (unknown codes raise :class:`InventoryError`)."""
        ranked = sorted(self.series, key=lambda s: (-s.usage_value, s.code))
        out = [s for s in ranked if s.usage_value > 0][:max(top, 0)]
        by_code = {s.code: s for s in self.series}
        missing = [c for c in codes if c not in by_code]
        if missing:
            raise InventoryError(f"no {self.by} series {', '.join(missing)} in the forecast",
                                 kind="unknown", hint="see `inventory forecast --json` for codes")
        out += [by_code[c] for c in codes if by_code[c] not in out]
        return out

    def to_dict(self) -> dict[str, Any]:
        return {
            "today": self.today.isoformat(), "by": self.by, "freq": self.freq,
            "horizon": self.horizon,
            "history_periods": [d.isoformat() for d in self.history_periods],
            "forecast_periods": [d.isoformat() for d in self.forecast_periods],
            "lead_time_months": self.lead_time_months, "review_months": self.review_months,
            "cover_periods": self.cover_periods, "quantiles": list(self.quantiles),
            "season": self.season.to_dict(),
            "installed_base": None if self.installed_base is None
            else self.installed_base.to_dict(),
            "class_choice": dict(self.class_choice), "seconds": round(self.seconds, 3),
            "series": [s.to_dict() for s in self.series],
        }


def _r(x: float) -> float | None:
    return None if x is None or not np.isfinite(x) else round(float(x), 4)


# -- the outlook (arrays, for the planner) ------------------------------------------------------------


@dataclass(frozen=True)
class DemandOutlook:
    """Forecast arrays for ``codes`` (one row each).

    - ``mean``: expected demand per period for the periods ``periods`` (season and
      installed base included), ``(n, H)``.
    - ``dist``: per-period demand distribution over the cover (lead time + review):
      negative binomial, mean = average of ``mean`` over the first ``cover`` periods.
      ``dist.over(cover)`` is the demand over lead time + review.
    - ``result``: the time-series fit (classes, methods, backtest paths);
      ``fit``: the variance law (a, b per class, cold start); ``history``: the series
      (NaN before start) on ``history_periods``; ``unit_cost``: preferred supplier cost.
    """

    codes: list[str]
    kinds: list[str]
    freq: str
    periods: NDArray[np.datetime64]
    mean: FloatArray
    dist: DemandDistribution
    cover: float
    result: fc.ForecastResult
    fit: fc.DistributionFit
    history: FloatArray
    history_periods: NDArray[np.datetime64]
    season: SeasonInfo
    installed_base: InstalledBaseInfo | None
    unit_cost: list[float | None] = field(default_factory=list)
    ib_weights: FloatArray | None = None

    def per_period(self, periods: ArrayLike) -> DemandDistribution:
        """Per-period distribution for a cover of ``periods`` from the first forecast period
        (scalar or per series; fractions allowed): its mean is the average expected demand
        over those periods, its variance-to-mean ratio the part's from the variance law at
        that volume. ``.over(periods)`` of it is the demand over the cover."""
        k = np.broadcast_to(np.asarray(periods, dtype=float), (len(self.codes),))
        if np.any(k <= 0):
            raise ValueError("cover must be above zero periods")
        h = self.mean.shape[1]
        cum = np.concatenate([np.zeros((len(self.codes), 1)), np.cumsum(self.mean, axis=1)], 1)
        whole = np.minimum(np.floor(k).astype(np.int64), h)
        frac = np.where(whole < h, k - whole, 0.0)
        last = self.mean[np.arange(len(self.codes)), np.minimum(whole, h - 1)]
        extra = np.maximum(k - h, 0.0) * self.mean[:, -1]
        total = cum[np.arange(len(self.codes)), whole] + frac * last + extra
        m = total / k
        labels = self.result.classification.label
        a = np.array([self.fit.a.get(str(c), self.fit.a.get("pooled", 1.0)) for c in labels])
        b = np.array([self.fit.b.get(str(c), self.fit.b.get("pooled", 1.0)) for c in labels])
        vmr = a * np.power(np.maximum(total, 1e-12), b - 1.0)
        never = ~(np.nan_to_num(self.history) > 0).any(axis=1)
        m = np.where(never, self.fit.cold_rate, m)
        vmr = np.where(never, self.fit.cold_vmr, vmr)
        return negative_binomial(m, vmr)


# -- series -----------------------------------------------------------------------------------------


def _first_observed(v: FloatArray) -> NDArray[np.int64]:
    present = ~np.isnan(v)
    return np.where(present.any(axis=1), present.argmax(axis=1), v.shape[1]).astype(np.int64)


@dataclass(frozen=True)
class _Series:
    codes: list[str]
    kinds: list[str]
    y: FloatArray  # (n, T), NaN before start
    # installed base: series demand per job of each group = usage (G, items) @ to_series,
    # or for families the indicator ``family_of`` (G, n)
    to_series: FloatArray | None
    family_of: FloatArray | None
    unit_cost: list[float | None]


#: the demand pattern (Syntetos-Boylan-Croston class) as a manager reads it
PLAIN_CLASS = {
    "smooth": "smoothed, steady",
    "erratic": "smoothed, steady but uneven sizes",
    "intermittent": "smoothed, intermittent",
    "lumpy": "smoothed, intermittent and uneven sizes",
    "no demand": "not sold yet: the rate of new parts",
}


def _scale(kind: str) -> str:
    """Which measuring scale a series is on: oils and greases are counted in ml."""
    return "ml" if kind in ("oil", "grease") else "each"


def _series(hist: DemandHistory, by: By) -> _Series:
    items, kinds = hist.items, hist.kinds
    n_items = len(items)
    if by == "family":
        fams = sorted({f for f, _ in hist.groups} | set(hist.visits.family.tolist()))
        fi = {f: i for i, f in enumerate(fams)}
        per = dm.bucket_demand(hist.visits.day, np.array([fi[f] for f in hist.visits.family],
                                                         dtype=np.int64),
                               np.ones(len(hist.visits)), n_series=len(fams), freq=hist.freq,
                               start=hist.periods[0] if hist.periods.size else None,
                               end=(hist.periods[-1] + _period_len(hist.freq) - 1)
                               if hist.periods.size else None)
        y = per.values[:, :hist.periods.size]
        vals = np.where(y > 0, 1.0, 0.0)
        start = np.where(vals.any(axis=1), vals.argmax(axis=1), y.shape[1])
        ind = np.zeros((len(hist.groups), len(fams)))
        for g, (f, _) in enumerate(hist.groups):
            if f in fi:
                ind[g, fi[f]] = 1.0
        return _Series(fams, ["family"] * len(fams), dm.mask_before_start(y, start), None, ind,
                       [None] * len(fams))
    kit_cols = [i for i, k in enumerate(kinds) if k == "kit"]
    part_cols = [i for i, k in enumerate(kinds) if k != "kit"]
    if by == "item":
        cols = list(range(n_items))
        m = np.eye(n_items)
    elif by == "kit":
        cols = kit_cols
        m = np.eye(n_items)[:, kit_cols]
    elif by == "part":
        cols = part_cols
        m = np.eye(n_items)[:, part_cols]
        kit_specs = {k.code: k for k in hist.kits}
        parts = [items[i] for i in part_cols]
        specs = [kit_specs[items[i]] for i in kit_cols if items[i] in kit_specs]
        rows = [i for i in kit_cols if items[i] in kit_specs]
        if specs:
            bom = dm.bom_matrix(specs, parts)
            m[rows, :] += bom
    else:
        raise InventoryError(f"unknown --by {by!r}", hint="use part, kit, family or item")
    v = hist.values
    start_items = _first_observed(v)
    y = (np.nan_to_num(v).T @ m).T
    contrib = m != 0
    start = np.array([start_items[contrib[:, j]].min() if contrib[:, j].any() else y.shape[1]
                      for j in range(m.shape[1])], dtype=np.int64)
    codes = [items[i] for i in cols]
    return _Series(codes, [kinds[i] for i in cols], dm.mask_before_start(y, start), m, None,
                   [hist.unit_cost.get(c) for c in codes])


def _period_len(freq: str) -> np.timedelta64:
    return np.timedelta64(7, "D") if freq == "W" else np.timedelta64(31, "D")


# -- season -----------------------------------------------------------------------------------------


def job_profile(hist: DemandHistory, upto: int | None = None) -> tuple[FloatArray, str]:
    """Seasonal index per calendar month from pooled job counts of the months before index
    ``upto`` (default all), by ratio to a centred 2x12 moving average; all ones, with the
    reason, when the history cannot support it."""
    months = hist.months[:upto]
    total = hist.jobs[:, :upto].sum(axis=0)
    if months.size < 24:
        n = months.size
        return np.ones(12), (f"season off: {n} month{'s' if n != 1 else ''} of history; the "
                             "profile needs 24 (ratio to a 12-month moving average)")
    if total.sum() <= 0:
        return np.ones(12), "season off: no jobs recorded"
    pos = (months.astype(np.int64) % 12).astype(np.int64)
    idx = fc.seasonal_indices(total[None, :], pos)[0]
    if np.allclose(idx, 1.0):
        return idx, "season off: pooled jobs show no usable profile"
    return idx, "seasonal profile from pooled job counts"


def _origin_windows(f: FloatArray, origins: NDArray[np.int64], h: int) -> FloatArray:
    return np.stack([f[o:o + h] for o in origins]) if origins.size else np.zeros((0, h))


def _score(y: FloatArray, origins: NDArray[np.int64], paths: FloatArray) -> float:
    vals = []
    for s, o in enumerate(origins):
        h = paths.shape[2]
        vals.append(rmsse(np.nan_to_num(y[:, o:o + h]), paths[s], y[:, :o]))
    x = np.concatenate(vals) if vals else np.zeros(0)
    x = x[np.isfinite(x)]
    return float(x.mean()) if x.size else float("nan")


@dataclass(frozen=True)
class _Fit:
    result: fc.ForecastResult  # deseasonalised level when seasonal
    paths: FloatArray  # (O, n, h) backtest paths on the original scale
    season: SeasonInfo
    factors_hist: FloatArray
    seasonal: bool


def _fit_series(y: FloatArray, hist: DemandHistory, options: fc.FitOptions,
                seasonal_gain: float) -> tuple[_Fit, FloatArray]:
    """Fit with and without the job-count profile; keep the profile if the rolling-origin
    backtest says so. The backtest deseasonalises with a profile from the months before the
    first origin only, as the forecast at that origin would have had to. Returns the fit and
    that backtest profile (the installed base's backtest uses it too)."""
    opt = replace(options, seasonal="off")
    plain = fc.fit_forecast(y, options=opt)
    ones = np.ones(y.shape[1])
    profile, reason = job_profile(hist)
    if np.allclose(profile, 1.0) or not plain.origins.size:
        why = reason if np.allclose(profile, 1.0) else "season off: too short to backtest"
        return _Fit(plain, plain.origin_paths, SeasonInfo(False, tuple(profile), why), ones,
                    False), np.ones(12)
    first = hist.periods[int(plain.origins[0])]
    upto = int((np.datetime64(first, "M") - hist.months[0]).astype(int))
    prof_bt, _ = job_profile(hist, upto)
    if np.allclose(prof_bt, 1.0):
        info = SeasonInfo(False, tuple(profile), f"season off: {upto} months before the "
                          "first backtest origin, too few to check the profile (24 needed)")
        return _Fit(plain, plain.origin_paths, info, ones, False), prof_bt
    f_bt = prof_bt[hist.month_of - 1]
    seas = fc.fit_forecast(y / f_bt[None, :], options=opt)
    h = seas.origin_paths.shape[2]
    paths_s = seas.origin_paths * _origin_windows(f_bt, seas.origins, h)[:, None, :]
    s_plain = _score(y, plain.origins, plain.origin_paths)
    s_seas = _score(y, seas.origins, paths_s)
    if np.isfinite(s_seas) and s_seas < s_plain * (1.0 - seasonal_gain):
        f_all = profile[hist.month_of - 1]
        final = fc.fit_forecast(y / f_all[None, :], options=opt)
        info = SeasonInfo(True, tuple(profile), f"{reason}: backtest RMSSE {s_plain:.3f} -> "
                          f"{s_seas:.3f}", s_plain, s_seas)
        return _Fit(final, paths_s, info, f_all, True), prof_bt
    info = SeasonInfo(False, tuple(profile), f"season off: the profile does not lower the "
                      f"backtest RMSSE ({s_plain:.3f} without, {s_seas:.3f} with)", s_plain, s_seas)
    return _Fit(plain, plain.origin_paths, info, ones, False), prof_bt


# -- installed base -------------------------------------------------------------------------------


def _usage(hist: DemandHistory, upto: int) -> FloatArray:
    """Units of each stock item per job of each group, from the jobs of months < ``upto``;
    the kit rule for groups with no job yet. ``(groups, items)``."""
    jobs = hist.jobs[:, :upto].sum(axis=1)
    lines = hist.lines[:, :, :upto].sum(axis=2)
    rule = ib.usage_from_kits(hist.kits, hist.groups, hist.items)
    with np.errstate(divide="ignore", invalid="ignore"):
        seen = lines / np.where(jobs > 0, jobs, 1.0)[:, None]
    return np.where((jobs > 0)[:, None], seen, rule)


def _ib_path(hist: DemandHistory, ser: _Series, origin: int, h: int, profile: FloatArray,
             seasonal: bool, new_counts: FloatArray, intervals: ib.ServiceIntervals,
             options: ib.ReturnOptions) -> tuple[FloatArray, ib.ReturnForecast]:
    """Installed-base demand per series for ``h`` months from month index ``origin``."""
    cutoff = hist.months[0] + origin
    rf = ib.expected_returns(hist.visits, cutoff=cutoff.astype("datetime64[D]"), horizon=h,
                             intervals=intervals, options=options, groups=hist.groups,
                             season=profile if seasonal else None)
    f = profile if seasonal else np.ones(12)
    pos_hist = (hist.months.astype(np.int64) % 12)
    lo = max(0, origin - 12)
    if origin > lo:
        rate = (new_counts[:, lo:origin] / f[pos_hist[lo:origin]][None, :]).mean(axis=1)
    else:
        rate = np.zeros(len(hist.groups))
    fut = (cutoff.astype(np.int64) + np.arange(h)) % 12
    jobs = rf.values + rate[:, None] * f[fut][None, :]
    if ser.family_of is not None:
        return (jobs.T @ ser.family_of).T, rf
    assert ser.to_series is not None
    per_job = _usage(hist, origin) @ ser.to_series  # (G, n)
    return (jobs.T @ per_job).T, rf


# -- the use case ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class ForecastSettings:
    """Options of :func:`forecast_items` / :func:`demand_outlook` that travel together.

    ``quantiles``: the range shown (10 % and 90 %); ``seasonal_gain``: the fraction the
    profile must lower the backtest RMSSE by to be used; ``installed_base``: try the
    installed-base blend (monthly only); ``blend_gain``: the fraction it must gain;
    ``blend_min_series``: a class with fewer series takes the weight pooled over all.
    """

    quantiles: tuple[float, float] = (0.1, 0.9)
    seasonal_gain: float = 0.01
    installed_base: bool = True
    blend_gain: float = 0.01
    blend_min_series: int = 5
    intervals: ib.ServiceIntervals = field(default_factory=ib.ServiceIntervals)
    returns: ib.ReturnOptions = field(default_factory=ib.ReturnOptions)
    fit: fc.FitOptions = field(default_factory=fc.FitOptions)


def demand_outlook(
    session: Session,
    *,
    today: date,
    horizon: int = 6,
    by: By = "item",
    freq: dm.Freq = "M",
    lead_time_months: float = 1.0,
    review_months: float = 1.0,
    settings: ForecastSettings | None = None,
    progress: Progress | None = None,
) -> DemandOutlook:
    """Fit the forecast of every series of ``by`` from the history before ``today``'s month
    (or ISO week); forecast ``horizon`` periods from it (at least the cover)."""
    st = settings or ForecastSettings()
    step = progress or (lambda _msg: None)
    if horizon < 1:
        raise InventoryError(f"horizon must be 1 or more periods, got {horizon}")
    if lead_time_months < 0 or review_months <= 0:
        raise InventoryError("lead time must be >= 0 and review period > 0 months")
    step("reading the history")
    until, first = last_complete_period(today, freq)
    hist = load_history(session, until=until, freq=freq)
    if not hist.periods.size:  # a new shop: its first month is not over yet
        raise InventoryError(f"no complete {'month' if freq == 'M' else 'week'} of history "
                             f"before {today.isoformat()} to forecast from", kind="empty")
    ser = _series(hist, by)
    n, t_len = ser.y.shape
    if t_len < 1 or n == 0 or not (np.nan_to_num(ser.y) > 0).any():
        raise InventoryError(f"nothing to forecast by {by}: no demand recorded before "
                             f"{first.isoformat()}", kind="unknown",
                             hint="record jobs or issues first, or give --today")
    per_month = WEEKS_PER_MONTH if freq == "W" else 1.0
    cover = (lead_time_months + review_months) * per_month
    big_h = max(horizon, int(np.ceil(cover)))
    step("fitting the forecast")
    fit_opt = st.fit
    if freq == "W" and fit_opt == fc.FitOptions():
        # a quarter of weekly origins and horizon, so the backtest spans a change of season
        fit_opt = replace(fit_opt, horizon=13, origins=13)
    fit, prof_bt = _fit_series(ser.y, hist, fit_opt, st.seasonal_gain)
    profile = np.asarray(fit.season.profile, dtype=float)
    res = fit.result
    if freq == "W":
        fut = np.datetime64(first, "D") + np.arange(big_h) * np.timedelta64(7, "D")
        fut_month = (fut + np.timedelta64(3, "D")).astype("datetime64[M]").astype(np.int64) % 12
    else:
        fut = (np.datetime64(first, "M") + np.arange(big_h)).astype("datetime64[D]")
        fut_month = fut.astype("datetime64[M]").astype(np.int64) % 12
    f_fut = profile[fut_month] if fit.seasonal else np.ones(big_h)
    ts_path = res.level[:, None] * f_fut[None, :]
    paths = fit.paths
    ib_info: InstalledBaseInfo | None = None
    ib_weights: FloatArray | None = None
    if st.installed_base and freq == "M" and len(hist.visits) and hist.groups:
        step("installed base: forks coming back")
        new_counts = ib.first_visit_counts(hist.visits, hist.months, hist.groups)
        h_bt = paths.shape[2] if paths.ndim == 3 else 0
        acts, tss, ibs, hsts = [], [], [], []
        for s, o in enumerate(res.origins):
            path_o, _ = _ib_path(hist, ser, int(o), h_bt, prof_bt, fit.seasonal, new_counts,
                                 st.intervals, st.returns)
            acts.append(np.nan_to_num(ser.y[:, o:o + h_bt]))
            tss.append(paths[s])
            ibs.append(path_o)
            hsts.append(ser.y[:, :o])
        labels = res.classification.label
        blend = ib.choose_blend_by_class(acts, tss, ibs, hsts, labels,
                                         min_series=st.blend_min_series,
                                         min_gain=st.blend_gain)
        ib_now, rf = _ib_path(hist, ser, t_len, big_h, profile, fit.seasonal, new_counts,
                              st.intervals, st.returns)
        wv = blend.weights
        ib_weights = wv
        if (wv > 0).any():
            # the backtest judged the signal over h_bt periods: full weight there, then
            # tapering to the time series alone over as many again (the installed base
            # holds today's forks, not the returns of customers who have not come yet)
            t = np.arange(big_h)
            taper = np.clip((2.0 * h_bt - t) / max(h_bt, 1), 0.0, 1.0)
            w = wv[:, None] * taper[None, :]
            ts_path = (1 - w) * ts_path + w * ib_now
            if tss:
                paths = np.stack([(1 - wv[:, None]) * a + wv[:, None] * b
                                  for a, b in zip(tss, ibs, strict=True)])
        m = rf.model
        weights = {c: ch.weight for c, ch in sorted(blend.choices.items())}
        if weights:
            parts = [f"{c} {x:.1f}" for c, x in weights.items()]
            if len(weights) < len(set(labels.tolist())):
                parts.append(f"other classes {blend.pooled.weight:.1f}")
            reason = (f"weights per class {', '.join(parts)}: backtest RMSSE {blend.ts:.3f} -> "
                      f"{blend.blend:.3f} over {blend.pooled.origins} origins (installed base "
                      f"alone {blend.pooled.ib:.3f})")
        else:
            reason = blend.pooled.reason
        ib_info = InstalledBaseInfo(
            blend.pooled.weight, reason, blend.ts, blend.pooled.ib, blend.blend,
            blend.pooled.origins, m.p, rf.pooled_rate * 7.0, rf.n_forks,
            {int(k): float(x) for k, x in zip(m.lags, m.pmf, strict=True) if x > 0},
            m.fallback, {"lower_leg_hours": st.intervals.lower_leg_hours,
                         "full_hours": st.intervals.full_hours,
                         "full_days": st.intervals.full_days}, weights)
    step("demand distribution over lead time + review")
    ts_path = np.maximum(ts_path, 0.0)
    k = max(int(round(cover)), 1)
    cover_mean = ts_path[:, :k].mean(axis=1)
    flat = replace(res, level=cover_mean, indices=np.ones((n, 1)), next_pos=0,
                   origin_paths=paths)
    dfit = fc.fit_distribution(ser.y, flat, cover=cover, hold=1,
                               scale_groups=[_scale(k) for k in ser.kinds])
    return DemandOutlook(ser.codes, ser.kinds, freq, fut, ts_path, dfit.dist, cover, flat, dfit,
                         ser.y, hist.periods, fit.season, ib_info, ser.unit_cost, ib_weights)


def lead_time_demand(
    session: Session, today: date, cover_months: float = 2.0, *, by: By = "item",
    settings: ForecastSettings | None = None,
) -> tuple[list[str], DemandDistribution, fc.ForecastResult]:
    """Short form for the planner: ``(codes, per-month distribution over the cover,
    forecast result)``. Pass the distribution to
    :func:`inventory.ordering.policy.order_up_to_levels` with ``lead_time + review_period``
    summing to ``cover_months`` (in months)."""
    out = demand_outlook(session, today=today, horizon=max(int(np.ceil(cover_months)), 1),
                         by=by, lead_time_months=max(cover_months - 1.0, 0.0),
                         review_months=min(cover_months, 1.0), settings=settings)
    return out.codes, out.dist, out.result


def forecast_items(
    session: Session,
    *,
    today: date,
    horizon: int = 6,
    by: By = "part",
    freq: dm.Freq = "M",
    lead_time_months: float = 1.0,
    review_months: float = 1.0,
    settings: ForecastSettings | None = None,
    progress: Progress | None = None,
) -> ForecastReport:
    """The forecast of every ``by`` series as plain records (see the module docstring)."""
    t0 = time.perf_counter()
    st = settings or ForecastSettings()
    out = demand_outlook(session, today=today, horizon=horizon, by=by, freq=freq,
                         lead_time_months=lead_time_months, review_months=review_months,
                         settings=st, progress=progress)
    if progress:
        progress("ranges")
    qlo, qhi = st.quantiles
    path = out.mean[:, :horizon]
    vmr = np.broadcast_to(out.dist.vmr if out.dist.vmr is not None else 1.0, (len(out.codes),))
    lows, highs = [], []
    for j in range(horizon):
        d = negative_binomial(path[:, j], vmr)
        lows.append(d.quantile(qlo))
        highs.append(d.quantile(qhi))
    low = np.stack(lows, axis=1) if lows else np.zeros((len(out.codes), 0))
    high = np.stack(highs, axis=1) if highs else np.zeros((len(out.codes), 0))
    over = out.dist.over(out.cover)
    c_lo, c_med, c_hi = (over.quantile(q) for q in (qlo, 0.5, qhi))
    hist_vals = out.history
    per_year = 52 if freq == "W" else 12
    recent = np.nansum(hist_vals[:, -per_year:], axis=1)
    labels = out.result.classification.label
    costs = out.unit_cost or [None] * len(out.codes)
    series = []
    for i, code in enumerate(out.codes):
        cost = costs[i]
        usage = float(recent[i]) * (cost if cost is not None else (1.0 if by == "family" else 0.0))
        series.append(SeriesForecast(
            code=code, kind=out.kinds[i], cls=str(labels[i]), method=str(out.result.method[i]),
            unit_cost=cost, usage_value=usage,
            history=tuple(None if np.isnan(x) else float(x) for x in hist_vals[i]),
            forecast=tuple(float(x) for x in path[i]),
            low=tuple(int(x) for x in low[i]), high=tuple(int(x) for x in high[i]),
            cover_mean=float(over.mean[i]), cover_low=int(c_lo[i]), cover_median=int(c_med[i]),
            cover_high=int(c_hi[i]),
            ib_weight=0.0 if out.ib_weights is None else float(out.ib_weights[i]),
            unit="jobs" if by == "family" else _scale(out.kinds[i]),
        ))
    return ForecastReport(
        today=today, by=by, freq=freq, horizon=horizon,
        history_periods=tuple(_to_date(p) for p in out.history_periods),
        forecast_periods=tuple(_to_date(p) for p in out.periods[:horizon]),
        lead_time_months=lead_time_months, review_months=review_months,
        cover_periods=out.cover, quantiles=(qlo, qhi), series=tuple(series), season=out.season,
        installed_base=out.installed_base, class_choice=dict(out.result.class_choice),
        seconds=time.perf_counter() - t0,
    )


def _to_date(p: np.datetime64) -> date:
    return date.fromisoformat(str(np.datetime64(p, "D")))


# -- files for the faces ---------------------------------------------------------------------------


def write_outputs(report: ForecastReport, chosen: list, *, xlsx: Any = None, charts: Any = None,
                  defaults: bool = True, reports_dir: Any = "reports",
                  step: Callable[[str], Any] | None = None) -> list:
    """Write the forecast workbook and the PNG charts of the ``chosen`` series (to
    ``reports_dir/forecast-<by>-<YYYY-MM>.xlsx`` and ``reports_dir`` unless given, when
    ``defaults``); returns the paths written. openpyxl and matplotlib load only here."""
    from pathlib import Path

    from inventory.forecast.book import write_forecast_book
    from inventory.forecast.charts import write_charts

    stamp = report.forecast_periods[0].strftime("%Y-%m") if report.forecast_periods else "x"
    if xlsx is None and defaults:
        xlsx = Path(reports_dir) / f"forecast-{report.by}-{stamp}.xlsx"
    if charts is None and defaults:
        charts = Path(reports_dir)
    written: list[Path] = []
    if xlsx is not None:
        if step:
            step("writing the workbook")
        written.append(write_forecast_book(xlsx, report, chosen))
    if charts is not None and chosen:
        if step:
            step("drawing the charts")
        written += write_charts(charts, report, chosen)
    return written


def forecast_command(session: Session, *, today: date, top: int = 0,
                     parts: Sequence[str] = (), xlsx: Any = None, charts: Any = None,
                     defaults: bool = True, step: Callable[[str], Any] | None = None,
                     **forecast_args: Any) -> tuple[ForecastReport, list, list]:
    """``inventory forecast``: :func:`forecast_items` (``forecast_args``: horizon, by, freq,
    lead_time_months, review_months), the series chosen for the files (``top`` by volume
    plus ``parts``), and the files written; returns (report, chosen, files)."""
    report = forecast_items(session, today=today, progress=step, **forecast_args)
    chosen = report.chosen(top, tuple(parts))
    written = write_outputs(report, chosen, xlsx=xlsx, charts=charts, defaults=defaults,
                            step=step)
    return report, chosen, written
