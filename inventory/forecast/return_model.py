"""Installed base, part 2: what the shop's history says about returning forks: the return
probability, the lag distribution around the due month and the level of the returning
visit (see :mod:`inventory.forecast.installed_base`)."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast.fork_visits import (
    ANY,
    DUE,
    NOT_DUE,
    UNKNOWN,
    FloatArray,
    IntArray,
    ReturnOptions,
    Timeline,
    month_index,
)


@dataclass(frozen=True)
class ReturnModel:
    """What the history says about returns.

    ``p``: share of visits (with a known outcome) followed by a return within the window;
    ``lags``: lag values (months after the due month) and ``pmf`` their probabilities;
    ``shares``: (family, flag) -> {level: share} for the level of the returning visit
    (flag :data:`ANY` for later returns); ``n_visits``: visits the measurement used;
    ``fallback``: True when too few outcomes were known and all visits due before the
    cutoff were used (``p`` is then a lower bound).
    """

    p: float
    lags: IntArray
    pmf: FloatArray
    shares: dict[tuple[str, int], dict[str, float]]
    n_visits: int
    fallback: bool

    def lag_pmf(self, lag: ArrayLike) -> FloatArray:
        """P(lag = x) for integer month lags ``x`` (0 outside the support)."""
        x = np.asarray(lag, dtype=np.int64)
        out = np.zeros(x.shape)
        if self.lags.size:
            i = x - self.lags[0]
            ok = (i >= 0) & (i < self.lags.size)
            out[ok] = self.pmf[i[ok]]
        return out

    def lag_survival(self, lag: ArrayLike) -> FloatArray:
        """P(lag >= x)."""
        x = np.asarray(lag, dtype=np.int64)
        if not self.lags.size:
            return np.zeros(x.shape)
        tail = np.cumsum(self.pmf[::-1])[::-1]  # tail[i] = P(lag >= lags[i])
        i = np.clip(x - self.lags[0], 0, self.lags.size)
        return np.where(i >= self.lags.size, 0.0, tail[np.minimum(i, self.lags.size - 1)])


def fit_return_model(
    timeline: Timeline,
    *,
    cutoff: date | np.datetime64,
    options: ReturnOptions | None = None,
) -> ReturnModel:
    """Return probability, lag distribution and level shares from a :func:`service_timeline`."""
    opt = options or ReturnOptions()
    c = int(month_index(np.datetime64(cutoff, "D")))
    due_m = month_index(timeline.due)
    has_next = ~np.isnat(timeline.next_day)
    next_m = np.where(has_next, month_index(np.where(has_next, timeline.next_day,
                                                timeline.day)), 0)
    lag = next_m - due_m
    known = due_m + opt.window_months < c
    fallback = int(known.sum()) < opt.min_visits
    if fallback:
        known = due_m < c
    returned = has_next & (lag <= opt.window_months)
    lags = np.arange(-opt.early_months, opt.window_months + 1, dtype=np.int64)
    if known.any():
        p = float(returned[known].mean())
        got = np.clip(lag[known & returned], -opt.early_months, opt.window_months)
        counts = np.bincount(got - lags[0], minlength=lags.size).astype(float)
        pmf = counts / counts.sum() if counts.sum() > 0 else np.zeros(lags.size)
    else:
        p, pmf = 0.0, np.zeros(lags.size)
    return ReturnModel(p, lags, pmf, _level_shares(timeline, opt), int(known.sum()), fallback)


def _level_shares(t: Timeline, opt: ReturnOptions) -> dict[tuple[str, int], dict[str, float]]:
    """Level of the returning visit per (family, flag), shrunk to the pooled shares."""
    has_next = t.next_level != ""
    all_levels = sorted(set(t.level.tolist()))
    fam_levels = {f: sorted(set(t.level[t.family == f].tolist())) for f in np.unique(t.family)}

    def counts(mask: NDArray[np.bool_]) -> FloatArray:
        nl = t.next_level[mask]
        return np.array([float((nl == lv).sum()) for lv in all_levels])

    pooled_any = counts(has_next)
    base = (pooled_any / pooled_any.sum() if pooled_any.sum() > 0
            else np.full(len(all_levels), 1.0 / max(len(all_levels), 1)))
    out: dict[tuple[str, int], dict[str, float]] = {}
    for flag in (NOT_DUE, DUE, UNKNOWN, ANY):
        sel = has_next if flag == ANY else has_next & (t.flag == flag)
        pc = counts(sel)
        pooled = _shrunk(pc, base, opt.share_prior)
        for fam, levels in fam_levels.items():
            s = _shrunk(counts(sel & (t.family == fam)), pooled, opt.share_prior)
            allowed = np.isin(all_levels, levels)
            s = np.where(allowed, s, 0.0)
            s = s / s.sum() if s.sum() > 0 else allowed / max(allowed.sum(), 1)
            out[(str(fam), flag)] = {lv: float(x) for lv, x in zip(all_levels, s, strict=True)
                                     if x > 0}
    return out


def _shrunk(counts: FloatArray, prior: FloatArray, weight: float) -> FloatArray:
    """Shares from counts pulled towards ``prior`` by ``weight`` pseudo-counts."""
    total = counts.sum() + weight
    return (counts + weight * prior) / total if total > 0 else prior.copy()
