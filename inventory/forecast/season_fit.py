"""The season of a forecast: a profile from pooled job counts, kept only if it lowers the
rolling-origin backtest error of the fit (see :mod:`inventory.forecast.service`)."""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from inventory.forecast import methods as fc
from inventory.forecast.accuracy import rmsse
from inventory.forecast.data import DemandHistory
from inventory.forecast.report import SeasonInfo

FloatArray = NDArray[np.float64]


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


def origin_windows(f: FloatArray, origins: NDArray[np.int64], h: int) -> FloatArray:
    """The ``h`` factors of ``f`` from each origin, ``(O, h)``."""
    return np.stack([f[o:o + h] for o in origins]) if origins.size else np.zeros((0, h))


def backtest_score(y: FloatArray, origins: NDArray[np.int64], paths: FloatArray) -> float:
    """Mean RMSSE over series and origins of the backtest ``paths`` (O, n, h) against ``y``."""
    vals = []
    for s, o in enumerate(origins):
        h = paths.shape[2]
        vals.append(rmsse(np.nan_to_num(y[:, o:o + h]), paths[s], y[:, :o]))
    x = np.concatenate(vals) if vals else np.zeros(0)
    x = x[np.isfinite(x)]
    return float(x.mean()) if x.size else float("nan")


@dataclass(frozen=True)
class SeasonFit:
    """The fit :func:`fit_series` kept, with its backtest paths and the season's verdict."""

    result: fc.ForecastResult  # deseasonalised level when seasonal
    paths: FloatArray  # (O, n, h) backtest paths on the original scale
    season: SeasonInfo
    factors_hist: FloatArray
    seasonal: bool


def fit_series(y: FloatArray, hist: DemandHistory, options: fc.FitOptions,
               seasonal_gain: float) -> tuple[SeasonFit, FloatArray]:
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
        return SeasonFit(plain, plain.origin_paths, SeasonInfo(False, tuple(profile), why),
                         ones, False), np.ones(12)
    first = hist.periods[int(plain.origins[0])]
    upto = int((np.datetime64(first, "M") - hist.months[0]).astype(int))
    prof_bt, _ = job_profile(hist, upto)
    if np.allclose(prof_bt, 1.0):
        info = SeasonInfo(False, tuple(profile), f"season off: {upto} months before the "
                          "first backtest origin, too few to check the profile (24 needed)")
        return SeasonFit(plain, plain.origin_paths, info, ones, False), prof_bt
    f_bt = prof_bt[hist.month_of - 1]
    seas = fc.fit_forecast(y / f_bt[None, :], options=opt)
    h = seas.origin_paths.shape[2]
    paths_s = seas.origin_paths * origin_windows(f_bt, seas.origins, h)[:, None, :]
    s_plain = backtest_score(y, plain.origins, plain.origin_paths)
    s_seas = backtest_score(y, seas.origins, paths_s)
    if np.isfinite(s_seas) and s_seas < s_plain * (1.0 - seasonal_gain):
        f_all = profile[hist.month_of - 1]
        final = fc.fit_forecast(y / f_all[None, :], options=opt)
        info = SeasonInfo(True, tuple(profile), f"{reason}: backtest RMSSE {s_plain:.3f} -> "
                          f"{s_seas:.3f}", s_plain, s_seas)
        return SeasonFit(final, paths_s, info, f_all, True), prof_bt
    info = SeasonInfo(False, tuple(profile), f"season off: the profile does not lower the "
                      f"backtest RMSSE ({s_plain:.3f} without, {s_seas:.3f} with)", s_plain, s_seas)
    return SeasonFit(plain, plain.origin_paths, info, ones, False), prof_bt
