"""Simulation of a periodic-review order-up-to policy on demand that happened, and the
levels the backtest sets for an asked fill rate.

Pure numpy (no database). Used by the backtest (:mod:`inventory.ordering.backtest`) and by
the fill calibration (:mod:`inventory.ordering.calibration`), so both measure the same
thing the same way.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.core.choices import DEFAULT_ALLOCATION
from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy

if TYPE_CHECKING:
    from inventory.forecast.methods import FitOptions

FloatArray = NDArray[np.float64]
Allocation = Literal["part", "uniform", "marginal"]


@dataclass(frozen=True)
class BacktestSetup:
    """How a backtest (and its fill calibration) runs: ``horizon`` scored periods,
    ``lead_time`` and ``review_period`` in periods, the ``allocation`` of levels
    (:func:`policy_levels`), the forecast ``options`` (None: the defaults for the
    horizon), and whether to ``calibrate`` the fill on ``calibration_origins`` inner
    origins inside the training months, its correction shrunk toward none by
    ``calibration_weight`` (:mod:`inventory.ordering.calibration`)."""

    horizon: int = 6
    lead_time: int = 1
    review_period: int = 1
    allocation: Allocation = cast(Allocation, DEFAULT_ALLOCATION.value)
    options: FitOptions | None = None
    calibrate: bool = True
    calibration_origins: int = 3  # chosen by cross-validation: calibration.py
    calibration_weight: float = 0.5  # chosen by cross-validation: calibration.py

    @property
    def cover(self) -> int:
        """Lead time plus review period: the periods one order-up-to level covers."""
        return self.lead_time + self.review_period


@dataclass(frozen=True)
class Simulation:
    """Per-series outcome of simulating an order-up-to policy over the test periods."""

    demand: FloatArray  # (n,) units demanded
    served: FloatArray  # (n,) units served from the shelf
    on_hand: FloatArray  # (n, h) on hand at the end of each period
    stockout: NDArray[np.bool_]  # (n,) any period with demand not served from the shelf


def simulate_order_up_to(
    levels: ArrayLike,
    demand: ArrayLike,
    *,
    lead_time: int = 1,
    review_period: int = 1,
) -> Simulation:
    """Periodic review, order-up-to ``levels`` (per series, or per series and period),
    backorders, whole units, on hand starting at the first level with nothing on order.

    Each period: receive what was ordered ``lead_time`` periods ago; on a review period
    (every ``review_period``, starting with the first) order up to the level; serve demand
    from the shelf; the rest is backordered.
    """
    d = np.asarray(demand, dtype=float)
    n, h = d.shape
    s = np.asarray(levels, dtype=float)
    s = np.broadcast_to(s[:, None] if s.ndim == 1 else s, (n, h))
    if lead_time < 0 or review_period < 1:
        raise ValueError("lead_time must be >= 0 and review_period >= 1")
    net = s[:, 0].copy()
    pipeline = np.zeros((n, max(lead_time, 1)))
    served = np.zeros(n)
    on_hand = np.zeros((n, h))
    stockout = np.zeros(n, dtype=bool)
    for t in range(h):
        if lead_time > 0:
            net += pipeline[:, 0]
            pipeline[:, :-1] = pipeline[:, 1:]
            pipeline[:, -1] = 0.0
        if t % review_period == 0:
            position = net + pipeline.sum(axis=1) if lead_time > 0 else net
            order = np.maximum(np.ceil(s[:, t] - position), 0.0)
            if lead_time > 0:
                pipeline[:, lead_time - 1] += order
            else:
                net += order
        dt = d[:, t]
        from_shelf = np.minimum(dt, np.maximum(net, 0.0))
        served += from_shelf
        stockout |= from_shelf < dt
        net -= dt
        on_hand[:, t] = np.maximum(net, 0.0)
    return Simulation(d.sum(axis=1), served, on_hand, stockout)


def policy_levels(dist: DemandDistribution, fill_rate: float, *, allocation: Allocation,
                  lead_time: int, review_period: int) -> NDArray[np.int64]:
    """Order-up-to levels for one asked fill rate: "part" (each part's smallest level
    reaching it, :func:`policy.order_up_to_levels`), "uniform" or "marginal" (the POOLED
    expected fill meets it, :func:`policy.pooled_order_up_to_levels`)."""
    if allocation == "part":
        return policy.order_up_to_levels(dist, fill_rate, lead_time=lead_time,
                                         review_period=review_period)
    if allocation == "uniform" or allocation == "marginal":
        return policy.pooled_order_up_to_levels(dist, fill_rate, lead_time=lead_time,
                                                review_period=review_period,
                                                search=policy.PooledSearch(method=allocation))
    raise ValueError("allocation must be 'part', 'uniform' or 'marginal'")


def policy_levels_batch(dist: DemandDistribution, fill_rates: Sequence[float], *,
                        allocation: Allocation, lead_time: int, review_period: int
                        ) -> list[NDArray[np.int64]]:
    """:func:`policy_levels` for several asked rates over the same parts, in order; the
    pooled allocations share one table of expected fills
    (:func:`policy.pooled_levels_batch`)."""
    if allocation == "uniform" or allocation == "marginal":
        return policy.pooled_levels_batch(dist, fill_rates, lead_time=lead_time,
                                          review_period=review_period,
                                          search=policy.PooledSearch(method=allocation))
    return [policy_levels(dist, f, allocation=allocation, lead_time=lead_time,
                          review_period=review_period) for f in fill_rates]
