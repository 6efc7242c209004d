"""Seasonality from pooled demand: multiplicative monthly indices per group, and demand
divided by them."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import smoothing as sm
from inventory.forecast.passes import BoolArray, FloatArray


def seasonal_indices(
    y: ArrayLike,
    season_pos: ArrayLike,
    *,
    period: int = 12,
    groups: ArrayLike | None = None,
    min_cycles: int = 1,
) -> FloatArray:
    """Multiplicative seasonal indices per group from the POOLED demand of its series.

    Classical ratio to moving average on each group's total per period: a centred
    2 x ``period`` moving average, each period's total divided by it, the mean ratio per
    season position, normalised to mean 1. ``season_pos[t]`` is the position
    (0..period-1, e.g. calendar month - 1) of column t. Returns ``(n_groups, period)`` in
    the order of ``np.unique(groups)``; a group with fewer than ``min_cycles`` ratios for
    some position gets all ones (too little data to say).
    """
    v, _ = sm.prepare(y)
    pos = np.asarray(season_pos, dtype=np.int64)
    g = np.zeros(v.shape[0], dtype=np.int64) if groups is None else np.asarray(groups)
    labels, gi = np.unique(g, return_inverse=True)
    totals = np.zeros((labels.size, v.shape[1]))
    np.add.at(totals, gi, v)
    out = np.ones((labels.size, period))
    half = period // 2
    if period % 2 == 0:
        w = np.r_[0.5, np.ones(period - 1), 0.5] / period
    else:
        w = np.ones(period) / period
    if v.shape[1] < w.size:
        return out
    for r in range(labels.size):
        ma = np.convolve(totals[r], w, mode="valid")
        idx = np.arange(half, half + ma.size)
        ok = ma > 0
        ratio = totals[r, idx[ok]] / ma[ok]
        ppos = pos[idx[ok]]
        cnt = np.bincount(ppos, minlength=period)
        if cnt.min() < min_cycles:
            continue
        s = np.bincount(ppos, weights=ratio, minlength=period) / np.maximum(cnt, 1)
        if s.mean() > 0:
            out[r] = s / s.mean()
    return out


def deseason(v: FloatArray, obs: BoolArray, idx: FloatArray, pos: NDArray[np.int64]
             ) -> FloatArray:
    """Demand divided by each series' seasonal index at its position (0 where unobserved)."""
    f = idx[:, pos[: v.shape[1]]]
    return np.where(obs, v / np.where(f > 0, f, 1.0), 0.0)
