"""The smoothing recursions as single passes over a parameter grid (SES, Croston/SBA/SBJ, TSB).

Every recursion runs ONCE over the periods with all series and all candidate parameters
as numpy arrays of shape ``(grid, series)``, and records its state at chosen "snapshot"
origins, so a rolling-origin backtest costs no extra passes. The formulas and their
references are listed in :mod:`inventory.forecast.smoothing`.
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
