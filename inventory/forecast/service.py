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
from collections.abc import Callable
from dataclasses import replace
from datetime import date
from typing import Any

import numpy as np
from sqlmodel import Session

from inventory.core.errors import InventoryError
from inventory.forecast import methods as fc
from inventory.forecast.data import last_complete_period, load_history
from inventory.forecast.distributions import DemandDistribution, negative_binomial
from inventory.forecast.ib_signal import blend_installed_base
from inventory.forecast.options import (
    WEEKS_PER_MONTH,
    By,
    ForecastFiles,
    ForecastRequest,
    ForecastSettings,
    Progress,
)
from inventory.forecast.report import (
    PLAIN_CLASS,
    DemandOutlook,
    FloatArray,
    ForecastReport,
    InstalledBaseInfo,
    SeasonInfo,
    SeriesForecast,
)
from inventory.forecast.season_fit import fit_series, job_profile
from inventory.forecast.series import build_series, scale_of

# the faces and the planner import these names from here
__all__ = [
    "PLAIN_CLASS", "By", "DemandOutlook", "ForecastFiles", "ForecastReport", "ForecastRequest",
    "ForecastSettings",
    "InstalledBaseInfo", "SeasonInfo", "SeriesForecast", "demand_outlook", "forecast_command",
    "forecast_items", "job_profile", "lead_time_demand", "write_outputs",
]


def demand_outlook(
    session: Session,
    request: ForecastRequest,
    *,
    settings: ForecastSettings | None = None,
    progress: Progress | None = None,
) -> DemandOutlook:
    """Fit the forecast of every series of ``request.by`` from the history before
    ``request.today``'s month (or ISO week); forecast ``request.horizon`` periods from it (at
    least the cover)."""
    today, horizon, by, freq = request.today, request.horizon, request.by, request.freq
    lead_time_months, review_months = request.lead_time_months, request.review_months
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
    ser = build_series(hist, by)
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
    fit, prof_bt = fit_series(ser.y, hist, fit_opt, st.seasonal_gain)
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
        blended = blend_installed_base(hist, ser, fit, prof_bt, ts_path, st)
        ts_path, paths = blended.ts_path, blended.paths
        ib_info, ib_weights = blended.info, blended.weights
    step("demand distribution over lead time + review")
    ts_path = np.maximum(ts_path, 0.0)
    k = max(int(round(cover)), 1)
    cover_mean = ts_path[:, :k].mean(axis=1)
    flat = replace(res, level=cover_mean, indices=np.ones((n, 1)), next_pos=0,
                   origin_paths=paths)
    dfit = fc.fit_distribution(ser.y, flat, cover=cover, hold=1,
                               scale_groups=[scale_of(k) for k in ser.kinds])
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
    request = ForecastRequest(today=today, horizon=max(int(np.ceil(cover_months)), 1), by=by,
                              lead_time_months=max(cover_months - 1.0, 0.0),
                              review_months=min(cover_months, 1.0))
    out = demand_outlook(session, request, settings=settings)
    return out.codes, out.dist, out.result


def forecast_items(
    session: Session,
    request: ForecastRequest,
    *,
    settings: ForecastSettings | None = None,
    progress: Progress | None = None,
) -> ForecastReport:
    """The forecast of every ``request.by`` series as plain records (see the module
    docstring)."""
    t0 = time.perf_counter()
    today, horizon, by, freq = request.today, request.horizon, request.by, request.freq
    lead_time_months, review_months = request.lead_time_months, request.review_months
    st = settings or ForecastSettings()
    out = demand_outlook(session, request, settings=st, progress=progress)
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
            unit="jobs" if by == "family" else scale_of(out.kinds[i]),
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


def forecast_command(session: Session, request: ForecastRequest,
                     files: ForecastFiles | None = None, *,
                     step: Callable[[str], Any] | None = None
                     ) -> tuple[ForecastReport, list, list]:
    """``inventory forecast``: :func:`forecast_items`, the series chosen for the files
    (``files.top`` by volume plus ``files.parts``), and the files written; returns (report,
    chosen, files)."""
    out = files or ForecastFiles()
    report = forecast_items(session, request, progress=step)
    chosen = report.chosen(out.top, tuple(out.parts))
    written = write_outputs(report, chosen, xlsx=out.xlsx, charts=out.charts,
                            defaults=out.defaults, step=step)
    return report, chosen, written
