"""Temporal aggregation for ADIDA and IMAPA: k-period buckets, the bucket size per series,
and SES over the buckets (at the end of the data, or at every origin).

Conventions as statsforecast's ``ADIDA`` / ``IMAPA`` (see :mod:`inventory.forecast.smoothing`).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import demand as dm
from inventory.forecast.passes import BoolArray, FloatArray, Pass, prepare, ses_pass


def buckets(v: FloatArray, obs: BoolArray, k: int, *, offset: int | None = None
            ) -> tuple[FloatArray, BoolArray]:
    """Sums of k periods. By default aligned to the END (the remainder at the start is
    dropped, as statsforecast does); with ``offset`` the buckets start at that period.
    A bucket counts as observed once all its periods are."""
    n, t = v.shape
    rem = t % k if offset is None else offset
    m = (t - rem) // k
    stop = rem + m * k
    b = v[:, rem:stop].reshape(n, m, k).sum(axis=2)
    bo = np.asarray(obs[:, rem:stop].reshape(n, m, k).all(axis=2), dtype=bool)
    return b, bo


def aggregation_level(y: ArrayLike, *, max_level: int = 12) -> NDArray[np.int64]:
    """ADIDA's bucket size per series: the ADI rounded half-to-even, clipped to 1..max_level."""
    v, obs = prepare(y)
    adi, count = dm.interval_stats(np.where(obs, v, np.nan))
    k = np.where(count > 0, np.round(np.where(np.isfinite(adi), adi, 1.0)), 1.0)
    return np.clip(k, 1, max_level).astype(np.int64)


def adida_grid(v: FloatArray, obs: BoolArray, k: NDArray[np.int64], alpha: FloatArray) -> Pass:
    """ADIDA at the end of the data for every grid alpha: forecast per period (1, G, n) and
    in-sample SSE of the bucket series (scaled back to periods by k^2)."""
    n = v.shape[0]
    g = alpha.shape[0]
    fc = np.zeros((1, g, n))
    sse = np.zeros((1, g, n))
    nobs = np.zeros((1, n), dtype=np.int64)
    for kk in np.unique(k):
        rows = np.flatnonzero(k == kk)
        if v.shape[1] // kk < 1:
            continue
        b, bo = buckets(v[rows], obs[rows], int(kk))
        a = alpha if alpha.shape[1] == 1 else alpha[:, rows]
        ps = ses_pass(b, bo, a, np.array([b.shape[1]]))
        fc[0][:, rows] = ps.forecast[0] / kk
        sse[0][:, rows] = ps.sse[0] / (kk * kk)
        nobs[0, rows] = ps.nobs[0]
    return Pass(fc, sse, nobs, None)


def adida_path(v: FloatArray, obs: BoolArray, k: NDArray[np.int64], alpha: FloatArray
               ) -> FloatArray:
    """ADIDA forecast made at every origin t (data before t, buckets aligned to end at t)
    with fixed per-series k and alpha: (n, T), NaN before the first full bucket.

    Origins t with the same t mod k share one bucket sequence, so k SES passes (one per
    alignment) give all origins.
    """
    n, t_len = v.shape
    out = np.full((n, t_len), np.nan)
    for kk in np.unique(k):
        rows = np.flatnonzero(k == kk)
        kk = int(kk)
        for r in range(kk):
            if t_len - r < kk:
                continue
            b, bo = buckets(v[rows], obs[rows], kk, offset=r)
            ps = ses_pass(b, bo, alpha[rows][None, :], np.array([b.shape[1]]), want_fitted=True)
            assert ps.fitted is not None
            # fitted[:, j] = forecast with buckets 0..j-1 = origin r + j k
            origins = r + kk * np.arange(b.shape[1])
            out[np.ix_(rows, origins)] = ps.fitted[0] / kk
    return out
