"""Replenishment policy arithmetic: safety stock, reorder points, order-up-to levels, EOQ.

This is the ONE implementation used by both the backtest (``inventory.ordering.backtest``) and the
planner: the planner calls :func:`order_up_to_levels` with the forecaster's distribution
of demand per period (``inventory.forecast.distributions.DemandDistribution``) and per-part
fill-rate targets, and gets whole-unit levels per part back.

Formulas (REFERENCE.md section 8; Silver, Pyke and Peterson 1998, ch. 5 and 7); the normal
model and the EOQ are in :mod:`inventory.ordering.policy_normal`, re-exported here:

- Slow movers: Poisson or negative binomial lead-time demand, the smallest whole s with
  P(X <= s) >= P1.
- Fill rate of a periodic-review order-up-to policy with backorders, exact for any
  distribution: the expected units short in one review cycle are
  E[(D_{L+R} - S)^+] - E[(D_L - S)^+], and the fill rate is one minus that over E[D_R]
  (e.g. Axsaeter 2015, ch. 5; Silver, Pyke and Peterson ch. 7). :func:`order_up_to_levels`
  returns the smallest whole S that reaches the target.
Everything is vectorised over parts (numpy arrays); scalars broadcast.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from decimal import Decimal
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast.distributions import DemandDistribution, normal_loss
from inventory.ordering.policy_normal import (
    eoq,
    eoq_annual_cost,
    fill_rate_sq_normal,
    inverse_normal_loss,
    lead_time_demand_normal,
    order_up_to_normal,
    reorder_point_fill_rate_normal,
    reorder_point_normal,
    safety_factor,
    safety_stock,
)

__all__ = [
    "normal_loss",
    "inverse_normal_loss",
    "safety_factor",
    "lead_time_demand_normal",
    "safety_stock",
    "reorder_point_normal",
    "reorder_point_fill_rate_normal",
    "fill_rate_sq_normal",
    "reorder_point_discrete",
    "order_up_to_normal",
    "cycle_fill_rate",
    "order_up_to_levels",
    "smallest_level",
    "expected_fill",
    "pooled_order_up_to_levels",
    "pooled_levels_batch",
    "LevelSearch",
    "PooledSearch",
    "eoq",
    "eoq_annual_cost",
]

FloatArray = NDArray[np.float64]


def _f(x: ArrayLike | Decimal) -> FloatArray:
    if isinstance(x, Decimal):
        x = float(x)
    return np.asarray(x, dtype=float)


# -- discrete lead-time demand -----------------------------------------------------------


def reorder_point_discrete(
    dist_lead_time: DemandDistribution, cycle_service: ArrayLike
) -> FloatArray:
    """Smallest whole s with P(D_L <= s) >= P1, for a Poisson or negative binomial D_L.

    ``dist_lead_time`` is the distribution over the lead time already (use ``dist.over(L)``).
    """
    q = np.broadcast_to(_f(cycle_service), dist_lead_time.mean.shape)
    return dist_lead_time.quantile(q)


# -- periodic review, fill-rate exact -----------------------------------------------------


def cycle_fill_rate(
    dist: DemandDistribution,
    order_up_to: ArrayLike,
    *,
    lead_time: ArrayLike = 1.0,
    review_period: ArrayLike = 1.0,
) -> FloatArray:
    """Expected fill rate of a periodic-review order-up-to-S policy with backorders.

    ``dist`` is demand per period. Expected units short per review cycle =
    E[(D_{L+R} - S)^+] - E[(D_L - S)^+]; fill = 1 - short / E[D_R]. Parts with no expected
    demand get fill 1.
    """
    s = _f(order_up_to)
    lt = _f(lead_time)
    rp = _f(review_period)
    short = dist.over(lt + rp).expected_shortage(s) - dist.over(lt).expected_shortage(s)
    demand_r = dist.mean * rp
    safe = np.where(demand_r > 0, demand_r, 1.0)
    return np.where(demand_r > 0, 1.0 - np.maximum(short, 0.0) / safe, 1.0)


def order_up_to_levels(
    dist: DemandDistribution,
    fill_targets: ArrayLike,
    *,
    lead_time: ArrayLike = 1.0,
    review_period: ArrayLike = 1.0,
    max_doublings: int = 40,
) -> NDArray[np.int64]:
    """Smallest whole order-up-to level S per part whose expected cycle fill rate meets its target.

    ``dist``: per-period demand distribution of the parts (from the forecaster);
    ``fill_targets``: a fill rate (0..1) per part or one for all; ``lead_time`` and
    ``review_period`` in periods, per part or scalar. The fill rate is the exact one of
    :func:`cycle_fill_rate`, which is non-decreasing in S, so an integer bisection finds the
    smallest S. Parts with zero expected demand get S = 0.
    """
    n = len(dist)
    target = np.broadcast_to(_f(fill_targets), (n,)).astype(float)
    if np.any((target < 0) | (target >= 1)):
        raise ValueError("fill targets must be in [0, 1)")
    lt = np.broadcast_to(_f(lead_time), (n,))
    rp = np.broadcast_to(_f(review_period), (n,))

    def meets(s: FloatArray, idx: NDArray[np.int64]) -> NDArray[np.bool_]:
        fr = cycle_fill_rate(dist.take(idx), s, lead_time=lt[idx], review_period=rp[idx])
        return fr >= target[idx] - 1e-12

    cover = dist.over(lt + rp)
    hi = np.ceil(cover.mean + 4.0 * np.sqrt(cover.variance()) + 1.0)
    active = np.flatnonzero(dist.mean > 0)
    hi[dist.mean <= 0] = 0.0
    out = smallest_level(meets, np.full(n, -1.0), hi, active,
                         LevelSearch(max_doublings=max_doublings, what="order_up_to_levels"))
    return out.astype(np.int64)


@dataclass(frozen=True)
class LevelSearch:
    """How :func:`smallest_level` searches: whole units (``whole``) or to ``tol``; at most
    ``max_doublings`` doublings of the upper bracket; ``what`` names the search in its
    error."""

    whole: bool = True
    tol: float = 1e-7
    max_doublings: int = 40
    what: str = "level search"


def smallest_level(
    meets: Callable[[FloatArray, NDArray[np.int64]], NDArray[np.bool_]],
    lo: FloatArray,
    hi: FloatArray,
    active: NDArray[np.int64],
    search: LevelSearch = LevelSearch(),
) -> FloatArray:
    """THE level search of the planner and the backtest: per part in ``active``, the
    smallest level in (lo, hi] for which ``meets(levels, rows)`` holds, ``meets`` being
    monotone (false below, true from some level on).

    ``lo`` must fail (or be a floor no answer lies below); ``hi`` is a first guess of an
    upper bracket and grows (2 hi + 1) until it meets, at most ``max_doublings`` times:
    a part that still fails raises ``RuntimeError`` naming ``what``, never a silent miss.
    Then a vectorised bisection: whole units (``whole``) or to ``tol``. Rows outside
    ``active`` keep ``hi``. Returns a new array. (``search``: :class:`LevelSearch`.)
    """
    whole, tol, max_doublings, what = (search.whole, search.tol, search.max_doublings,
                                       search.what)
    lo = np.array(lo, dtype=float)
    hi = np.array(hi, dtype=float)
    todo = np.asarray(active, dtype=np.int64)
    for _ in range(max_doublings):
        if todo.size == 0:
            break
        ok = meets(hi[todo], todo)
        todo = todo[~ok]
        hi[todo] = 2.0 * hi[todo] + 1.0
    if todo.size and not np.all(meets(hi[todo], todo)):
        raise RuntimeError(f"{what}: no level reaches the target for {todo.size} part(s) "
                           f"within {max_doublings} doublings")
    gap = 1.0 if whole else tol
    todo = active[hi[active] - lo[active] > gap]
    while todo.size:
        mid = 0.5 * (lo[todo] + hi[todo])
        if whole:
            mid = np.floor(mid)
        ok = meets(mid, todo)
        hi[todo] = np.where(ok, mid, hi[todo])
        lo[todo] = np.where(ok, lo[todo], mid)
        todo = todo[hi[todo] - lo[todo] > gap]
    return hi


def expected_fill(
    dist: DemandDistribution,
    order_up_to: ArrayLike,
    *,
    lead_time: ArrayLike = 1.0,
    review_period: ArrayLike = 1.0,
) -> float:
    """Expected POOLED fill rate of many parts: expected units filled over expected units
    demanded per review cycle, each part at its own order-up-to level."""
    demand_r = dist.mean * _f(review_period)
    total = float(demand_r.sum())
    if total <= 0:
        return 1.0
    fr = cycle_fill_rate(dist, order_up_to, lead_time=lead_time, review_period=review_period)
    return float((fr * demand_r).sum() / total)


def _fill_segments(
    dist: DemandDistribution, lo: NDArray[np.int64], hi: NDArray[np.int64], lt: FloatArray,
    rp: FloatArray,
) -> tuple[NDArray[np.int64], FloatArray, NDArray[np.int64]]:
    """Expected units filled per cycle for every whole S in lo_i..hi_i, as one flat array.

    Returns (segment start of each part, filled units, S values); part i owns entries
    ``starts[i] : starts[i] + hi[i] - lo[i] + 1``.
    """
    counts = (hi - lo + 1).astype(np.int64)
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64)
    part = np.repeat(np.arange(len(dist)), counts)
    levels = (lo[part] + (np.arange(counts.sum()) - starts[part])).astype(np.int64)
    d = dist.take(part)
    s = levels.astype(float)
    short = d.over(lt[part] + rp[part]).expected_shortage(s) - d.over(lt[part]).expected_shortage(s)
    filled = dist.mean[part] * rp[part] - np.maximum(short, 0.0)
    return starts, filled, levels


@dataclass(frozen=True)
class PooledSearch:
    """How :func:`pooled_order_up_to_levels` meets a pooled target: ``method`` "uniform" or
    "marginal", levels searched up to the one reaching ``top_fill`` on its own, the common
    target (or the price of stock) bisected to ``tol``."""

    method: Literal["uniform", "marginal"] = "uniform"
    top_fill: float = 0.9999
    tol: float = 1e-6


def pooled_order_up_to_levels(
    dist: DemandDistribution,
    fill_target: ArrayLike,
    *,
    groups: ArrayLike | None = None,
    unit_cost: ArrayLike = 1.0,
    lead_time: ArrayLike = 1.0,
    review_period: ArrayLike = 1.0,
    search: PooledSearch = PooledSearch(),
) -> NDArray[np.int64]:
    """Whole order-up-to levels whose expected POOLED fill rate per group meets a target.

    A fill-rate target for a class of parts (e.g. ABC class C at 90 %) is a target on
    units filled over units demanded across the class, which per-part levels overshoot
    (each part rounds its level up). Two ways to meet it exactly in expectation:

    - ``"uniform"``: every part of the group gets the same per-part target t (the rule of
      :func:`order_up_to_levels`: its smallest S with cycle fill >= t), and t is the
      smallest value for which the group's expected pooled fill reaches the target. Every
      part keeps about the same service.
    - ``"marginal"``: greedy marginal analysis (the system approach, e.g. Sherbrooke's
      METRIC; Silver, Pyke and Peterson ch. 7): every extra unit goes where it fills the
      most expected units per unit of ``unit_cost`` (1 = count units; prices minimise
      value). Done as its Lagrangian: for a price lambda of stock each part takes the S
      maximising expected units filled - lambda * cost * S, and lambda is bisected. Least
      stock, but slow movers may get little or none.

    ``fill_target``: one value, or one per group (``groups`` labels per part, targets in the
    order of ``np.unique(groups)``). Levels are searched between 0 and the level reaching
    ``top_fill`` on its own; expected fills use the exact periodic-review formula
    (:func:`cycle_fill_rate`). ``search`` (:class:`PooledSearch`) holds ``method``,
    ``top_fill`` and ``tol``.
    """
    n = len(dist)
    lt = np.broadcast_to(_f(lead_time), (n,)).astype(float)
    rp = np.broadcast_to(_f(review_period), (n,)).astype(float)
    cost = np.broadcast_to(_f(unit_cost), (n,)).astype(float)
    if np.any(cost <= 0):
        raise ValueError("unit costs must be positive")
    labels, gi = np.unique(np.zeros(n, dtype=np.int64) if groups is None else np.asarray(groups),
                           return_inverse=True)
    targets = np.broadcast_to(_f(fill_target), (labels.size,)).astype(float)
    if np.any((targets < 0) | (targets >= 1)):
        raise ValueError("fill targets must be in [0, 1)")
    return _pooled_many(dist, [targets], gi, cost, (lt, rp), search)[0]


def pooled_levels_batch(
    dist: DemandDistribution,
    fill_rates: Sequence[float],
    *,
    lead_time: ArrayLike = 1.0,
    review_period: ArrayLike = 1.0,
    search: PooledSearch = PooledSearch(),
) -> list[NDArray[np.int64]]:
    """:func:`pooled_order_up_to_levels` for several pooled targets over the same parts
    (one group, unit costs 1), the expected fills per level computed once: the levels
    for each rate in ``fill_rates``, in order (the fill calibration's grid)."""
    n = len(dist)
    lt = np.broadcast_to(_f(lead_time), (n,)).astype(float)
    rp = np.broadcast_to(_f(review_period), (n,)).astype(float)
    sets = [np.array([float(f)]) for f in fill_rates]
    if any(np.any((t < 0) | (t >= 1)) for t in sets):
        raise ValueError("fill targets must be in [0, 1)")
    return _pooled_many(dist, sets, np.zeros(n, dtype=np.int64), np.ones(n), (lt, rp), search)


def _pooled_many(dist: DemandDistribution, target_sets: Sequence[FloatArray],
                 gi: NDArray[np.intp], cost: FloatArray, cover: tuple[FloatArray, FloatArray],
                 search: PooledSearch) -> list[NDArray[np.int64]]:
    """The levels for each set of group targets (one per group label ``gi``), sharing the
    table of expected fills of every whole level up to the ``top_fill`` one."""
    lt, rp = cover
    method, top_fill, tol = search.method, search.top_fill, search.tol
    n = len(dist)
    n_groups = int(gi.max()) + 1 if n else 0
    top = order_up_to_levels(dist, top_fill, lead_time=lt, review_period=rp)
    lo = np.zeros(n, dtype=np.int64)
    starts, filled, levels = _fill_segments(dist, lo, top, lt, rp)
    demand_r = dist.mean * rp
    part = np.repeat(np.arange(n), top - lo + 1)
    safe = np.where(demand_r > 0, demand_r, 1.0)
    fill = np.where(demand_r[part] > 0, filled / safe[part], 1.0)
    results: list[NDArray[np.int64]] = []
    for targets in target_sets:
        out = top.copy()
        for g in range(n_groups):
            rows = gi == g
            total = demand_r[rows].sum()
            if total <= 0:
                out[rows] = 0
                continue

            def uniform_at(t: float) -> NDArray[np.int64]:
                # fill is non-decreasing in S: the level is lo + the number of entries below t
                below = np.add.reduceat((fill < t - 1e-12).astype(np.int64), starts)
                return np.minimum(lo + below, top)

            def marginal_at(lam: float) -> NDArray[np.int64]:
                value = filled - lam * cost[part] * levels
                best = np.maximum.reduceat(value, starts)
                hit = np.flatnonzero(value >= best[part] - 1e-12)
                first = np.full(n, -1, dtype=np.int64)
                first[part[hit][::-1]] = hit[::-1]  # first entry reaching the segment maximum
                return levels[first]

            def pooled(s_levels: NDArray[np.int64], rows: NDArray[np.bool_] = rows,
                       total: float = total) -> float:
                idx = starts[rows] + (s_levels[rows] - lo[rows])
                return float(filled[idx].sum() / total)

            if method == "uniform":
                lo_t, hi_t = 0.0, top_fill  # invariant: hi_t meets the target
                if pooled(uniform_at(0.0)) >= targets[g]:
                    hi_t = 0.0
                while hi_t - lo_t > tol:
                    mid = 0.5 * (lo_t + hi_t)
                    if pooled(uniform_at(mid)) >= targets[g]:
                        hi_t = mid
                    else:
                        lo_t = mid
                out[rows] = uniform_at(hi_t)[rows]
            elif method == "marginal":
                lo_l, hi_l = 0.0, 1.0  # invariant: lo_l meets the target, hi_l does not
                if pooled(marginal_at(0.0)) < targets[g]:
                    continue  # even the top levels fall short: keep them
                while pooled(marginal_at(hi_l)) >= targets[g] and hi_l < 1e12:
                    hi_l *= 4.0
                for _ in range(200):
                    if hi_l - lo_l <= tol * max(lo_l, 1e-12):
                        break
                    mid = 0.5 * (lo_l + hi_l)
                    if pooled(marginal_at(mid)) >= targets[g]:
                        lo_l = mid
                    else:
                        hi_l = mid
                out[rows] = marginal_at(lo_l)[rows]
            else:
                raise ValueError("method must be 'uniform' or 'marginal'")
        results.append(out.astype(np.int64))
    return results
