"""Installed base, part 3: jobs to kit items, and the weight of the installed-base signal
against the time-series forecast, chosen by a rolling-origin backtest (RMSSE)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from inventory.core.model import KitSpec
from inventory.forecast.accuracy import rmsse
from inventory.forecast.fork_visits import LOWER_LEG, FloatArray


def usage_from_kits(
    kits: Sequence[KitSpec],
    groups: Sequence[tuple[str, str]],
    items: Sequence[str],
    *,
    with_lower_leg: bool = True,
) -> FloatArray:
    """Kit items used per job of each (family, level) group, by the kit rule: a job of
    level L on family F takes F's L kit, and (``with_lower_leg``, common practice: a full
    service opens the lower legs) F's lower-leg kit too. ``(groups, items)``; kits not in
    ``items`` are skipped."""
    col = {c: j for j, c in enumerate(items)}
    kit_of = {(k.fork, str(k.service_level)): k.code for k in kits}
    u = np.zeros((len(groups), len(items)))
    for g, (fam, level) in enumerate(groups):
        wanted = [level] + ([LOWER_LEG] if with_lower_leg and level != LOWER_LEG else [])
        for lv in wanted:
            code = kit_of.get((fam, lv))
            if code in col:
                u[g, col[code]] += 1.0
    return u


@dataclass(frozen=True)
class BlendChoice:
    """The weight of the installed-base signal and the backtest that chose it.

    ``scores``: mean RMSSE over series and origins per weight tried; ``ts`` / ``ib`` /
    ``blend``: the scores at weight 0, 1 and the chosen one; ``reason``: one sentence.
    """

    weight: float
    scores: dict[float, float]
    ts: float
    ib: float
    blend: float
    origins: int
    reason: str


def choose_blend(
    actual: Sequence[FloatArray],
    ts: Sequence[FloatArray],
    ib: Sequence[FloatArray],
    history: Sequence[FloatArray],
    *,
    weights: Sequence[float] = tuple(np.round(np.linspace(0.0, 1.0, 11), 2)),
    min_gain: float = 0.01,
) -> BlendChoice:
    """Weight w of ``(1 - w) * ts + w * ib`` with the least mean RMSSE over rolling origins.

    Each list entry is one origin: ``actual``, ``ts``, ``ib`` ``(n, h)`` and ``history``
    ``(n, T_o)`` the data before it (the RMSSE scale). RMSSE because squared error is
    minimised by the mean, which is what the stock model needs (as in the method
    selection). A weight above zero is kept only if it improves the score of the
    time-series forecast alone by at least ``min_gain`` (a fraction): a signal that does
    not clearly help is left out.
    """
    if not actual:
        return BlendChoice(0.0, {}, np.nan, np.nan, np.nan, 0,
                           "no backtest origin: history too short to judge the installed base")

    def score(w: float) -> float:
        vals = [rmsse(a, (1 - w) * t + w * b, hst)
                for a, t, b, hst in zip(actual, ts, ib, history, strict=True)]
        x = np.concatenate(vals)
        x = x[np.isfinite(x)]
        return float(x.mean()) if x.size else np.nan

    scores = {float(w): score(float(w)) for w in weights}
    s0 = scores.get(0.0, score(0.0))
    s1 = scores.get(1.0, score(1.0))
    best = min(scores, key=lambda w: (np.inf if not np.isfinite(scores[w]) else scores[w], w))
    sb = scores[best]
    if not np.isfinite(s0) or not np.isfinite(sb):
        return BlendChoice(0.0, scores, s0, s1, s0, len(actual),
                           "no series with a scale to judge the installed base on")
    if best == 0.0 or sb > s0 * (1.0 - min_gain):
        gain = (s0 - sb) / s0 if s0 > 0 else 0.0
        return BlendChoice(0.0, scores, s0, s1, s0, len(actual),
                           f"time series alone: the best blend (weight {best:.1f}) changes the "
                           f"backtest RMSSE by {-100 * gain:+.1f} %, less than the "
                           f"{100 * min_gain:.0f} % needed (installed base alone {s1:.3f})")
    return BlendChoice(best, scores, s0, s1, sb, len(actual),
                       f"weight {best:.1f} on the installed base: backtest RMSSE {s0:.3f} -> "
                       f"{sb:.3f} ({100 * (sb - s0) / s0:+.1f} %) over {len(actual)} origins "
                       f"(installed base alone {s1:.3f})")


@dataclass(frozen=True)
class ClassBlend:
    """Blend weights per SBC class (as the methods are chosen per class): ``weights`` per
    series, ``choices`` per class with at least ``min_series`` series, ``pooled`` for the
    rest; ``ts`` / ``blend``: mean RMSSE over every series and origin without and with the
    chosen weights."""

    weights: FloatArray
    choices: dict[str, BlendChoice]
    pooled: BlendChoice
    ts: float
    blend: float


def choose_blend_by_class(
    actual: Sequence[FloatArray],
    ts: Sequence[FloatArray],
    ib: Sequence[FloatArray],
    history: Sequence[FloatArray],
    labels: ArrayLike,
    *,
    min_series: int = 5,
    min_gain: float = 0.01,
) -> ClassBlend:
    """:func:`choose_blend` per class of ``labels``; classes with fewer than ``min_series``
    series take the pooled weight."""
    lab = np.asarray(labels).astype(str)
    pooled = choose_blend(actual, ts, ib, history, min_gain=min_gain)
    w = np.full(lab.size, pooled.weight)
    choices: dict[str, BlendChoice] = {}
    for c in np.unique(lab):
        rows = lab == c
        if rows.sum() < min_series:
            continue
        ch = choose_blend([a[rows] for a in actual], [t[rows] for t in ts],
                          [b[rows] for b in ib], [h[rows] for h in history], min_gain=min_gain)
        if np.isfinite(ch.ts):
            choices[str(c)] = ch
            w[rows] = ch.weight

    def score(weights: FloatArray) -> float:
        vals = [rmsse(a, (1 - weights[:, None]) * t + weights[:, None] * b, hst)
                for a, t, b, hst in zip(actual, ts, ib, history, strict=True)]
        x = np.concatenate(vals) if vals else np.zeros(0)
        x = x[np.isfinite(x)]
        return float(x.mean()) if x.size else float("nan")

    return ClassBlend(w, choices, pooled, score(np.zeros(lab.size)), score(w))
