"""The installed-base signal of a forecast: returning forks plus newcomers as item demand
per series, at each backtest origin and now, blended into the time series by a weight per
SBC class chosen on the same rolling origins (step 5 of :mod:`inventory.forecast.service`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from inventory.forecast import installed_base as ib
from inventory.forecast.data import DemandHistory
from inventory.forecast.options import ForecastSettings
from inventory.forecast.report import InstalledBaseInfo
from inventory.forecast.season_fit import SeasonFit
from inventory.forecast.series import Series

FloatArray = NDArray[np.float64]


def usage_per_job(hist: DemandHistory, upto: int) -> FloatArray:
    """Units of each stock item per job of each group, from the jobs of months < ``upto``;
    the kit rule for groups with no job yet. ``(groups, items)``."""
    jobs = hist.jobs[:, :upto].sum(axis=1)
    lines = hist.lines[:, :, :upto].sum(axis=2)
    rule = ib.usage_from_kits(hist.kits, hist.groups, hist.items)
    with np.errstate(divide="ignore", invalid="ignore"):
        seen = lines / np.where(jobs > 0, jobs, 1.0)[:, None]
    return np.where((jobs > 0)[:, None], seen, rule)


@dataclass(frozen=True)
class IbInputs:
    """What every installed-base path of one forecast shares: the history, the series,
    first visits per (group, month) and the return model's settings."""

    hist: DemandHistory
    ser: Series
    new_counts: FloatArray
    intervals: ib.ServiceIntervals
    returns: ib.ReturnOptions


def ib_path(inp: IbInputs, origin: int, h: int, profile: FloatArray,
            seasonal: bool) -> tuple[FloatArray, ib.ReturnForecast]:
    """Installed-base demand per series for ``h`` months from month index ``origin``."""
    hist, ser, new_counts = inp.hist, inp.ser, inp.new_counts
    cutoff = hist.months[0] + origin
    rf = ib.expected_returns(hist.visits, cutoff=cutoff.astype("datetime64[D]"), horizon=h,
                             intervals=inp.intervals, options=inp.returns, groups=hist.groups,
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
    per_job = usage_per_job(hist, origin) @ ser.to_series  # (G, n)
    return (jobs.T @ per_job).T, rf


@dataclass(frozen=True)
class Blended:
    """The forecast path and backtest paths with the installed base blended in, what the
    signal found, and its weight per series."""

    ts_path: FloatArray
    paths: FloatArray
    info: InstalledBaseInfo
    weights: FloatArray


def blend_installed_base(hist: DemandHistory, ser: Series, fit: SeasonFit, prof_bt: FloatArray,
                         ts_path: FloatArray, st: ForecastSettings) -> Blended:
    """Blend the installed-base signal into ``ts_path`` ``(n, H)`` (the time-series forecast)
    and into the fit's backtest paths, with the weights the backtest chose; ``prof_bt``: the
    season profile the backtest may know."""
    res = fit.result
    paths = fit.paths
    profile = np.asarray(fit.season.profile, dtype=float)
    t_len = ser.y.shape[1]
    big_h = ts_path.shape[1]
    inp = IbInputs(hist, ser, ib.first_visit_counts(hist.visits, hist.months, hist.groups),
                   st.intervals, st.returns)

    h_bt = paths.shape[2] if paths.ndim == 3 else 0
    acts, tss, ibs, hsts = [], [], [], []
    for s, o in enumerate(res.origins):
        path_o, _ = ib_path(inp, int(o), h_bt, prof_bt, fit.seasonal)
        acts.append(np.nan_to_num(ser.y[:, o:o + h_bt]))
        tss.append(paths[s])
        ibs.append(path_o)
        hsts.append(ser.y[:, :o])
    labels = res.classification.label
    blend = ib.choose_blend_by_class(acts, tss, ibs, hsts, labels,
                                     min_series=st.blend_min_series,
                                     min_gain=st.blend_gain)
    ib_now, rf = ib_path(inp, t_len, big_h, profile, fit.seasonal)
    wv = blend.weights
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
    return Blended(ts_path, paths, ib_info, wv)
