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
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import demand as dm

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]


# -- input handling -----------------------------------------------------------------------


def prepare(y: ArrayLike) -> tuple[FloatArray, BoolArray]:
    """(values with NaN -> 0, observed mask) for a (series, periods) matrix (1-D = one series).

    Only LEADING NaN means "not started"; a NaN after the start counts as zero demand.
    """
    v = np.asarray(y, dtype=float)
    if v.ndim == 1:
        v = v[None, :]
    if v.ndim != 2:
        raise ValueError("demand must be a (series, periods) array")
    present = ~np.isnan(v)
    t = v.shape[1]
    start = np.where(present.any(axis=1), present.argmax(axis=1), t)
    obs = np.arange(t)[None, :] >= start[:, None]
    values = np.nan_to_num(v, nan=0.0)
    if np.any(values < 0):
        raise ValueError("demand must be non-negative")
    return values, obs


def as_grid(values: ArrayLike, n: int) -> FloatArray:
    """A parameter as a (G, n) or (G, 1) array: a scalar is one row, an (n,) array one row per
    series (when n > 1), any other 1-D array a grid of G values shared by all series."""
    a = np.asarray(values, dtype=float)
    if a.ndim == 0:
        return a.reshape(1, 1)
    if a.ndim == 1 and a.size == n and n > 1:
        return a.reshape(1, n)
    if a.ndim == 1:
        return a.reshape(-1, 1)
    return a


def has_demand(v: FloatArray) -> BoolArray:
    return np.asarray((v > 0).any(axis=1), dtype=bool)


# -- single-pass recursions over a parameter grid ------------------------------------------


@dataclass(frozen=True)
class Pass:
    """State of a recursion at each snapshot origin, per grid point and series.

    ``forecast`` (S, G, n): per-period forecast with the data before each origin;
    ``sse`` (S, G, n): in-sample one-step squared error up to each origin; ``nobs`` (S, n):
    number of those errors; ``fitted`` (G, n, T): one-step forecasts, when asked for.
    """

    forecast: FloatArray
    sse: FloatArray
    nobs: NDArray[np.int64]
    fitted: FloatArray | None


def _snapshot_plan(snaps: NDArray[np.int64]) -> dict[int, list[int]]:
    """Map from period index to the snapshot slots recorded before that period."""
    plan: dict[int, list[int]] = {}
    for k, t in enumerate(np.asarray(snaps, dtype=np.int64).tolist()):
        plan.setdefault(int(t), []).append(k)
    return plan


def ses_pass(
    y: FloatArray,
    obs: BoolArray,
    alpha: FloatArray,
    snaps: NDArray[np.int64],
    *,
    want_fitted: bool = False,
) -> Pass:
    """SES over a grid of ``alpha`` ((G, n) or (G, 1))."""
    n, t_len = y.shape
    g = alpha.shape[0]
    yt_all = np.ascontiguousarray(y.T)
    ob_all = np.ascontiguousarray(obs.T)
    plan = _snapshot_plan(snaps)
    level = np.zeros((g, n))
    ready = np.zeros(n, dtype=bool)
    sse = np.zeros((g, n))
    nobs = np.zeros(n, dtype=np.int64)
    e = np.empty((g, n))
    out_f = np.zeros((snaps.size, g, n))
    out_s = np.zeros((snaps.size, g, n))
    out_n = np.zeros((snaps.size, n), dtype=np.int64)
    fitted = np.full((g, n, t_len), np.nan) if want_fitted else None
    all_ready = False
    for t in range(t_len + 1):
        for k in plan.get(t, ()):
            out_f[k] = level if all_ready else np.where(ready, level, 0.0)
            out_s[k] = sse
            out_n[k] = nobs
        if t == t_len:
            break
        yt = yt_all[t]
        o = ob_all[t]
        if fitted is not None:
            fitted[:, :, t] = level if all_ready else np.where(ready, level, np.nan)
        np.subtract(yt, level, out=e)
        if all_ready:
            upd = o
        else:
            upd = o & ready
        if not upd.all():
            e[:, ~upd] = 0.0
        sse += e * e
        nobs += upd
        e *= alpha
        level += e
        if not all_ready:
            new = o & ~ready
            if new.any():
                level[:, new] = yt[new]
                ready |= new
                all_ready = bool(ready.all())
    return Pass(out_f, out_s, out_n, fitted)


def croston_factor(variant: str, beta: FloatArray) -> FloatArray:
    """Bias factor: 1 (classic), 1 - beta/2 (SBA), 1 - beta/(2 - beta) (SBJ)."""
    if variant == "classic":
        return np.ones_like(beta)
    if variant == "sba":
        return 1.0 - beta / 2.0
    if variant == "sbj":
        return 1.0 - beta / (2.0 - beta)
    raise ValueError(f"unknown Croston variant {variant!r}")


def croston_pass(
    y: FloatArray,
    obs: BoolArray,
    alpha: FloatArray,
    beta: FloatArray,
    snaps: NDArray[np.int64],
    *,
    variants: Sequence[str] = ("classic",),
    want_fitted: bool = False,
) -> dict[str, Pass]:
    """Croston over a grid of (alpha, beta); one pass gives every variant.

    The variants differ only by a factor c on the rate r = z / p, so the in-sample SSE of
    each is sum(y^2) - 2 c sum(y r) + c^2 sum(r^2), accumulated once for all.
    """
    n, t_len = y.shape
    g = max(alpha.shape[0], beta.shape[0])
    alpha = np.broadcast_to(alpha, (g, alpha.shape[1]))
    beta = np.broadcast_to(beta, (g, beta.shape[1]))
    factors = {v: np.broadcast_to(croston_factor(v, beta), (g, n)) for v in variants}
    # state laid out (series, grid) so that updating the series with a demand is a
    # contiguous row selection
    a_t = np.ascontiguousarray(np.broadcast_to(alpha, (g, n)).T)
    b_t = np.ascontiguousarray(np.broadcast_to(beta, (g, n)).T)
    yt_all = np.ascontiguousarray(y.T)
    ob_all = np.ascontiguousarray(obs.T)
    plan = _snapshot_plan(snaps)
    z = np.zeros((n, g))
    p = np.ones((n, g))
    rate = np.zeros((n, g))
    ready = np.zeros(n, dtype=bool)
    start = np.where(obs.any(axis=1), obs.argmax(axis=1), t_len)
    last = start - 1  # the first interval counts the periods up to and including the demand
    syy = np.zeros(n)
    syr = np.zeros((n, g))
    srr = np.zeros((n, g))
    tmp = np.empty((n, g))
    nobs = np.zeros(n, dtype=np.int64)
    out_r = np.zeros((snaps.size, n, g))
    out_yy = np.zeros((snaps.size, n))
    out_yr = np.zeros((snaps.size, n, g))
    out_rr = np.zeros((snaps.size, n, g))
    out_n = np.zeros((snaps.size, n), dtype=np.int64)
    fitted = {v: np.full((g, n, t_len), np.nan) for v in variants} if want_fitted else None
    for t in range(t_len + 1):
        for k in plan.get(t, ()):
            out_r[k] = rate
            out_yy[k] = syy
            out_yr[k] = syr
            out_rr[k] = srr
            out_n[k] = nobs
        if t == t_len:
            break
        yt = yt_all[t]
        o = ob_all[t]
        upd = o & ready
        if fitted is not None:
            for v in variants:
                fitted[v][:, :, t] = np.where(ready, factors[v] * rate.T, np.nan)
        if upd.any():
            yu = np.where(upd, yt, 0.0)
            syy += yu * yu
            ru = rate if upd.all() else rate * upd[:, None]
            np.multiply(ru, yu[:, None], out=tmp)
            syr += tmp
            np.multiply(ru, ru, out=tmp)
            srr += tmp
            nobs += upd
        nz = o & (yt > 0)
        if nz.any():
            q = (t - last).astype(float)
            rows = np.flatnonzero(nz & ready)
            if rows.size:
                yr = yt[rows, None]
                z[rows] += a_t[rows] * (yr - z[rows])
                p[rows] += b_t[rows] * (q[rows, None] - p[rows])
            first = np.flatnonzero(nz & ~ready)
            if first.size:
                z[first] = yt[first, None]
                p[first] = q[first, None]
                ready[first] = True
            rows = np.flatnonzero(nz)
            rate[rows] = z[rows] / p[rows]
            last = np.where(nz, t, last)
    out = {}
    r_g = out_r.transpose(0, 2, 1)
    yr_g = out_yr.transpose(0, 2, 1)
    rr_g = out_rr.transpose(0, 2, 1)
    for v in variants:
        c = factors[v][None]
        sse = out_yy[:, None, :] - 2.0 * c * yr_g + c * c * rr_g
        out[v] = Pass(np.ascontiguousarray(c * r_g), np.maximum(sse, 0.0), out_n,
                      None if fitted is None else fitted[v])
    return out


def tsb_pass(
    y: FloatArray,
    obs: BoolArray,
    alpha: FloatArray,
    beta: FloatArray,
    snaps: NDArray[np.int64],
    *,
    init: Literal["first", "mean"] = "first",
    want_fitted: bool = False,
) -> Pass:
    """TSB over a grid of (alpha for sizes, beta for the probability)."""
    n, t_len = y.shape
    g = max(alpha.shape[0], beta.shape[0])
    alpha = np.broadcast_to(alpha, (g, alpha.shape[1]))
    beta = np.broadcast_to(beta, (g, beta.shape[1]))
    yt_all = np.ascontiguousarray(y.T)
    ob_all = np.ascontiguousarray(obs.T)
    plan = _snapshot_plan(snaps)
    p = np.zeros((g, n))
    z = np.zeros((g, n))
    p_ready = np.zeros(n, dtype=bool)
    z_ready = np.zeros(n, dtype=bool)
    p0 = z0 = np.zeros(n)
    if init == "mean":
        adi, count = dm.interval_stats(np.where(obs, y, np.nan))
        z0 = np.where(y > 0, y, 0.0).sum(axis=1) / np.maximum(count, 1)
        p0 = np.where(count > 0, 1.0 / np.where(np.isfinite(adi), adi, 1.0), 0.0)
    sse = np.zeros((g, n))
    nobs = np.zeros(n, dtype=np.int64)
    e = np.empty((g, n))
    f = np.zeros((g, n))
    out_f = np.zeros((snaps.size, g, n))
    out_s = np.zeros((snaps.size, g, n))
    out_n = np.zeros((snaps.size, n), dtype=np.int64)
    fitted = np.full((g, n, t_len), np.nan) if want_fitted else None
    for t in range(t_len + 1):
        both = p_ready & z_ready
        np.multiply(p, z, out=f)
        for k in plan.get(t, ()):
            out_f[k] = np.where(both, f, 0.0)
            out_s[k] = sse
            out_n[k] = nobs
        if t == t_len:
            break
        yt = yt_all[t]
        o = ob_all[t]
        nz = (yt > 0) & o
        if init == "mean":
            new = o & ~p_ready
            if new.any():
                p[:, new] = p0[new]
                z[:, new] = z0[new]
                p_ready |= new
                z_ready |= new
                both = p_ready & z_ready
                np.multiply(p, z, out=f)
        if fitted is not None:
            fitted[:, :, t] = np.where(both, f, np.nan)
        upd = o & both
        np.subtract(yt, f, out=e)
        if not upd.all():
            e[:, ~upd] = 0.0
        e *= e
        sse += e
        nobs += upd
        pu = o & p_ready
        np.subtract(nz.astype(float), p, out=e)
        e *= beta
        if not pu.all():
            e[:, ~pu] = 0.0
        p += e
        zu = np.flatnonzero(nz & z_ready)
        if zu.size:
            a = alpha[:, zu] if alpha.shape[1] > 1 else alpha
            z[:, zu] += a * (yt[zu] - z[:, zu])
        if init == "first":
            newp = o & ~p_ready
            if newp.any():
                p[:, newp] = nz[newp].astype(float)
                p_ready |= newp
            newz = nz & ~z_ready
            if newz.any():
                z[:, newz] = yt[newz]
                z_ready |= newz
    return Pass(out_f, out_s, out_n, fitted)


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
