"""Demand forecasts for many slow, lumpy series at once, and the demand distribution.

Input: a 2-D float array ``y[series, period]``; leading ``NaN`` means "not started yet"
(a part's history starts at its first receipt or use). Everything is numpy over all
series at once; the recursions live in :mod:`inventory.forecast.smoothing` and are
re-exported here (:func:`ses`, :func:`croston`, :func:`sba`, :func:`tsb`, :func:`adida`,
:func:`imapa`).

:func:`fit_forecast`
    1. Classifies each series (ADI / CV^2, Syntetos-Boylan-Croston cut-offs).
    2. Runs every candidate method once over a grid of smoothing constants and picks the
       constants by in-sample one-step squared error, both per series ("ses") and per SBC
       class ("ses@class": one constant for the class, the sum of each series' mean squared
       error over its own scale), because one slow series has too few demands to pin a
       constant down.
    3. Scores every candidate in a rolling-origin backtest inside the data (``origins``
       origins one period apart, each scored on the next ``horizon`` periods) with RMSSE,
       and chooses per SBC class the best single candidate or a forecast combination (the
       mean of the best candidate of each of the top two or three method families); a
       single candidate must beat the combination by ``single_margin`` to be kept, since
       combinations are the more robust choice when the backtest cannot tell them apart.
    4. Seasonality: monthly indices from POOLED demand (all series, or per group such as a
       fork family) by ratio to a centred moving average, applied to each series' level.
       A cheap screen (SES, one constant per class, with and without the profile) and then
       the chosen configuration itself are run on deseasonalised demand in the same
       backtest; the profile stays only if RMSSE improves by ``seasonal_gain``, so data
       without a season (or too short to estimate one) switch it off by themselves.

    Why RMSSE (root mean squared scaled error, the M5 competition's measure): squared
    error is minimised by the MEAN of future demand, which is what the stock model needs
    (the negative binomial below is parameterised by its mean). Absolute errors (MAE,
    MASE) are minimised by the median, which is zero for most intermittent series, so they
    reward forecasting zero and would empty the shelf. The scale (in-sample mean squared
    one-step change) makes series of different volume comparable, so a few fast movers do
    not choose the method for everyone.

:func:`fit_distribution` (in :mod:`inventory.forecast.uncertainty`, re-exported here)
    Demand per period for the coming lead time + review period as a negative binomial
    whose mean is the forecast and whose variance over the cover, with mean M, follows the
    power law ``a * M**b`` across parts (the "variance law" of spare-parts demand,
    sigma^2 = a mu^b; recalled from memory: Stevens 1974, and the sigma-versus-demand
    relation in Silver, Pyke and Peterson ch. 4). ``a`` and ``b`` are fitted per SBC class
    by maximum likelihood on the rolling-origin backtest's own forecasts against what
    followed them (held ``hold`` periods, as the levels will be); each part then keeps its
    variance-to-mean ratio a M^(b-1) at every horizon (compound-Poisson scaling). Series
    that never sold get a pooled "cold start" rate measured the same way.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import demand as dm
from inventory.forecast import smoothing as sm
from inventory.forecast.accuracy import mase, rmsse, scaled_bias, scaled_total_error
from inventory.forecast.smoothing import (
    adida,
    aggregation_level,
    croston,
    imapa,
    sba,
    ses,
    tsb,
)

__all__ = [
    "METHODS",
    "FitOptions",
    "ForecastResult",
    "DistributionFit",
    "fit_forecast",
    "fit_distribution",
    "fit_variance_law",
    "nb_loglik",
    "seasonal_indices",
    "ses",
    "croston",
    "sba",
    "tsb",
    "adida",
    "imapa",
    "aggregation_level",
    "rmsse",
    "mase",
    "scaled_bias",
    "scaled_total_error",
]

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

METHODS = ("ses", "croston", "sba", "tsb", "adida", "imapa")
_FAMILY = {"ses": "ses", "croston": "croston", "sba": "croston", "tsb": "tsb",
           "adida": "aggregation", "imapa": "aggregation"}


# -- seasonality from pooled demand ---------------------------------------------------------


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


# -- options and result ------------------------------------------------------------------------


@dataclass(frozen=True)
class FitOptions:
    """Knobs of :func:`fit_forecast`, with their defaults.

    - ``methods``: candidates, any of :data:`METHODS`.
    - ``param_modes``: "series" (constants per series) and/or "class" (per SBC class).
    - ``ses_alphas``: SES grid; ``alphas`` / ``betas``: Croston, SBA and TSB grids for the
      size and the interval/probability constants; ``agg_alphas``: ADIDA and IMAPA grid
      (0.1..0.3, the range statsforecast searches).
    - ``origins``: rolling origins in the selection backtest, one period apart, the last
      one ``horizon`` periods before the end of the data; ``horizon``: periods scored.
    - ``combine``: the largest number of candidates whose mean may be chosen (1 = pure
      selection); a combination takes the best candidate of each method family in rank
      order. ``single_margin``: a single candidate is kept over a combination only if it
      scores better by this fraction (0.5 %: combinations are the more robust choice when
      the backtest cannot tell them apart; 0 = plain comparison).
    - ``select``: "class" (per SBC class, robust) or "series" (per series, noisy).
    - ``seasonal``: "auto" (on only if the backtest RMSSE improves by ``seasonal_gain``, a
      fraction), "on" or "off"; ``period``: season length in periods.
    - ``max_level``: largest ADIDA / IMAPA bucket.
    - ``chunk_series``: above this many series the fit runs on interleaved chunks of at
      most this many (series i goes to chunk i mod k), each chunk choosing its own class
      constants, methods and season, so memory stays bounded (the candidate passes hold
      about 14 KB per series); every chunk still has thousands of series per fit.
    """

    methods: tuple[str, ...] = METHODS
    param_modes: tuple[str, ...] = ("series", "class")
    ses_alphas: tuple[float, ...] = tuple(np.round(np.arange(0.02, 1.0, 0.04), 2))
    alphas: tuple[float, ...] = (0.05, 0.1, 0.2, 0.3, 0.5)
    betas: tuple[float, ...] = (0.05, 0.1, 0.2, 0.3, 0.5)
    agg_alphas: tuple[float, ...] = (0.1, 0.15, 0.2, 0.25, 0.3)
    origins: int = 6
    horizon: int = 6
    combine: int = 3
    single_margin: float = 0.005
    select: Literal["class", "series"] = "class"
    seasonal: Literal["auto", "on", "off"] = "auto"
    seasonal_gain: float = 0.01
    period: int = 12
    max_level: int = 12
    chunk_series: int = 4000


@dataclass(frozen=True)
class ForecastResult:
    """A fitted forecast for ``n`` series.

    - ``level``: per-period level after the data (deseasonalised when ``seasonal``).
    - ``method``: the chosen candidate, or "a+b+c" for a combination, per series.
    - ``indices``: ``(n, period)`` seasonal index per series (all ones when off);
      ``next_pos``: season position of the first period after the data.
    - ``origins``: the rolling origins of the selection backtest and ``origin_paths``
      ``(O, n, h)``: the chosen model's forecast made at each of them for the ``h``
      periods that followed (the distribution is calibrated on these).
    - ``scores``: backtest RMSSE per candidate and series; ``class_choice``: choice per
      class; ``seasonal_scores``: mean backtest RMSSE of the chosen methods without / with
      the season (NaN when the screen stopped it); ``season_screen``: the same for the
      screening method (SES, one constant per class).
    - ``params``: smoothing constants of each series' first chosen candidate (display).
    """

    level: FloatArray
    method: NDArray[np.str_]
    classification: dm.Classification
    seasonal: bool
    indices: FloatArray
    next_pos: int
    origins: NDArray[np.int64]
    origin_paths: FloatArray
    scores: dict[str, FloatArray] = field(default_factory=dict)
    class_choice: dict[str, str] = field(default_factory=dict)
    seasonal_scores: tuple[float, float] = (np.nan, np.nan)
    params: dict[str, FloatArray] = field(default_factory=dict)
    season_screen: tuple[float, float] = (np.nan, np.nan)

    def mean(self, horizon: int) -> FloatArray:
        """Forecast mean per series and period for the next ``horizon`` periods, ``(n, h)``."""
        period = self.indices.shape[1]
        pos = (self.next_pos + np.arange(horizon)) % period
        return self.level[:, None] * self.indices[:, pos]


# -- candidates --------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Candidate:
    """Per-period forecasts of one candidate at the snapshot origins (S, n) and its final
    smoothing constants (for display)."""

    forecasts: FloatArray
    method: str
    final: dict[str, FloatArray]


def _class_matrix(codes: NDArray[np.int64]) -> FloatArray:
    """One-hot (n, n_classes) matrix of the class codes."""
    m = np.zeros((codes.size, int(codes.max(initial=0)) + 1))
    m[np.arange(codes.size), codes] = 1.0
    return m


def _choose_params(
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


def _origin_scales(v: FloatArray, obs: BoolArray, snaps: NDArray[np.int64]) -> FloatArray:
    """In-sample mean squared one-step change before each snapshot origin, (S, n)."""
    d = np.diff(v, axis=1) ** 2
    both = obs[:, 1:] & obs[:, :-1]
    cs = np.concatenate([np.zeros((v.shape[0], 1)), np.cumsum(np.where(both, d, 0.0), 1)], 1)
    cn = np.concatenate([np.zeros((v.shape[0], 1)), np.cumsum(both, 1)], 1)
    idx = np.maximum(snaps - 1, 0)
    return (cs[:, idx] / np.maximum(cn[:, idx], 1)).T


def _candidates(
    v: FloatArray,
    obs: BoolArray,
    snaps: NDArray[np.int64],
    scales: FloatArray,
    codes: NDArray[np.int64],
    opt: FitOptions,
    wanted: Sequence[str] | None = None,
) -> dict[str, _Candidate]:
    """Every wanted candidate's forecasts at the snapshot origins (one pass per method)."""
    onehot = _class_matrix(codes)
    out: dict[str, _Candidate] = {}

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
            fc, ch = _choose_params(ps, grid, default, mode, scales, onehot, codes)
            out[nm] = _Candidate(fc, method, {k: x[-1] for k, x in ch.items()})

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
        out.update(_aggregate_candidates(v, obs, snaps, scales, onehot, codes, opt, agg))
    return out


def _bucket_pass_at_origins(
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


def _aggregate_candidates(
    v: FloatArray,
    obs: BoolArray,
    snaps: NDArray[np.int64],
    scales: FloatArray,
    onehot: FloatArray,
    codes: NDArray[np.int64],
    opt: FitOptions,
    names: dict[str, list[tuple[str, str]]],
) -> dict[str, _Candidate]:
    """ADIDA and IMAPA at every origin from one set of bucket passes.

    At origin o the buckets of size k are aligned to end at o, so they start at o mod k;
    one SES pass per (k, o mod k) with snapshots at the origins gives every origin. A
    series' bucket size at an origin is its ADI before that origin, rounded.
    """
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
        ps = _bucket_pass_at_origins(v, obs, k, snaps, a)
        for mode in modes:
            fc, ch = _choose_params(ps, {"alpha": a}, {"alpha": 0.2}, mode, scales, onehot, codes)
            lv_fc[mode][k - 1] = fc
            lv_alpha[mode][k - 1] = ch["alpha"]
    out: dict[str, _Candidate] = {}
    level_no = np.arange(1, kmax + 1)[:, None, None]
    for method, lst in names.items():
        for nm, mode in lst:
            if method == "adida":
                fc = np.take_along_axis(lv_fc[mode], (tops - 1)[None], axis=0)[0]
            else:
                fc = np.where(level_no <= tops[None], lv_fc[mode], 0.0).sum(axis=0) / tops
            final_alpha = np.take_along_axis(lv_alpha[mode][:, -1, :], (tops[-1] - 1)[None],
                                             axis=0)[0]
            out[nm] = _Candidate(np.where(has, fc, 0.0), method,
                                 {"k": tops[-1].astype(float), "alpha": final_alpha})
    return out


# -- selection -----------------------------------------------------------------------------------


def _rmsse_at_origins(fc: FloatArray, truth: FloatArray, scales: FloatArray,
                      season: FloatArray | None) -> FloatArray:
    """Mean over origins of RMSSE per series. ``fc`` (O, n) per-period levels, ``truth``
    (O, n, h), ``scales`` (O, n), ``season`` (O, n, h) factors or None."""
    path = fc[:, :, None] if season is None else fc[:, :, None] * season
    mse = np.mean((truth - path) ** 2, axis=2)
    ok = scales > 0
    e = np.where(ok, np.sqrt(mse / np.where(ok, scales, 1.0)), np.nan)
    cnt = ok.sum(axis=0)
    return np.where(cnt > 0, np.nansum(e, axis=0) / np.maximum(cnt, 1), np.nan)


def _nanmean(x: FloatArray) -> float:
    ok = np.isfinite(x)
    return float(x[ok].mean()) if ok.any() else np.inf


def _class_choice(
    cands: dict[str, _Candidate],
    truth: FloatArray,
    scales: FloatArray,
    labels: NDArray[np.str_],
    opt: FitOptions,
) -> tuple[dict[str, FloatArray], dict[str, str], NDArray[np.str_]]:
    """Per class: the best single candidate or mean of the best 2..``combine``, by backtest.

    Returns (scores per candidate, choice per class, choice per series as "a+b" keys).
    """
    names = list(cands)
    scores = {m: _rmsse_at_origins(cands[m].forecasts[:-1], truth, scales, None) for m in names}
    mat = np.stack([scores[m] for m in names])
    overall = np.array([_nanmean(row) for row in mat])
    fallback = names[int(np.argmin(overall))]
    per_series = np.full(labels.size, fallback, dtype=object)
    choice: dict[str, str] = {}
    for c in dm.CLASSES:
        rows = np.flatnonzero(labels == c)
        if rows.size == 0:
            continue
        means = np.array([_nanmean(row[rows]) for row in mat])
        if not np.isfinite(means).any():
            choice[c] = fallback
            continue
        order = np.argsort(means, kind="stable")
        best_key, best_val = names[int(order[0])], float(means[order[0]])
        single_val = best_val
        # combinations: the best candidate of each method family, in rank order (two
        # variants of one method make a weak combination)
        leaders: list[str] = []
        seen: set[str] = set()
        for i in order:
            fam = _FAMILY[cands[names[int(i)]].method]
            if fam not in seen and np.isfinite(means[i]):
                seen.add(fam)
                leaders.append(names[int(i)])
        for m in range(2, min(opt.combine, len(leaders)) + 1):
            members = leaders[:m]
            fc = np.mean([cands[x].forecasts[:-1, rows] for x in members], axis=0)
            val = _nanmean(_rmsse_at_origins(fc, truth[:, rows], scales[:, rows], None))
            if val < best_val or (best_key == names[int(order[0])]
                                  and val * (1.0 - opt.single_margin) <= single_val):
                best_key, best_val = "+".join(members), val
        choice[c] = best_key
        per_series[rows] = best_key
    if opt.select == "series":
        ok = np.isfinite(mat).any(axis=0)
        best = np.argmin(np.where(np.isfinite(mat), mat, np.inf), axis=0)
        for i in np.flatnonzero(ok):
            per_series[i] = names[int(best[i])]
    return scores, choice, per_series.astype(str)


def _member_forecasts(keys: NDArray[np.str_], cands: dict[str, _Candidate]) -> FloatArray:
    """(S, n) forecasts of each series' chosen candidate or mean of candidates."""
    some = next(iter(cands.values())).forecasts
    out = np.zeros_like(some)
    for key in np.unique(keys):
        rows = keys == key
        out[:, rows] = np.mean([cands[x].forecasts[:, rows] for x in key.split("+")], axis=0)
    return out


def _deseason(v: FloatArray, obs: BoolArray, idx: FloatArray, pos: NDArray[np.int64]) -> FloatArray:
    f = idx[:, pos[: v.shape[1]]]
    return np.where(obs, v / np.where(f > 0, f, 1.0), 0.0)


def _final_params(keys: NDArray[np.str_], cands: dict[str, _Candidate]) -> dict[str, FloatArray]:
    """Smoothing constants of each series' first chosen candidate (NaN where none)."""
    n = keys.size
    out = {k: np.full(n, np.nan) for k in ("alpha", "beta", "k")}
    first = np.array([k.split("+")[0] for k in keys])
    for name in np.unique(first):
        rows = first == name
        for k, vals in cands[name].final.items():
            if k in out:
                out[k][rows] = vals[rows]
    return out


def _season_screen(
    v: FloatArray, obs: BoolArray, idx: FloatArray, pos: NDArray[np.int64],
    snaps: NDArray[np.int64], scales: FloatArray, codes: NDArray[np.int64], truth: FloatArray,
    season_bt: FloatArray, opt: FitOptions,
) -> tuple[float, float]:
    """Cheap first look: does deseasonalising help SES with one constant per class in the
    backtest? Returns its mean RMSSE without and with the profile. The profile is a
    property of the data, not of the method, so one robust method screens it; only if it
    gains ``seasonal_gain`` are all chosen methods re-run on deseasonalised demand."""
    probe = replace(opt, methods=("ses",), param_modes=("class",), ses_alphas=opt.alphas)
    plain = _candidates(v, obs, snaps, scales, codes, probe)["ses@class"].forecasts
    deseason = _candidates(_deseason(v, obs, idx, pos), obs, snaps, scales, codes,
                           probe)["ses@class"].forecasts
    bt = scales[:-1]
    s_plain = _nanmean(_rmsse_at_origins(plain[:-1], truth, bt, None))
    s_season = _nanmean(_rmsse_at_origins(deseason[:-1], truth, bt, season_bt))
    return s_plain, s_season


def fit_forecast(
    y: ArrayLike,
    *,
    season_pos: ArrayLike | None = None,
    groups: ArrayLike | None = None,
    options: FitOptions | None = None,
) -> ForecastResult:
    """Fit the candidates, choose per SBC class by rolling origin, decide on the season.

    ``y``: ``(series, periods)`` demand, leading NaN = not started. ``season_pos``: season
    position (0..period-1) of each column, e.g. calendar month - 1; without it the season
    is off. ``groups``: label per series for pooling seasonal indices (default one pool).
    """
    opt = options or FitOptions()
    y_arr = np.asarray(y, dtype=float)
    if y_arr.ndim == 2 and opt.chunk_series > 0 and y_arr.shape[0] > opt.chunk_series:
        return _fit_in_chunks(y_arr, season_pos, groups, opt)
    v, obs = sm.prepare(y_arr)
    n, t_len = v.shape
    cls = dm.classify(np.where(obs, v, np.nan))
    codes = cls.codes()
    h = max(1, min(opt.horizon, t_len // 3))
    last = t_len - h
    origins = np.array([o for o in range(last - opt.origins + 1, last + 1) if o >= 2],
                       dtype=np.int64)
    snaps = np.r_[origins, t_len].astype(np.int64)
    scales = _origin_scales(v, obs, snaps)
    truth = np.stack([v[:, o:o + h] for o in origins]) if origins.size else np.zeros((0, n, h))
    bt_scales = scales[:-1]

    cands = _candidates(v, obs, snaps, scales, codes, opt)
    if origins.size:
        scores, choice, keys = _class_choice(cands, truth, bt_scales, cls.label, opt)
    else:  # too short to backtest: the first candidate for everyone
        first = next(iter(cands))
        scores, choice, keys = {}, {}, np.full(n, first)
    plain = _member_forecasts(keys, cands)
    plain_score = _nanmean(_rmsse_at_origins(plain[:-1], truth, bt_scales, None))

    pos = np.zeros(t_len, dtype=np.int64)
    if season_pos is not None:
        pos = np.asarray(season_pos, dtype=np.int64) % opt.period
    next_pos = int((pos[-1] + 1) % opt.period) if (t_len and season_pos is not None) else 0
    level = plain[-1]
    paths = plain[:-1, :, None] * np.ones((1, 1, h))
    seasonal = False
    indices = np.ones((n, opt.period))
    seasonal_score = np.nan
    screen = (np.nan, np.nan)
    if season_pos is not None and opt.seasonal != "off" and origins.size:
        gl = np.zeros(n, dtype=np.int64) if groups is None else np.asarray(groups)
        _, gi = np.unique(gl, return_inverse=True)
        first_o = int(origins[0])
        idx_bt = seasonal_indices(v[:, :first_o], pos[:first_o], period=opt.period,
                                  groups=gi)[gi]
        season_bt = np.stack([idx_bt[:, pos[o:o + h]] for o in origins])
        if not np.allclose(idx_bt, 1.0):
            screen = _season_screen(v, obs, idx_bt, pos, snaps, scales, codes, truth, season_bt,
                                    opt)
        if opt.seasonal == "on" or screen[1] < screen[0] * (1.0 - opt.seasonal_gain):
            wanted = sorted({x for key in np.unique(keys) for x in key.split("+")})
            c_bt = _candidates(_deseason(v, obs, idx_bt, pos), obs, snaps, scales, codes, opt,
                               wanted)
            s_fc = _member_forecasts(keys, c_bt)
            seasonal_score = _nanmean(_rmsse_at_origins(s_fc[:-1], truth, bt_scales, season_bt))
            if opt.seasonal == "on" or seasonal_score < plain_score * (1.0 - opt.seasonal_gain):
                seasonal = True
                indices = seasonal_indices(v, pos, period=opt.period, groups=gi)[gi]
                c_all = _candidates(_deseason(v, obs, indices, pos), obs, snaps, scales, codes,
                                    opt, wanted)
                level = _member_forecasts(keys, c_all)[-1]
                paths = s_fc[:-1, :, None] * season_bt
    return ForecastResult(
        level=level, method=keys, classification=cls, seasonal=seasonal, indices=indices,
        next_pos=next_pos, origins=origins, origin_paths=paths, scores=scores,
        class_choice=choice, seasonal_scores=(plain_score, seasonal_score), season_screen=screen,
        params=_final_params(keys, cands),
    )


def _fit_in_chunks(y: FloatArray, season_pos: ArrayLike | None, groups: ArrayLike | None,
                   opt: FitOptions) -> ForecastResult:
    """:func:`fit_forecast` on interleaved chunks of at most ``opt.chunk_series`` series,
    merged in the original order (see :class:`FitOptions`). Each chunk's result is copied
    into the merged arrays and dropped before the next chunk is fitted."""
    n = y.shape[0]
    k = -(-n // opt.chunk_series)
    g_all = None if groups is None else np.asarray(groups)
    out: dict[str, NDArray] = {}
    choice: dict[str, str] = {}
    seasonal = False
    s_scores: list[tuple[float, float]] = []
    screens: list[tuple[float, float]] = []
    first: ForecastResult | None = None

    def put(key: str, rows: NDArray[np.int64], value: NDArray, axis: int = 0) -> None:
        if key not in out:
            shape = list(value.shape)
            shape[axis] = n
            dtype = value.dtype if value.dtype.kind != "U" else np.dtype("<U128")
            out[key] = np.empty(shape, dtype=dtype)
        idx: list[slice | NDArray[np.int64]] = [slice(None)] * value.ndim
        idx[axis] = rows
        out[key][tuple(idx)] = value

    for j in range(k):
        rows = np.arange(j, n, k)
        r = fit_forecast(y[rows], season_pos=season_pos,
                         groups=None if g_all is None else g_all[rows],
                         options=replace(opt, chunk_series=0))
        c = r.classification
        for key, val in (("level", r.level), ("method", r.method), ("adi", c.adi),
                         ("cv2", c.cv2), ("n_demands", c.n_demands), ("label", c.label),
                         ("indices", r.indices)):
            put(key, rows, np.asarray(val))
        put("paths", rows, r.origin_paths, axis=1)
        for m, val in r.scores.items():
            put("score:" + m, rows, val)
        for m, val in r.params.items():
            put("param:" + m, rows, val)
        for cl, m in r.class_choice.items():
            seen = choice.get(cl, "")
            if m not in seen.split(" | "):
                choice[cl] = f"{seen} | {m}" if seen else m
        seasonal = seasonal or r.seasonal
        s_scores.append(r.seasonal_scores)
        screens.append(r.season_screen)
        if first is None:
            first = r
        del r
    assert first is not None

    def text(key: str) -> NDArray[np.str_]:
        a = out[key]  # back to the narrowest unicode width the values need
        width = int(np.char.str_len(a).max(initial=1)) if a.size else 1
        return a.astype(f"<U{max(width, 1)}")

    cls = dm.Classification(adi=out["adi"], cv2=out["cv2"], n_demands=out["n_demands"],
                            label=text("label"), ddof=first.classification.ddof)
    return ForecastResult(
        level=out["level"], method=text("method"), classification=cls, seasonal=seasonal,
        indices=out["indices"], next_pos=first.next_pos, origins=first.origins,
        origin_paths=out["paths"],
        scores={m[6:]: v for m, v in out.items() if m.startswith("score:")},
        class_choice=choice,
        seasonal_scores=(_mean_of([x[0] for x in s_scores]), _mean_of([x[1] for x in s_scores])),
        params={m[6:]: v for m, v in out.items() if m.startswith("param:")},
        season_screen=(_mean_of([x[0] for x in screens]), _mean_of([x[1] for x in screens])),
    )


def _mean_of(xs: list[float]) -> float:
    ok = [x for x in xs if np.isfinite(x)]
    return float(np.mean(ok)) if ok else float("nan")


def with_level(result: ForecastResult, level: ArrayLike) -> ForecastResult:
    """A copy of ``result`` with another level (e.g. blended with an installed-base signal)."""
    return replace(result, level=np.asarray(level, dtype=float))


# the demand distribution lives in its own module; re-exported here for one import path
from inventory.forecast.uncertainty import (  # noqa: E402
    DistributionFit,
    fit_distribution,
    fit_variance_law,
    nb_loglik,
)
