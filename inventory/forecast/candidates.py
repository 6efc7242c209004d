"""Candidate forecasts at the rolling origins of a fit.

Every method runs once over its grid of smoothing constants (:mod:`inventory.forecast.passes`)
with snapshots at the origins; the constants are chosen per series or per SBC class by
in-sample one-step error. ADIDA and IMAPA share one set of bucket passes.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from inventory.forecast import smoothing as sm
from inventory.forecast.fit_records import FitOptions
from inventory.forecast.passes import BoolArray, FloatArray


@dataclass(frozen=True)
class OriginData:
    """The demand a fit works on and its rolling origins.

    ``v`` (n, T) demand (0 before a series starts), ``obs`` the observed mask, ``snaps`` the
    backtest origins followed by T, ``scales`` (S, n) the in-sample mean squared one-step
    change before each snapshot (:func:`origin_scales`), ``codes`` the SBC class code per
    series.
    """

    v: FloatArray
    obs: BoolArray
    snaps: NDArray[np.int64]
    scales: FloatArray
    codes: NDArray[np.int64]


@dataclass(frozen=True)
class Candidate:
    """Per-period forecasts of one candidate at the snapshot origins (S, n) and its final
    smoothing constants (for display)."""

    forecasts: FloatArray
    method: str
    final: dict[str, FloatArray]


def class_matrix(codes: NDArray[np.int64]) -> FloatArray:
    """One-hot (n, n_classes) matrix of the class codes."""
    m = np.zeros((codes.size, int(codes.max(initial=0)) + 1))
    m[np.arange(codes.size), codes] = 1.0
    return m


def choose_params(
    ps: sm.Pass,
    grid: dict[str, FloatArray],
    default: dict[str, float],
    mode: str,
    scales: FloatArray,
    onehot: FloatArray,
    codes: NDArray[np.int64],
) -> tuple[FloatArray, dict[str, FloatArray]]:
    """Per snapshot, the grid point with the least in-sample one-step error, chosen per series
    ("series": its SSE) or per class ("class": the class sum of each series' mean squared
    error over its own scale, ``scales`` (S, n)). Where the data say nothing yet (no error,
    or every grid point equal) the grid point nearest ``default`` is taken. Returns
    (forecast (S, n), constants {name: (S, n)}).
    """
    s_count, g, n = ps.sse.shape
    distance = np.zeros(g)
    for name, vals in grid.items():
        distance = distance + np.abs(vals[:, 0] - default[name])
    fallback = int(np.argmin(distance))
    if mode == "series":
        best = ps.sse.argmin(axis=1)
        uninformative = ps.sse.max(axis=1) <= 0.0  # no error yet, or all grid points equal
        best[uninformative] = fallback
    else:
        ok = (ps.nobs > 0) & (scales > 0)
        w = np.where(ok, 1.0 / np.where(ok, ps.nobs * scales, 1.0), 0.0)  # (S, n)
        weighted = (ps.sse * w[:, None, :]).reshape(s_count * g, n)
        cls_score = (weighted @ onehot).reshape(s_count, g, onehot.shape[1])
        cls_best = cls_score.argmin(axis=1)  # (S, C)
        cls_best[cls_score.max(axis=1) <= 0.0] = fallback
        best = cls_best[:, codes]
    fc = np.take_along_axis(ps.forecast, best[:, None, :], axis=1)[:, 0, :]
    chosen = {name: vals[best, 0] for name, vals in grid.items()}
    return fc, chosen


def origin_scales(v: FloatArray, obs: BoolArray, snaps: NDArray[np.int64]) -> FloatArray:
    """In-sample mean squared one-step change before each snapshot origin, (S, n)."""
    d = np.diff(v, axis=1) ** 2
    both = obs[:, 1:] & obs[:, :-1]
    cs = np.concatenate([np.zeros((v.shape[0], 1)), np.cumsum(np.where(both, d, 0.0), 1)], 1)
    cn = np.concatenate([np.zeros((v.shape[0], 1)), np.cumsum(both, 1)], 1)
    idx = np.maximum(snaps - 1, 0)
    return (cs[:, idx] / np.maximum(cn[:, idx], 1)).T


def candidates(
    data: OriginData,
    opt: FitOptions,
    wanted: Sequence[str] | None = None,
) -> dict[str, Candidate]:
    """Every wanted candidate's forecasts at the snapshot origins (one pass per method)."""
    v, obs, snaps, scales, codes = data.v, data.obs, data.snaps, data.scales, data.codes
    onehot = class_matrix(codes)
    out: dict[str, Candidate] = {}

    def names(method: str) -> list[tuple[str, str]]:
        if method not in opt.methods:
            return []
        res = []
        for mode in opt.param_modes:
            nm = method if mode == "series" else f"{method}@class"
            if wanted is None or nm in wanted:
                res.append((nm, mode))
        return res

    def add(ps: sm.Pass, method: str, grid: dict[str, FloatArray], default: dict[str, float]
            ) -> None:
        for nm, mode in names(method):
            fc, ch = choose_params(ps, grid, default, mode, scales, onehot, codes)
            out[nm] = Candidate(fc, method, {k: x[-1] for k, x in ch.items()})

    if names("ses"):
        a = np.asarray(opt.ses_alphas, dtype=float)[:, None]
        add(sm.ses_pass(v, obs, a, snaps), "ses", {"alpha": a}, {"alpha": 0.1})
    pairs = np.array([(a, b) for a in opt.alphas for b in opt.betas], dtype=float)
    grid2 = {"alpha": pairs[:, :1], "beta": pairs[:, 1:]}
    default2 = {"alpha": 0.1, "beta": 0.1}
    variants = [m for m in ("croston", "sba") if names(m)]
    if variants:
        passes = sm.croston_pass(v, obs, grid2["alpha"], grid2["beta"], snaps,
                                 variants=["classic" if m == "croston" else m for m in variants])
        for m in variants:
            add(passes["classic" if m == "croston" else m], m, grid2, default2)
    if names("tsb"):
        add(sm.tsb_pass(v, obs, grid2["alpha"], grid2["beta"], snaps), "tsb", grid2, default2)
    agg = {m: names(m) for m in ("adida", "imapa") if names(m)}
    if agg:
        out.update(aggregate_candidates(data, onehot, opt, agg))
    return out


def bucket_pass_at_origins(
    v: FloatArray, obs: BoolArray, k: int, snaps: NDArray[np.int64], alpha: FloatArray
) -> sm.Pass:
    """SES over k-period buckets aligned to end at each origin, all origins in ONE pass.

    Origins with the same remainder mod k share a bucket sequence (starting at that
    remainder). The sequences are stacked as extra rows, padded at the front with
    unobserved buckets so they all end together, and run through one SES pass; each
    origin's state is then read from its own block. Returns forecast and SSE per period
    (divided by k and k^2) at each origin, shape (S, G, n).
    """
    n, t_len = v.shape
    residues = np.unique(snaps % k)
    m_max = (t_len - int(residues.min())) // k
    cum_v = np.concatenate([np.zeros((n, 1)), np.cumsum(v, axis=1)], axis=1)
    cum_miss = np.concatenate([np.zeros((n, 1)), np.cumsum(~obs, axis=1)], axis=1)
    stacked_v = np.zeros((residues.size * n, m_max))
    stacked_o = np.zeros((residues.size * n, m_max), dtype=bool)
    pads = []
    for i, r in enumerate(residues):
        m = (t_len - int(r)) // k
        edges = int(r) + k * np.arange(m + 1)
        pad = m_max - m
        rows = slice(i * n, (i + 1) * n)
        stacked_v[rows, pad:] = cum_v[:, edges[1:]] - cum_v[:, edges[:-1]]
        stacked_o[rows, pad:] = (cum_miss[:, edges[1:]] - cum_miss[:, edges[:-1]]) == 0
        pads.append(pad)
    block = {int(r): i for i, r in enumerate(residues)}
    idx = np.array([pads[block[int(o % k)]] + (int(o) - int(o % k)) // k for o in snaps])
    uniq, inv = np.unique(idx, return_inverse=True)
    ps = sm.ses_pass(stacked_v, stacked_o, alpha, uniq.astype(np.int64))
    g = alpha.shape[0]
    fc = np.empty((snaps.size, g, n))
    sse = np.empty((snaps.size, g, n))
    nobs = np.empty((snaps.size, n), dtype=np.int64)
    for s, o in enumerate(snaps):
        rows = slice(block[int(o % k)] * n, (block[int(o % k)] + 1) * n)
        fc[s] = ps.forecast[inv[s], :, rows] / k
        sse[s] = ps.sse[inv[s], :, rows] / (k * k)
        nobs[s] = ps.nobs[inv[s], rows]
    return sm.Pass(fc, sse, nobs, None)


def aggregate_candidates(
    data: OriginData,
    onehot: FloatArray,
    opt: FitOptions,
    names: dict[str, list[tuple[str, str]]],
) -> dict[str, Candidate]:
    """ADIDA and IMAPA at every origin from one set of bucket passes.

    At origin o the buckets of size k are aligned to end at o, so they start at o mod k;
    one SES pass per (k, o mod k) with snapshots at the origins gives every origin. A
    series' bucket size at an origin is its ADI before that origin, rounded. ``onehot``:
    :func:`class_matrix` of ``data.codes``.
    """
    v, obs, snaps, scales, codes = data.v, data.obs, data.snaps, data.scales, data.codes
    n = v.shape[0]
    a = np.asarray(opt.agg_alphas, dtype=float)[:, None]
    tops = np.ones((snaps.size, n), dtype=np.int64)
    has = np.zeros((snaps.size, n), dtype=bool)
    for s, o in enumerate(snaps):
        if o < 1:
            continue
        vo, oo = v[:, :o], obs[:, :o]
        tops[s] = np.minimum(sm.aggregation_level(np.where(oo, vo, np.nan),
                                                  max_level=opt.max_level), max(o // 2, 1))
        has[s] = sm.has_demand(vo)
    kmax = int(tops.max(initial=1))
    modes = sorted({mode for lst in names.values() for _, mode in lst})
    lv_fc = {m: np.zeros((kmax, snaps.size, n)) for m in modes}
    lv_alpha = {m: np.full((kmax, snaps.size, n), np.nan) for m in modes}
    for k in range(1, kmax + 1):
        ps = bucket_pass_at_origins(v, obs, k, snaps, a)
        for mode in modes:
            fc, ch = choose_params(ps, {"alpha": a}, {"alpha": 0.2}, mode, scales, onehot, codes)
            lv_fc[mode][k - 1] = fc
            lv_alpha[mode][k - 1] = ch["alpha"]
    out: dict[str, Candidate] = {}
    level_no = np.arange(1, kmax + 1)[:, None, None]
    for method, lst in names.items():
        for nm, mode in lst:
            if method == "adida":
                fc = np.take_along_axis(lv_fc[mode], (tops - 1)[None], axis=0)[0]
            else:
                fc = np.where(level_no <= tops[None], lv_fc[mode], 0.0).sum(axis=0) / tops
            final_alpha = np.take_along_axis(lv_alpha[mode][:, -1, :], (tops[-1] - 1)[None],
                                             axis=0)[0]
            out[nm] = Candidate(np.where(has, fc, 0.0), method,
                                 {"k": tops[-1].astype(float), "alpha": final_alpha})
    return out
