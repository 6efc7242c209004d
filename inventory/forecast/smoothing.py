"""Vectorised smoothing recursions for intermittent demand (SES, Croston/SBA, TSB, ADIDA, IMAPA).

Every recursion runs ONCE over the periods with all series and all candidate parameters
as numpy arrays of shape ``(grid, series)``, and records its state at chosen "snapshot"
origins, so a rolling-origin backtest costs no extra passes. Input is a 2-D float array
``y[series, period]``; leading ``NaN`` means "the series has not started yet".

Formulas and conventions (REFERENCE.md section 7):

- SES: the level starts at the first observation; one-step forecast = level.
  Same as statsforecast ``SimpleExponentialSmoothing(alpha)``.
- Croston: at a demand, size z += alpha (y - z) and interval p += beta (q - p), q = periods
  since the previous demand; z and p start at the first demand and the number of periods up
  to and including it (REFERENCE.md 7.6, statsforecast ``CrostonClassic`` with alpha = beta
  = 0.1). SBA multiplies by 1 - beta/2 (statsforecast ``CrostonSBA``: 0.95), SBJ by
  1 - beta/(2 - beta).
- TSB: every period p += beta (1{y > 0} - p); at a demand z += alpha (y - z); forecast p z.
  ``init="first"``: p starts at the first period's indicator and z at the first demand
  (statsforecast ``TSB(alpha_d, alpha_p)``); ``init="mean"``: p0 = 1/ADI, z0 = mean size,
  both updated from the first period (REFERENCE.md 7.6).
- ADIDA: SES over non-overlapping buckets of k periods aligned to the end of the data (the
  remainder at the start is dropped), divided by k; k = ADI rounded half-to-even
  (statsforecast ``ADIDA``, which picks alpha in [0.1, 0.3] by golden-section search).
- IMAPA: mean of ADIDA over k = 1..round(ADI) (statsforecast ``IMAPA``).

The grid passes live in :mod:`inventory.forecast.passes`, bucketing for ADIDA / IMAPA in
:mod:`inventory.forecast.aggregation`; both are re-exported here. This module holds the
single methods with fixed parameters.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast.aggregation import adida_grid, adida_path, aggregation_level, buckets
from inventory.forecast.passes import (
    BoolArray,
    FloatArray,
    Pass,
    as_grid,
    croston_factor,
    croston_pass,
    has_demand,
    prepare,
    ses_pass,
    tsb_pass,
)

__all__ = [
    "BoolArray", "FloatArray", "Pass", "Smoothed", "adida", "adida_grid", "adida_path",
    "aggregation_level", "as_grid", "buckets", "croston", "croston_factor", "croston_pass",
    "has_demand", "imapa", "prepare", "sba", "ses", "ses_pass", "tsb", "tsb_pass",
]


# -- public single methods (fixed parameters) ------------------------------------------------


@dataclass(frozen=True)
class Smoothed:
    """A method's forecast per period after the data (``(n,)``) and its one-step in-sample
    forecasts (``(n, T)``, NaN where the method has no forecast yet)."""

    forecast: FloatArray
    fitted: FloatArray


def _end(v: FloatArray) -> NDArray[np.int64]:
    return np.array([v.shape[1]])


def ses(y: ArrayLike, alpha: ArrayLike) -> Smoothed:
    """Simple exponential smoothing with smoothing constant ``alpha`` (scalar or per series)."""
    v, obs = prepare(y)
    a = as_grid(alpha, v.shape[0])
    if a.shape[0] != 1:
        raise ValueError("alpha must be a scalar or one value per series")
    ps = ses_pass(v, obs, a, _end(v), want_fitted=True)
    assert ps.fitted is not None
    return Smoothed(ps.forecast[0, 0], ps.fitted[0])


def croston(
    y: ArrayLike,
    alpha: ArrayLike = 0.1,
    beta: ArrayLike | None = None,
    *,
    variant: Literal["classic", "sba", "sbj"] = "classic",
) -> Smoothed:
    """Croston's method (``alpha`` sizes, ``beta`` intervals; beta defaults to alpha).

    Series with no demand forecast 0.
    """
    v, obs = prepare(y)
    a = as_grid(alpha, v.shape[0])
    b = as_grid(alpha if beta is None else beta, v.shape[0])
    ps = croston_pass(v, obs, a, b, _end(v), variants=(variant,), want_fitted=True)[variant]
    assert ps.fitted is not None
    return Smoothed(ps.forecast[0, 0], ps.fitted[0])


def sba(y: ArrayLike, alpha: ArrayLike = 0.1, beta: ArrayLike | None = None) -> Smoothed:
    """Syntetos-Boylan approximation: Croston times (1 - beta / 2)."""
    return croston(y, alpha, beta, variant="sba")


def tsb(
    y: ArrayLike,
    alpha: ArrayLike,
    beta: ArrayLike,
    *,
    init: Literal["first", "mean"] = "first",
) -> Smoothed:
    """Teunter-Syntetos-Babai: ``alpha`` smooths the sizes, ``beta`` the demand probability."""
    v, obs = prepare(y)
    ps = tsb_pass(v, obs, as_grid(alpha, v.shape[0]), as_grid(beta, v.shape[0]), _end(v),
                  init=init, want_fitted=True)
    assert ps.fitted is not None
    return Smoothed(ps.forecast[0, 0], ps.fitted[0])


def adida(y: ArrayLike, alpha: ArrayLike, *, k: ArrayLike | None = None,
          max_level: int = 12) -> FloatArray:
    """ADIDA forecast per period with a fixed ``alpha`` (scalar or per series); ``k`` per
    series or scalar, default :func:`aggregation_level`. Series with no demand forecast 0."""
    v, obs = prepare(y)
    n = v.shape[0]
    kk = aggregation_level(v, max_level=max_level) if k is None else np.broadcast_to(
        np.asarray(k, dtype=np.int64), (n,))
    a = as_grid(alpha, n)
    if a.shape[0] != 1:
        raise ValueError("alpha must be a scalar or one value per series")
    fc = adida_grid(v, obs, kk, a).forecast[0, 0]
    return np.where(has_demand(v), fc, 0.0)


def imapa(y: ArrayLike, alpha: ArrayLike, *, max_level: int = 12) -> FloatArray:
    """IMAPA forecast per period: the mean over k = 1..round(ADI) of ADIDA(k) with a fixed
    ``alpha``, or ``alpha`` of shape (max_level, n) giving each level its own constant."""
    v, obs = prepare(y)
    n = v.shape[0]
    top = aggregation_level(v, max_level=max_level)
    a = np.asarray(alpha, dtype=float)
    if a.ndim == 2:
        levels = np.broadcast_to(a, (max_level, n))
    else:
        levels = np.broadcast_to(np.broadcast_to(a, (n,)), (max_level, n))
    total = np.zeros(n)
    for kk in range(1, int(top.max(initial=1)) + 1):
        rows = np.flatnonzero(top >= kk)
        ps = adida_grid(v[rows], obs[rows], np.full(rows.size, kk), levels[kk - 1][rows][None, :])
        total[rows] += ps.forecast[0, 0]
    return np.where(has_demand(v), total / top, 0.0)
