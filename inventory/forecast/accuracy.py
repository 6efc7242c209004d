"""Forecast accuracy measures over many series at once (arrays ``(series, periods)``).

- RMSSE (root mean squared scaled error; Makridakis, Spiliotis and Assimakopoulos 2022,
  the M5 competition): sqrt(mean squared error / in-sample mean squared one-step change).
  Squared error is minimised by the mean, so it does not reward forecasting zero for
  intermittent series.
- MASE (mean absolute scaled error; Hyndman and Koehler 2006): mean absolute error /
  in-sample mean absolute one-step change. Minimised by the median (often zero for slow
  movers), reported for comparison only.
- Bias: mean (forecast - actual) over the horizon, scaled like MASE.
- Scaled total error: |sum of forecasts - sum of actuals| over the horizon / (horizon x
  in-sample mean absolute one-step change): how well the forecast gets the volume that a
  stock level has to cover.

Series whose history never changes have no scale and get NaN (skipped by the means).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]


def diff_scale(history: ArrayLike, *, power: int) -> FloatArray:
    """In-sample mean of |y_t - y_{t-1}|^power per series (leading NaN ignored)."""
    h = np.asarray(history, dtype=float)
    if h.ndim == 1:
        h = h[None, :]
    d = np.abs(np.diff(h, axis=1)) ** power
    cnt = (~np.isnan(d)).sum(axis=1)
    return np.where(cnt > 0, np.nansum(d, axis=1) / np.maximum(cnt, 1), np.nan)


def _scaled(num: FloatArray, scale: FloatArray) -> FloatArray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(scale > 0, num / np.where(scale > 0, scale, 1.0), np.nan)


def _pair(actual: ArrayLike, forecast: ArrayLike) -> tuple[FloatArray, FloatArray]:
    a = np.atleast_2d(np.asarray(actual, dtype=float))
    f = np.broadcast_to(np.asarray(forecast, dtype=float), a.shape)
    return a, f


def rmsse(actual: ArrayLike, forecast: ArrayLike, history: ArrayLike) -> FloatArray:
    """RMSSE per series; ``actual``/``forecast`` ``(n, h)``, ``history`` ``(n, T)``."""
    a, f = _pair(actual, forecast)
    mse = np.mean((a - f) ** 2, axis=1)
    return np.sqrt(_scaled(mse, diff_scale(history, power=2)))


def mase(actual: ArrayLike, forecast: ArrayLike, history: ArrayLike) -> FloatArray:
    """MASE per series (non-seasonal naive scale)."""
    a, f = _pair(actual, forecast)
    return _scaled(np.mean(np.abs(a - f), axis=1), diff_scale(history, power=1))


def scaled_bias(actual: ArrayLike, forecast: ArrayLike, history: ArrayLike) -> FloatArray:
    """Mean error (forecast - actual) per period, scaled by the MASE scale; > 0 = over."""
    a, f = _pair(actual, forecast)
    return _scaled(np.mean(f - a, axis=1), diff_scale(history, power=1))


def scaled_total_error(actual: ArrayLike, forecast: ArrayLike, history: ArrayLike) -> FloatArray:
    """|total forecast - total actual| over the horizon / (h x MASE scale)."""
    a, f = _pair(actual, forecast)
    h = a.shape[1]
    return _scaled(np.abs(f.sum(axis=1) - a.sum(axis=1)) / h, diff_scale(history, power=1))
