"""Choosing among the candidates by their rolling-origin backtest (RMSSE), per SBC class:
the best single candidate or a combination, and the cheap season screen."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from inventory.forecast import demand as dm
from inventory.forecast.candidates import Candidate, OriginData, candidates
from inventory.forecast.fit_records import FAMILY, FitOptions
from inventory.forecast.passes import FloatArray
from inventory.forecast.seasonal import deseason


def rmsse_at_origins(fc: FloatArray, truth: FloatArray, scales: FloatArray,
                      season: FloatArray | None) -> FloatArray:
    """Mean over origins of RMSSE per series. ``fc`` (O, n) per-period levels, ``truth``
    (O, n, h), ``scales`` (O, n), ``season`` (O, n, h) factors or None."""
    path = fc[:, :, None] if season is None else fc[:, :, None] * season
    mse = np.mean((truth - path) ** 2, axis=2)
    ok = scales > 0
    e = np.where(ok, np.sqrt(mse / np.where(ok, scales, 1.0)), np.nan)
    cnt = ok.sum(axis=0)
    return np.where(cnt > 0, np.nansum(e, axis=0) / np.maximum(cnt, 1), np.nan)


def nanmean(x: FloatArray) -> float:
    ok = np.isfinite(x)
    return float(x[ok].mean()) if ok.any() else np.inf


def class_choice(
    cands: dict[str, Candidate],
    truth: FloatArray,
    scales: FloatArray,
    labels: NDArray[np.str_],
    opt: FitOptions,
) -> tuple[dict[str, FloatArray], dict[str, str], NDArray[np.str_]]:
    """Per class: the best single candidate or mean of the best 2..``combine``, by backtest.

    Returns (scores per candidate, choice per class, choice per series as "a+b" keys).
    """
    names = list(cands)
    scores = {m: rmsse_at_origins(cands[m].forecasts[:-1], truth, scales, None) for m in names}
    mat = np.stack([scores[m] for m in names])
    overall = np.array([nanmean(row) for row in mat])
    fallback = names[int(np.argmin(overall))]
    per_series = np.full(labels.size, fallback, dtype=object)
    choice: dict[str, str] = {}
    for c in dm.CLASSES:
        rows = np.flatnonzero(labels == c)
        if rows.size == 0:
            continue
        means = np.array([nanmean(row[rows]) for row in mat])
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
            fam = FAMILY[cands[names[int(i)]].method]
            if fam not in seen and np.isfinite(means[i]):
                seen.add(fam)
                leaders.append(names[int(i)])
        for m in range(2, min(opt.combine, len(leaders)) + 1):
            members = leaders[:m]
            fc = np.mean([cands[x].forecasts[:-1, rows] for x in members], axis=0)
            val = nanmean(rmsse_at_origins(fc, truth[:, rows], scales[:, rows], None))
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


def member_forecasts(keys: NDArray[np.str_], cands: dict[str, Candidate]) -> FloatArray:
    """(S, n) forecasts of each series' chosen candidate or mean of candidates."""
    some = next(iter(cands.values())).forecasts
    out = np.zeros_like(some)
    for key in np.unique(keys):
        rows = keys == key
        out[:, rows] = np.mean([cands[x].forecasts[:, rows] for x in key.split("+")], axis=0)
    return out


def final_params(keys: NDArray[np.str_], cands: dict[str, Candidate]) -> dict[str, FloatArray]:
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


def season_screen(
    data: OriginData, idx: FloatArray, pos: NDArray[np.int64], truth: FloatArray,
    season_bt: FloatArray, opt: FitOptions,
) -> tuple[float, float]:
    """Cheap first look: does deseasonalising help SES with one constant per class in the
    backtest? Returns its mean RMSSE without and with the profile. The profile is a
    property of the data, not of the method, so one robust method screens it; only if it
    gains ``seasonal_gain`` are all chosen methods re-run on deseasonalised demand."""
    probe = replace(opt, methods=("ses",), param_modes=("class",), ses_alphas=opt.alphas)
    plain = candidates(data, probe)["ses@class"].forecasts
    without = candidates(replace(data, v=deseason(data.v, data.obs, idx, pos)),
                         probe)["ses@class"].forecasts
    bt = data.scales[:-1]
    s_plain = nanmean(rmsse_at_origins(plain[:-1], truth, bt, None))
    s_season = nanmean(rmsse_at_origins(without[:-1], truth, bt, season_bt))
    return s_plain, s_season
