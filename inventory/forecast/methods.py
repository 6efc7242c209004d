"""Demand forecasts for many slow, lumpy series at once, and the demand distribution.

Input: a 2-D float array ``y[series, period]``; leading ``NaN`` means "not started yet"
(a part's history starts at its first receipt or use). Everything is numpy over all
series at once; the recursions live in :mod:`inventory.forecast.smoothing` and are
re-exported here (:func:`ses`, :func:`croston`, :func:`sba`, :func:`tsb`, :func:`adida`,
:func:`imapa`).

:func:`fit_forecast`
    1. Classifies each series (ADI / CV^2, Syntetos-Boylan-Croston cut-offs).
    2. Runs every candidate method once over a grid of smoothing constants and picks the
       constants by in-sample one-step squared error per SBC class ("ses@class": one
       constant for the class, the sum of each series' mean squared error over its own
       scale), because one slow series has too few demands to pin a constant down; per
       series ("ses") on request (``FitOptions.param_modes``: per class only is the
       default, chosen by cross-validation, see :class:`FitOptions`).
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

from dataclasses import replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import demand as dm
from inventory.forecast import smoothing as sm
from inventory.forecast.accuracy import mase, rmsse, scaled_bias, scaled_total_error
from inventory.forecast.candidates import OriginData, candidates, origin_scales
from inventory.forecast.fit_records import METHODS, FitOptions, ForecastResult
from inventory.forecast.passes import FloatArray
from inventory.forecast.seasonal import deseason, seasonal_indices
from inventory.forecast.selection import (
    class_choice,
    final_params,
    member_forecasts,
    nanmean,
    rmsse_at_origins,
    season_screen,
)
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
    cls = dm.classify(np.where(obs, v, np.nan), adi_cutoff=opt.adi_cutoff,
                      cv2_cutoff=opt.cv2_cutoff)
    codes = cls.codes()
    h = max(1, min(opt.horizon, t_len // 3))
    last = t_len - h
    origins = np.array([o for o in range(last - opt.origins + 1, last + 1) if o >= 2],
                       dtype=np.int64)
    snaps = np.r_[origins, t_len].astype(np.int64)
    scales = origin_scales(v, obs, snaps)
    truth = np.stack([v[:, o:o + h] for o in origins]) if origins.size else np.zeros((0, n, h))
    bt_scales = scales[:-1]

    data = OriginData(v, obs, snaps, scales, codes)
    cands = candidates(data, opt)
    if origins.size:
        scores, choice, keys = class_choice(cands, truth, bt_scales, cls.label, opt)
    else:  # too short to backtest: the first candidate for everyone
        first = next(iter(cands))
        scores, choice, keys = {}, {}, np.full(n, first)
    plain = member_forecasts(keys, cands)
    plain_score = nanmean(rmsse_at_origins(plain[:-1], truth, bt_scales, None))

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
            screen = season_screen(data, idx_bt, pos, truth, season_bt, opt)
        if opt.seasonal == "on" or screen[1] < screen[0] * (1.0 - opt.seasonal_gain):
            wanted = sorted({x for key in np.unique(keys) for x in key.split("+")})
            c_bt = candidates(replace(data, v=deseason(v, obs, idx_bt, pos)), opt, wanted)
            s_fc = member_forecasts(keys, c_bt)
            seasonal_score = nanmean(rmsse_at_origins(s_fc[:-1], truth, bt_scales, season_bt))
            if opt.seasonal == "on" or seasonal_score < plain_score * (1.0 - opt.seasonal_gain):
                seasonal = True
                indices = seasonal_indices(v, pos, period=opt.period, groups=gi)[gi]
                c_all = candidates(replace(data, v=deseason(v, obs, indices, pos)), opt, wanted)
                level = member_forecasts(keys, c_all)[-1]
                paths = s_fc[:-1, :, None] * season_bt
    return ForecastResult(
        level=level, method=keys, classification=cls, seasonal=seasonal, indices=indices,
        next_pos=next_pos, origins=origins, origin_paths=paths, scores=scores,
        class_choice=choice, seasonal_scores=(plain_score, seasonal_score), season_screen=screen,
        params=final_params(keys, cands),
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
            out[key] = np.empty(shape, dtype=value.dtype)
        elif value.dtype.kind == "U" and value.dtype.itemsize > out[key].dtype.itemsize:
            out[key] = out[key].astype(value.dtype)  # a later chunk's text is wider: widen
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
